"""The five pages of the Models step's walk-through: the readings, the families, the backtest
as it runs, the ranking in words, and the choice with what the chosen model says.

Each page lays out and fills its widgets from the engine's facts (:mod:`engine.fit_brief`
through :class:`desktop.model_jobs.ModelReport`); the screen (:mod:`desktop.models_screen`)
moves between them and runs the work.
"""

from __future__ import annotations

from collections.abc import Sequence
from html import escape

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QHBoxLayout,
    QLabel,
    QListWidget,
    QPushButton,
    QSpinBox,
    QSplitter,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from desktop.flow_layout import FlowLayout
from desktop.model_jobs import DEFAULT_ORIGINS, ModelReport, family_choices
from desktop.model_plots import BacktestPanel, ResidualPanel
from desktop.model_tables import CoefficientsTable, RankingTable
from desktop.palette import TONES
from engine.fit_brief import ReadingsBrief, family_notes
from engine.words import counted

#: (short name, title) of each page, in order.
PAGES = (
    ("Readings", "The readings it will learn from"),
    ("Families", "The models it will compare, and why"),
    ("Backtest", "The backtest"),
    ("Ranking", "The ranking"),
    ("Choice", "Your choice, and what the model says"),
)
_QUIET = "color: #5a5f66;"
#: What the walk-through does next, said once on its first page.
AHEAD = (
    "<p><b>What happens next.</b> On page 2 you choose the kinds of model to compare. Page 3 "
    "tests each one on past months it did not see, as if you had budgeted then. Page 4 ranks "
    "them in plain words and names the one recommended; page 5 keeps it (or the one you "
    "prefer) for the Budget step and says what it learned, in physical units.</p>"
)


def _browser() -> QTextBrowser:
    browser = QTextBrowser()
    browser.setOpenLinks(False)
    return browser


def _quiet_label(words: str = "") -> QLabel:
    label = QLabel(words)
    label.setWordWrap(True)
    label.setStyleSheet(_QUIET)
    return label


def _stacked(owner: QWidget | None, grow: int, *parts: QWidget | QHBoxLayout) -> QWidget:
    """``parts`` one above the other in ``owner`` (a new widget when None), edge to edge;
    part number ``grow`` takes the spare height."""
    widget = owner if owner is not None else QWidget()
    column = QVBoxLayout(widget)
    column.setContentsMargins(0, 0, 0, 0)
    for number, part in enumerate(parts):
        if isinstance(part, QHBoxLayout):
            column.addLayout(part, int(number == grow))
        else:
            column.addWidget(part, int(number == grow))
    return widget


def _split(orientation: Qt.Orientation, sizes: Sequence[int], *parts: QWidget) -> QSplitter:
    """``parts`` side by side (or one above the other) at ``sizes``; none can be hidden."""
    split = QSplitter(orientation)
    for part in parts:
        split.addWidget(part)
    split.setChildrenCollapsible(False)
    split.setSizes(list(sizes))
    return split


def _bullets(items: Sequence[str]) -> str:
    return "<ul>" + "".join(f"<li>{escape(item)}</li>" for item in items) + "</ul>"


class FamilyPicker(QWidget):
    """One check box per model family, as many to a row as fit; less explainable families
    say so."""

    changed = Signal()

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.boxes: dict[str, QCheckBox] = {}
        flow = FlowLayout(self)
        flow.setContentsMargins(0, 0, 0, 0)
        for name, label, explainable in family_choices():
            box = QCheckBox(label if explainable else f"{label} · less explainable")
            box.setToolTip(
                "Explainable: its effects can be stated in plain words."
                if explainable
                else "A benchmark or flexible model: chosen only when clearly more accurate."
            )
            box.toggled.connect(self.changed)
            self.boxes[name] = box
            flow.addWidget(box)

    def tick(self, names: Sequence[str]) -> None:
        for name, box in self.boxes.items():
            box.blockSignals(True)
            box.setChecked(name in names)
            box.blockSignals(False)
        self.changed.emit()

    def ticked(self) -> tuple[str, ...]:
        return tuple(name for name, box in self.boxes.items() if box.isChecked())


