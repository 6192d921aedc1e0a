"""The Models screen (the fit wizard): pick a meter and model families, backtest and compare
them on a worker, and see why the engine recommends one.

A meter that already has a chosen model shows it on opening, read from the project file
without refitting; "Fit and compare" runs the wizard again and keeps its choice.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import partial
from html import escape

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QCheckBox,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QSpinBox,
    QSplitter,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from desktop.flow_layout import FlowLayout
from desktop.meter_screen import MeterScreen
from desktop.model_jobs import (
    DEFAULT_ORIGINS,
    FitRequest,
    ModelReport,
    family_choices,
    fit_report,
    stored_report,
    ticked_families,
)
from desktop.model_plots import BacktestPanel, ResidualPanel
from desktop.model_tables import CoefficientsTable, RankingTable
from desktop.palette import TONES
from desktop.project_changes import MODEL, use_model_remembered
from desktop.session import Session
from desktop.workers import Failure, Task, Work


class FamilyPicker(QWidget):
    """One check box per model family, as many to a row as fit; less explainable families
    say so."""

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
            self.boxes[name] = box
            flow.addWidget(box)

    def tick(self, names: Sequence[str]) -> None:
        for name, box in self.boxes.items():
            box.setChecked(name in names)

    def ticked(self) -> tuple[str, ...]:
        return tuple(name for name, box in self.boxes.items() if box.isChecked())


class ModelsScreen(MeterScreen):
    """Pick a meter; show its stored model, or fit and compare the ticked families."""

    NO_PROJECT = "Open a project to fit models to its meters."
    FOLLOWS = (MODEL,)

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(session, parent)
        self.report: ModelReport | None = None
        self.families = FamilyPicker()
        self.origins = QSpinBox()
        self.origins.setRange(1, 36)
        self.origins.setValue(DEFAULT_ORIGINS)
        self.origins.setSuffix(" months")
        self.origins.setToolTip(
            "How many past months the models forecast in the backtest, each refitted on the "
            "data before it."
        )
        self.fit_button = QPushButton("Fit and compare")
        self.fit_button.setToolTip("Backtest the ticked models, rank them and keep the best.")
        self.fit_button.clicked.connect(self.fit)
        self.use_button = QPushButton("Use selected model")
        self.use_button.setToolTip(
            "Keep the model selected in the ranking instead of the recommended one: it is "
            "fitted on all the history with the settings its backtest ran; nothing is "
            "backtested again."
        )
        self.use_button.setEnabled(False)
        self.use_button.clicked.connect(self.use_selected)
        self.kept = QLabel()
        self.kept.setStyleSheet("color: #5a5f66;")
        self.ranking = RankingTable()
        self.ranking.table.itemSelectionChanged.connect(self._selection_changed)
        self.why = QTextBrowser()
        self.why.setOpenLinks(False)
        self.coefficients = CoefficientsTable()
        self.backtest = BacktestPanel()
        self.residuals = ResidualPanel()
        self._lay_out()
        self.follow_session()

    def _lay_out(self) -> None:
        controls = QHBoxLayout()
        controls.addWidget(QLabel("Meter"))
        controls.addWidget(self.meter)
        controls.addSpacing(12)
        controls.addWidget(QLabel("Backtest over"))
        controls.addWidget(self.origins)
        controls.addSpacing(12)
        controls.addWidget(self.fit_button)
        controls.addWidget(self.use_button)
        controls.addSpacing(12)
        controls.addWidget(self.kept, 1)
        left = QSplitter(Qt.Orientation.Vertical)
        left.addWidget(self.ranking)
        left.addWidget(self.why)
        left.addWidget(self.coefficients)
        left.setSizes([190, 190, 340])
        right = QSplitter(Qt.Orientation.Vertical)
        right.addWidget(self.backtest)
        right.addWidget(self.residuals)
        work = QSplitter(Qt.Orientation.Horizontal)
        work.addWidget(left)
        work.addWidget(right)
        work.setChildrenCollapsible(False)
        work.setSizes([560, 480])
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(self.families)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addWidget(work, 1)

    # -- choices ----------------------------------------------------------------------------

    def refresh(self) -> None:
        """Show the chosen meter's stored model (if any), with its default families ticked."""
        name = self.meter.currentText()
        project = self.session.project
        if project is None or not name:
            self._show_empty("This project has no meters yet: add files on the Files step.")
            return
        meters = {m["name"]: m for m in project.summary()["meters"]}
        self.families.tick(ticked_families(meters.get(name, {}).get("interval_minutes")))
        self._run(partial(stored_report, project, name), f"reading the model of '{name}'")

    def fit(self) -> None:
        """Backtest and compare the ticked families on the chosen meter; keep the best."""
        name = self.meter.currentText()
        project = self.session.project
        if project is None or not name:
            return
        families = self.families.ticked()
        if not families:
            self.notice.say("Tick at least one model family to fit.", "problem")
            return
        request = FitRequest(name, families, self.origins.value())
        work = partial(fit_report, project, request)
        self._run(work, f"fitting and comparing models of '{name}'", announce="Recommended")

    def use_selected(self) -> None:
        """Keep the model selected in the ranking as the meter's choice."""
        name, model = self.meter.currentText(), self.ranking.selected()
        project = self.session.project
        if project is None or not name or model is None:
            return
        words = f"use model '{self.ranking.row_of(model)['Model']}' for {self.meter.shown()}"
        remember = self.undo.made_on_worker  # Edit ▸ Undo takes the choice back
        work = partial(use_model_remembered, remember, project, name, model, words)
        self._run(work, f"keeping another model for '{name}'", announce="Now used")

    def _selection_changed(self) -> None:
        selected = self.ranking.selected()
        chosen = None if self.report is None else self.report.chosen
        self.use_button.setEnabled(
            self.task is None and selected is not None and selected != chosen
        )

    # -- work -------------------------------------------------------------------------------

    def _run(self, work: Work, doing: str, announce: str | None = None) -> None:
        """Run ``work``; ``announce`` (e.g. "Recommended") words the notice of a kept model."""
        if self.task is not None:
            self._wanted = (work, doing, announce)
            self.task.cancel()
            return
        self._start(work, doing, announce)

    def _start(self, work: Work, doing: str, announce: str | None) -> None:
        self._wanted = None
        self.notice.clear()
        task = Task(work, doing)
        task.succeeded.connect(self._show)
        if announce is not None:
            task.succeeded.connect(partial(self._fitted, announce))
        task.failed.connect(self._failed)
        task.cancelled.connect(partial(self._cancelled, doing))
        task.ended.connect(self._ended)
        self.task = task
        self.task_bar.follow(task)
        self.fit_button.setEnabled(False)
        self.use_button.setEnabled(False)
        task.start()

    def _ended(self) -> None:
        self.task = None
        self.fit_button.setEnabled(True)
        if self._wanted is not None:
            self._start(*self._wanted)

    def _failed(self, failure: Failure) -> None:
        if self._wanted is None:
            self.notice.show_failure(failure)

    def _cancelled(self, doing: str) -> None:
        if self._wanted is None:
            self.notice.say(f"Stopped {doing}; nothing was kept.", "info")

    # -- showing ----------------------------------------------------------------------------

    def _show_empty(self, words: str) -> None:
        self.report = None
        self.kept.clear()
        self.ranking.show_note(words)
        self.why.clear()
        self.coefficients.show_note("")
        self.backtest.show_note(words)
        self.residuals.show_note(words)

    def _show(self, report: ModelReport | None) -> None:
        if self._wanted is not None or self.session.project is None:
            return  # the meter changed meanwhile; its report follows
        if report is None:
            name = self.meter.currentText()
            self._show_empty(
                f"'{name}' has no fitted model yet: tick the models to compare and press "
                "'Fit and compare'."
            )
            return
        self.report = report
        self.kept.setText(report.kept)
        self.ranking.show_ranking(report.ranking, report.chosen, report.condition)
        self.why.setHtml(_why_html(report))
        if report.coefficients is not None:
            self.coefficients.show_statements(report.coefficients)
        else:
            self.coefficients.show_note(report.coefficients_note or "No model was chosen.")
        if report.trace is not None:
            self.backtest.show_trace(report.trace)
        else:
            self.backtest.show_note(report.trace_note or "No model was chosen.")
        if report.residuals:
            self.residuals.show_residuals(report.residuals, report.residual_condition)
        else:
            self.residuals.show_note("No residual diagnostics: no model was chosen.")

    def _fitted(self, verb: str, report: ModelReport) -> None:
        if self._wanted is not None:
            return
        if report.chosen is None:
            self.notice.say("No model could be scored, so none was kept.", "problem")
            return
        self.notice.say(
            f"{verb} for '{report.meter}': {report.chosen_label}. {report.kept}.", "done"
        )


def _why_html(report: ModelReport) -> str:
    """The engine's reasons, the largest systematic miss and the warnings, as a short page."""
    problem = TONES["problem"][1]
    parts = ["<b>Why this model</b><ul>"]
    parts += [f"<li>{escape(reason)}</li>" for reason in report.reasons]
    parts.append("</ul>")
    if report.warnings:
        parts.append(f"<b style='color:{problem}'>Before relying on it</b><ul>")
        parts += [f"<li>{escape(warning)}</li>" for warning in report.warnings]
        parts.append("</ul>")
    return "".join(parts)
