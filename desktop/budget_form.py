"""The Budget screen's controls: period, as-of date, weather, tariff and simulated paths.

The form only gathers choices (:class:`desktop.budget_jobs.BudgetChoices`); the engine checks
them when the budget runs.
"""

from __future__ import annotations

import calendar
from datetime import date

from PySide6.QtCore import QDate, Qt
from PySide6.QtWidgets import (
    QDateEdit,
    QFileDialog,
    QGridLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QSpinBox,
    QWidget,
)

from desktop.budget_jobs import (
    DEFAULT_FISCAL_START,
    PERIODS,
    WEATHER_FILE,
    BudgetChoices,
)
from desktop.choices import ChoiceBox
from engine.budget.periods import MAX_MONTHS, first_open_month, fiscal_quarter_of, fiscal_year_of
from engine.defaults import DEFAULT_PATHS, DEFAULT_WEATHER, DEFAULT_WEATHER_REASON
from engine.tariffs import RATECARD_SUFFIX

WEATHER_WORDS = (
    ("the spread of past years", "past-years"),
    ("a typical year", "typical"),
    ("a temperature file", WEATHER_FILE),
)
WEATHER_FILTER = "Temperature files (*.csv *.xlsx *.xls);;All files (*)"
TARIFF_FILTER = f"Rate cards (*{RATECARD_SUFFIX});;All files (*)"
MAX_PATHS = 20_000


def _month_box() -> QDateEdit:
    box = QDateEdit()
    box.setDisplayFormat("yyyy-MM")
    box.setCalendarPopup(False)
    return box


class FileField(QWidget):
    """A path typed or chosen with a dialog; empty means "none"."""

    def __init__(self, placeholder: str, title: str, pattern: str) -> None:
        super().__init__()
        self.path = QLineEdit()
        self.path.setPlaceholderText(placeholder)
        self.choose = QPushButton("Choose…")
        self.choose.clicked.connect(lambda: self._choose(title, pattern))
        layout = QHBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.path, 1)
        layout.addWidget(self.choose)

    def text(self) -> str:
        return self.path.text().strip()

    def _choose(self, title: str, pattern: str) -> None:
        chosen, _ = QFileDialog.getOpenFileName(self, title, "", pattern)
        if chosen:
            self.path.setText(chosen)