class ReadingsPage(QWidget):
    """Page 1: what the models learn from, and what cleaning left out."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.text = _browser()
        where = _quiet_label(
            "Readings left out here were set on the Cleaning step; change them there. "
            "Press Next to choose the models to compare."
        )
        _stacked(self, 0, self.text, where)

    def show_brief(self, brief: ReadingsBrief) -> None:
        self.text.setHtml(_bullets(brief.lines()) + AHEAD)

    def show_words(self, words: str) -> None:
        self.text.setHtml(f"<p>{escape(words)}</p>")


class FamiliesPage(QWidget):
    """Page 2: tick the families, read how each forecasts and why it is compared, and start."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.readings: ReadingsBrief | None = None
        self.families = FamilyPicker()
        self.notes = _browser()
        self.origins = QSpinBox()
        self.origins.setRange(1, 36)
        self.origins.setValue(DEFAULT_ORIGINS)
        self.origins.setSuffix(" months")
        self.origins.setToolTip(
            "How many past months the models forecast in the backtest, each refitted on the "
            "data before it."
        )
        self.months = _quiet_label()
        self.fit_button = QPushButton("Fit and compare ›")
        self.fit_button.setToolTip("Backtest the ticked models, rank them and keep the best.")
        self.families.changed.connect(self._show_notes)
        self.origins.valueChanged.connect(self._show_months)
        run = QHBoxLayout()
        run.addWidget(QLabel("Backtest over the last"))
        run.addWidget(self.origins)
        run.addWidget(self.months, 1)
        run.addWidget(self.fit_button)
        _stacked(self, 1, self.families, self.notes, run)

    def set_readings(self, readings: ReadingsBrief | None) -> None:
        self.readings = readings
        self._show_months()

    def _show_notes(self) -> None:
        notes = family_notes(self.families.ticked())
        if not notes:
            self.notes.setHtml("<p>Tick at least one model family to compare.</p>")
            return
        rows = "".join(
            f"<li><b>{escape(note.label)}</b> — {escape(note.how)}"
            f"<br><i>{escape(note.why)}</i></li>"
            for note in notes
        )
        self.notes.setHtml(
            f"<p>{counted(len(notes), 'model')} to compare, each refitted before every "
            f"backtest month and scored on the month it did not see:</p><ul>{rows}</ul>"
        )

    def _show_months(self) -> None:
        if self.readings is None:
            self.months.clear()
            return
        months = self.readings.backtest_months(self.origins.value())
        if not months:
            self.months.setText("The readings hold no whole month to forecast.")
            return
        short = "" if len(months) == self.origins.value() else " (all the data hold)"
        self.months.setText(
            f"forecasts {months[0]} to {months[-1]}{short}, each month from the readings before it."
        )


class BacktestPage(QWidget):
    """Page 3: the backtest's steps as they run, then actual against predicted."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.state = QLabel()
        self.state.setWordWrap(True)
        self.log = QListWidget()
        self.log.setToolTip("Each model family refitted before each backtest month, in order.")
        self.plot = BacktestPanel()
        left = _stacked(None, 1, self.state, self.log)
        _stacked(self, 0, _split(Qt.Orientation.Horizontal, (380, 700), left, self.plot))

    def start(self, families: int, origins: int) -> None:
        """A new backtest begins: clear the log and say what it does."""
        self.log.clear()
        self.state.setText(
            f"<b>Running:</b> {counted(families, 'model')} × up to "
            f"{counted(origins, 'month')}. Cancel stops it; nothing is kept until it ends."
        )
        self.plot.show_note("The forecasts are drawn when the backtest ends.")

    def progressed(self, _fraction: float, message: str) -> None:
        """Add the engine's step to the log (once)."""
        last = self.log.item(self.log.count() - 1)
        if message and (last is None or last.text() != message):
            self.log.addItem(message)
            self.log.scrollToBottom()

    def stopped(self, words: str) -> None:
        self.state.setText(f"<b>Stopped:</b> {escape(words)}")

    def show_report(self, report: ModelReport) -> None:
        backtest = report.backtest
        if backtest is not None:
            families = counted(len(backtest.models), "model")
            months = counted(len(backtest.origins), "past month")
            self.state.setText(
                f"<b>Done:</b> {families} forecast {months}, each refitted on the readings "
                f"before the month. {escape(report.kept)}."
            )
        else:
            self.state.setText(f"<b>No backtest is kept.</b> {escape(report.trace_note)}")
        if report.trace is not None:
            self.plot.show_trace(report.trace)
        else:
            self.plot.show_note(report.trace_note or "No model was chosen.")


