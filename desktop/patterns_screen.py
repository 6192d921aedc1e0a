"""The Patterns screen: how one meter uses energy through the day, the year and the weather.

It shows the engine's profiles of the meter's cleaned readings, labelled with the project's
campus calendar, so a fix logged on the Cleaning screen shows here too.
"""

from __future__ import annotations

from functools import partial

import numpy as np
import pandas as pd
from PySide6.QtCore import Qt
from PySide6.QtGui import QFont
from PySide6.QtWidgets import (
    QAbstractItemView,
    QGridLayout,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QStackedWidget,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.choices import ChoiceBox
from desktop.meter_screen import MeterScreen
from desktop.pattern_jobs import DAY_GROUPINGS, MeterPatterns, PatternRequest, compute_patterns
from desktop.pattern_plots import (
    DurationPanel,
    HeatMapPanel,
    MonthlyPanel,
    TemperaturePanel,
    TypicalDayPanel,
)
from desktop.project_changes import CALENDAR, TEMPERATURE
from desktop.session import Session
from desktop.task_runner import Job
from desktop.understood_view import NUMBER_ROLE
from engine.profiles import TemperatureResponse

GROUPING_WORDS = {"day_type": "day type", "season": "season"}
FIGURE_HEADERS = ("Figure", "Value", "Unit", "How it is worked out")


def _figure_words(value: float, unit: str) -> str:
    if not np.isfinite(value):
        return "–"
    if unit == "ratio":
        return f"{value:.3f}"
    if unit == "days":
        return f"{value:,.0f}"
    return f"{value:,.1f}"


class FiguresPanel(QWidget):
    """The key figures and, below them, the degree-day weather response, as one table.

    Each value cell holds the number behind the rounded words. The weather response sits under
    a heading row; without one, that row says why.
    """

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.table = QTableWidget(0, len(FIGURE_HEADERS))
        self.table.setHorizontalHeaderLabels(FIGURE_HEADERS)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.verticalHeader().hide()
        self.table.setWordWrap(False)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(len(FIGURE_HEADERS) - 1, QHeaderView.ResizeMode.Stretch)
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.stack = QStackedWidget()
        self.stack.addWidget(self.table)
        self.stack.addWidget(self.note)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addWidget(QLabel("<b>Key figures and weather response</b>"))
        layout.addWidget(self.stack, 1)

    def show_note(self, words: str) -> None:
        self.table.setRowCount(0)
        self.note.setText(words)
        self.stack.setCurrentWidget(self.note)

    def show_figures(self, figures: pd.DataFrame, weather: pd.DataFrame, weather_note: str) -> None:
        """Key figures, a heading row, then the weather response (or ``weather_note``)."""
        self.table.clearSpans()
        self.table.setRowCount(len(figures) + 1 + max(len(weather), 1))
        self._fill_rows(0, figures)
        heading = len(figures)
        self.table.setSpan(heading, 0, 1, len(FIGURE_HEADERS))
        words = " (degree-days)" if len(weather) else f": {weather_note}"
        title = QTableWidgetItem(f"Weather response{words}")
        bold = QFont(title.font())
        bold.setBold(True)
        title.setFont(bold)
        title.setToolTip(weather_note)
        self.table.setItem(heading, 0, title)
        self._fill_rows(heading + 1, weather)
        self.table.setRowCount(heading + 1 + len(weather))
        self.table.resizeRowsToContents()
        self.stack.setCurrentWidget(self.table)

    def _fill_rows(self, first: int, figures: pd.DataFrame) -> None:
        for r, row in enumerate(figures.itertuples(), start=first):
            value = QTableWidgetItem(_figure_words(row.value, row.unit))
            value.setData(NUMBER_ROLE, float(row.value))
            value.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            cells = (QTableWidgetItem(str(row.Index)), value, QTableWidgetItem(row.unit))
            for c, cell in enumerate((*cells, QTableWidgetItem(row.how))):
                cell.setToolTip(row.how)
                self.table.setItem(r, c, cell)

    def values(self) -> dict[str, float]:
        """Figure name → the number shown, for every row with a value."""
        return {
            self.table.item(r, 0).text(): self.table.item(r, 1).data(NUMBER_ROLE)
            for r in range(self.table.rowCount())
            if self.table.item(r, 1) is not None
        }


class PatternsScreen(MeterScreen):
    """Pick a meter; the profiles of its cleaned readings are computed on a worker and drawn."""

    NO_PROJECT = "Open a project to see its meters' patterns."
    FOLLOWS = (CALENDAR, TEMPERATURE)

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(session, parent)
        self.patterns: MeterPatterns | None = None
        self.grouping = ChoiceBox(tuple((GROUPING_WORDS[g], g) for g in DAY_GROUPINGS))
        self.basis = QLabel()
        self.basis.setWordWrap(True)
        self.basis.setStyleSheet("color: #5a5f66;")
        self.grouping.activated.connect(self._draw_typical_days)
        self.typical = TypicalDayPanel()
        self.heat = HeatMapPanel()
        self.monthly = MonthlyPanel()
        self.duration = DurationPanel()
        self.temperature = TemperaturePanel()
        self.figures = FiguresPanel()
        self.panels = (
            self.typical,
            self.heat,
            self.monthly,
            self.duration,
            self.temperature,
            self.figures,
        )
        self._lay_out()
        self.follow_session()

    def _lay_out(self) -> None:
        controls = QHBoxLayout()
        for words, box in (("Meter", self.meter), ("Typical days by", self.grouping)):
            controls.addWidget(QLabel(words))
            controls.addWidget(box)
            controls.addSpacing(12)
        controls.addStretch(1)
        grid = QGridLayout()
        grid.addWidget(self.typical, 0, 0)
        grid.addWidget(self.heat, 0, 1)
        grid.addWidget(self.figures, 0, 2)
        grid.addWidget(self.monthly, 1, 0)
        grid.addWidget(self.duration, 1, 1)
        grid.addWidget(self.temperature, 1, 2)
        for column in range(3):
            grid.setColumnStretch(column, 1)
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(self.basis)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addLayout(grid, 1)

    # -- choices ----------------------------------------------------------------------------

    def meter_cleaned(self, name: str) -> None:
        """Meter ``name``'s cleaning log changed: profile it again if it is the one shown."""
        if name == self.meter.currentText():
            self.refresh()

    def request(self) -> PatternRequest | None:
        """What the controls ask for; None without a meter."""
        name = self.meter.currentText()
        if self.session.project is None or not name:
            return None
        return PatternRequest(name)

    def refresh(self) -> None:
        """Compute the profiles the controls ask for, once any running computation stops."""
        wanted = self.request()
        if wanted is None:
            self._show_empty("This project has no meters yet: add files on the Files step.")
            return
        work = partial(compute_patterns, self.session.project, wanted)
        doing = f"profiling '{self.meter.shown_as(wanted.meter)}'"
        self.runner.request(Job(work, doing, self._show))

    # -- drawing ----------------------------------------------------------------------------

    def _show_empty(self, words: str) -> None:
        self.patterns = None
        self.basis.clear()
        for panel in self.panels:
            panel.show_note(words)

    def _show(self, patterns: MeterPatterns) -> None:
        if self.session.project is None:
            return  # the project closed while this was computed
        self.patterns = patterns
        notes = patterns.notes
        self.basis.setText(patterns.basis)
        self._draw_typical_days()
        drawn = (
            (self.heat, patterns.heat_map, "heat_map", self.heat.show_matrix),
            (self.monthly, patterns.monthly, "monthly", self.monthly.show_table),
            (self.duration, patterns.duration, "duration", self.duration.show_table),
            (self.temperature, patterns.temperature, "temperature", self._draw_temperature),
        )
        for panel, found, name, draw in drawn:
            if found is None:
                panel.show_note(notes[name])
            else:
                draw(found)
        self.figures.show_figures(patterns.figures, patterns.weather, notes.get("weather", ""))

    def _draw_temperature(self, response: TemperatureResponse) -> None:
        self.temperature.show_response(response, self.patterns.temperature_unit)

    def _draw_typical_days(self) -> None:
        patterns = self.patterns
        if patterns is None:
            return
        if patterns.typical_days is None:
            self.typical.show_note(patterns.notes["typical_days"])
            return
        self.typical.show_table(patterns.typical_days[self.grouping.value()])