class BudgetForm(QWidget):
    """The choices of one budget run; periods default to those after the as-of date."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.period = ChoiceBox(tuple((words, key) for key, words in PERIODS.items()))
        self.period.currentIndexChanged.connect(self._show_period_fields)
        self.start = _month_box()
        self.months = QSpinBox()
        self.months.setRange(1, MAX_MONTHS)
        self.months.setValue(3)
        self.months.setSuffix(" months")
        self.fiscal_year = QSpinBox()
        self.fiscal_year.setRange(1990, 2200)
        self.quarter = QSpinBox()
        self.quarter.setRange(1, 4)
        self.quarter.setPrefix("Q")
        self.fiscal_start = ChoiceBox(
            tuple((calendar.month_name[month], month) for month in range(1, 13))
        )
        self.fiscal_start.set_value(DEFAULT_FISCAL_START)
        self.fiscal_start.currentIndexChanged.connect(self._fiscal_defaults)
        self.as_of = QDateEdit()
        self.as_of.setDisplayFormat("yyyy-MM-dd")
        self.as_of.setCalendarPopup(True)
        self.as_of.setToolTip(
            "The as-of date: readings after this day are left out and the budget forecasts from "
            "it (by default the last day with a reading)."
        )
        self.as_of.dateChanged.connect(self._period_defaults)
        self.weather = ChoiceBox(WEATHER_WORDS)
        self.weather.set_value(DEFAULT_WEATHER)
        self.weather_note = QLabel(DEFAULT_WEATHER_REASON)
        self.weather_note.setWordWrap(True)
        self.weather.currentIndexChanged.connect(self._show_weather_file)
        self.weather_file = FileField(
            "temperature file", "Choose a temperature file", WEATHER_FILTER
        )
        self.tariff = FileField(
            "none: energy only, no cost", "Choose a tariff rate card", TARIFF_FILTER
        )
        self.paths = QSpinBox()
        self.paths.setRange(100, MAX_PATHS)
        self.paths.setSingleStep(100)
        self.paths.setValue(DEFAULT_PATHS)
        self.paths.setToolTip("Simulated futures behind the P-levels: more is steadier, slower.")
        self.scheduler = QLineEdit()
        self.scheduler.setPlaceholderText("this computer")
        self.scheduler.setToolTip(
            "For sites with hundreds of meters: the address of a Dask scheduler "
            "(e.g. tcp://10.0.0.5:8786) whose workers model the meters."
        )
        #: The period's own fields: the periods that show each, its label and its box.
        self.period_fields: list[tuple[tuple[str, ...], QLabel, QWidget]] = []
        self._lay_out()
        self._show_period_fields()
        self._show_weather_file()

    def _lay_out(self) -> None:
        grid = QGridLayout(self)
        grid.setContentsMargins(0, 0, 0, 0)
        period = QHBoxLayout()
        period.addWidget(self.period)
        for words, box, periods in (
            ("starting", self.start, ("next", "months")),
            ("for", self.months, ("months",)),
            ("fiscal year", self.fiscal_year, ("quarter", "fiscal")),
            ("quarter", self.quarter, ("quarter",)),
            ("fiscal years start in", self.fiscal_start, ("quarter", "fiscal")),
        ):
            label = QLabel(words)
            self.period_fields.append((periods, label, box))
            period.addWidget(label)
            period.addWidget(box)
        period.addStretch(1)
        grid.addWidget(QLabel("Budget"), 0, 0)
        grid.addLayout(period, 0, 1, 1, 3)
        grid.addWidget(QLabel("Readings up to"), 0, 4, Qt.AlignmentFlag.AlignRight)
        grid.addWidget(self.as_of, 0, 5)
        grid.addWidget(QLabel("Weather"), 1, 0)
        grid.addWidget(self.weather, 1, 1)
        grid.addWidget(self.weather_file, 1, 2)
        grid.addWidget(QLabel("Tariff"), 1, 3, Qt.AlignmentFlag.AlignRight)
        grid.addWidget(self.tariff, 1, 4, 1, 1)
        grid.addWidget(self.weather_note, 2, 1, 1, 5)
        grid.addWidget(QLabel("Paths"), 3, 0)
        grid.addWidget(self.paths, 3, 1, Qt.AlignmentFlag.AlignLeft)
        grid.addWidget(QLabel("Model meters on"), 3, 3, Qt.AlignmentFlag.AlignRight)
        grid.addWidget(self.scheduler, 3, 4)
        grid.setColumnStretch(2, 1)
        grid.setColumnStretch(4, 1)

    # -- defaults ---------------------------------------------------------------------------

    def set_as_of(self, day: date) -> None:
        """Show ``day`` as the as-of date and the periods that follow it."""
        self.as_of.setDate(QDate(day.year, day.month, day.day))
        self._period_defaults()

    def _period_defaults(self) -> None:
        month = first_open_month(self.as_of.date().toPython())
        self.start.setDate(QDate(int(month[:4]), int(month[5:]), 1))
        self._fiscal_defaults()

    def _fiscal_defaults(self) -> None:
        month = first_open_month(self.as_of.date().toPython())
        fiscal_year = fiscal_year_of(month, self.fiscal_start.value())
        self.fiscal_year.setValue(fiscal_year)
        self.quarter.setValue(fiscal_quarter_of(month, fiscal_year, self.fiscal_start.value()))

    # -- showing ----------------------------------------------------------------------------

    def _show_period_fields(self) -> None:
        period = self.period.value()
        for periods, label, box in self.period_fields:
            label.setVisible(period in periods)
            box.setVisible(period in periods)
        self.start.setEnabled(period == "months")

    def _show_weather_file(self) -> None:
        self.weather_file.setEnabled(self.weather.value() == WEATHER_FILE)

    def show_choices(self, choices: BudgetChoices) -> None:
        """Fill the controls with ``choices`` (as-of date and fiscal start first: changing
        them resets the period fields to their defaults)."""
        day = choices.as_of
        self.as_of.setDate(QDate(day.year, day.month, day.day))
        self.fiscal_start.set_value(choices.fiscal_start_month)
        self.period.set_value(choices.period)
        year, month = (int(part) for part in choices.start.split("-"))
        self.start.setDate(QDate(year, month, 1))
        self.months.setValue(choices.months)
        self.fiscal_year.setValue(choices.fiscal_year)
        self.quarter.setValue(choices.quarter)
        self.weather.set_value(choices.weather)
        self.weather_file.path.setText(choices.weather_file)
        self.tariff.path.setText(choices.tariff_file)
        self.paths.setValue(choices.paths)
        self.scheduler.setText(choices.scheduler)

    # -- reading ----------------------------------------------------------------------------

    def choices(self) -> BudgetChoices:
        """What the controls ask for."""
        return BudgetChoices(
            period=self.period.value(),
            as_of=self.as_of.date().toPython(),
            start=self.start.date().toString("yyyy-MM"),
            months=self.months.value(),
            fiscal_year=self.fiscal_year.value(),
            quarter=self.quarter.value(),
            fiscal_start_month=self.fiscal_start.value(),
            weather=self.weather.value(),
            weather_file=self.weather_file.text(),
            tariff_file=self.tariff.text(),
            paths=self.paths.value(),
            scheduler=self.scheduler.text().strip(),
        )