class RankingPage(QWidget):
    """Page 4: the ranking in plain words, the reasons and warnings, and the residuals."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.why = _browser()
        self.residuals = ResidualPanel()
        _stacked(self, 0, _split(Qt.Orientation.Horizontal, (600, 480), self.why, self.residuals))

    def show_report(self, report: ModelReport) -> None:
        self.why.setHtml(ranking_html(report))
        if report.residuals:
            self.residuals.show_residuals(report.residuals, report.residual_condition)
        else:
            self.residuals.show_note("No residual diagnostics: no model was recommended.")


class ChoicePage(QWidget):
    """Page 5: keep the recommendation or choose another ranked model; what it says."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.words = QLabel()
        self.words.setWordWrap(True)
        self.ranking = RankingTable()
        self.use_button = QPushButton("Use selected model")
        self.use_button.setToolTip(
            "Keep the model selected in the ranking instead of the recommended one: it is "
            "fitted on all the history with the settings its backtest ran; nothing is "
            "backtested again."
        )
        self.use_button.setEnabled(False)
        self.accept_button = QPushButton("Accept and go on to the Budget ›")
        self.accept_button.setToolTip("Keep the model in use; the Budget step budgets with it.")
        self.coefficients = CoefficientsTable()
        buttons = QHBoxLayout()
        buttons.addWidget(self.use_button)
        buttons.addStretch(1)
        buttons.addWidget(self.accept_button)
        top = _stacked(None, 0, self.ranking, buttons)
        choose = _split(Qt.Orientation.Vertical, (250, 260), top, self.coefficients)
        _stacked(self, 1, self.words, choose)

    def show_report(self, report: ModelReport) -> None:
        self.words.setText(choice_html(report))
        self.ranking.show_ranking(report.ranking, report.chosen, report.condition)
        if report.coefficients is not None:
            self.coefficients.show_statements(report.coefficients)
        else:
            self.coefficients.show_note(report.coefficients_note or "No model was chosen.")
        self.accept_button.setEnabled(report.chosen is not None)

    def show_note(self, words: str) -> None:
        self.words.clear()
        self.ranking.show_note(words)
        self.coefficients.show_note("")
        self.accept_button.setEnabled(False)


def ranking_html(report: ModelReport) -> str:
    """The recommendation in one sentence, every model's line, the reasons and warnings."""
    problem = TONES["problem"][1]
    parts = [f"<p><b>Recommended — {escape(report.summary)}</b></p>", "<p>In rank order:</p><ol>"]
    parts += [f"<li>{escape(str(reason))}</li>" for reason in report.ranking.get("reason", [])]
    parts.append("</ol><b>Why this model</b>")
    parts.append(_bullets(report.reasons))
    if report.warnings:
        parts.append(f"<b style='color:{problem}'>Before relying on it</b>")
        parts.append(_bullets(report.warnings))
    return "".join(parts)


def choice_html(report: ModelReport) -> str:
    """Which model is in use, and how to choose another."""
    if report.chosen is None:
        return "No model could be scored, so there is nothing to choose: fit again."
    if report.chosen == report.recommended:
        return (
            f"<b>In use: {escape(report.chosen_label)}</b>, the recommended model; the Budget "
            "step budgets with it. To use another, select its row and press "
            "<i>Use selected model</i>."
        )
    return (
        f"<b>In use: {escape(report.chosen_label)}</b>, chosen by hand over the recommended "
        f"{escape(report.recommended_label)}. Select the recommended row and press "
        "<i>Use selected model</i> to go back to it."
    )
