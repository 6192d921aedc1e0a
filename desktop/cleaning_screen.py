"""The Cleaning screen: what the engine finds in a meter's readings, previews, fixes and the log.

Every change (a fix, all recommended fixes, undo, redo, remove) is made by the engine in the
project file at once, on a worker, and followed by a fresh review; the screen then shows the
engine's findings and quality figures for the log as it now stands.
"""

from __future__ import annotations

from functools import partial

import pandas as pd
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QHBoxLayout,
    QInputDialog,
    QLabel,
    QMessageBox,
    QPushButton,
    QScrollArea,
    QSplitter,
    QVBoxLayout,
    QWidget,
)

from desktop.cleaning_jobs import Change, FixPreview, preview_fix
from desktop.cleaning_log_view import CleaningLogView
from desktop.cleaning_words import finding_name, nothing_recommended, step_name
from desktop.findings_table import FindingsTable
from desktop.fix_preview_plot import FixPreviewPlot
from desktop.meter_screen import MeterScreen
from desktop.project_changes import CALENDAR, CLEANING, Reversible, cleaning_change_remembered
from desktop.quality_panel import QualityPanel
from desktop.session import Session
from desktop.task_runner import Job
from desktop.workers import Failure
from engine.cleaning import Finding, accepted_step, likely_factor, recommended_steps
from engine.errors import InputError, ProjectError
from engine.project import Project
from engine.steps.cleaning import (
    MeterReview,
    apply_recommended,
    apply_recommended_everywhere,
    rescale_after_shift,
)

#: Width of the column holding the quality summary and the log, enough for their words.
SIDE_WIDTH = 380
#: Clock format for a meter whose interval is not known yet (before its first review).
UNKNOWN_INTERVAL = pd.Timedelta(0)


class CleaningScreen(MeterScreen):
    """Pick a meter; review it on a worker; preview, apply, undo and remove fixes.

    ``log_changed`` carries the name of a meter whose cleaning log was changed, so that screens
    showing its cleaned readings can follow.
    """

    log_changed = Signal(str)

    NO_PROJECT = "Open a project to review its meters' readings."
    FOLLOWS = (CLEANING, CALENDAR)

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(session, parent)
        self.review: MeterReview | None = None
        self.preview: FixPreview | None = None
        self.review_button = QPushButton("Review again")
        self.review_button.setToolTip("Run every detector on the meter's cleaned readings again.")
        self.review_button.clicked.connect(self.refresh)
        self.apply_all_button = QPushButton("Apply all recommended")
        self.apply_all_button.setToolTip(
            "Log the fix of every finding marked 'recommended' in one save. Findings marked "
            "'for you to decide', such as lasting level changes, are left alone."
        )
        self.apply_all_button.clicked.connect(self.apply_all_recommended)
        self.apply_everywhere_button = QPushButton("… on every meter")
        self.apply_everywhere_button.setToolTip(
            "Review every meter and log each one's recommended fixes, all in one save."
        )
        self.apply_everywhere_button.clicked.connect(self.apply_recommended_everywhere)
        self.apply_all_reason = QLabel()
        self.apply_all_reason.setStyleSheet("color: #5a5f66;")
        self.apply_all_reason.setWordWrap(True)  # a long reason must not widen the window
        self.findings = FindingsTable()
        self.findings.chosen.connect(self._finding_chosen)
        self.explanation = QLabel()
        self.explanation.setWordWrap(True)
        self.explanation.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.explanation.setAlignment(Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)
        # A long explanation (a level change's runs to six lines) scrolls instead of being cut
        # off at the bottom on a 720-pixel-high screen.
        self.explanation_area = QScrollArea()
        self.explanation_area.setWidget(self.explanation)
        self.explanation_area.setWidgetResizable(True)
        self.explanation_area.setFrameShape(QScrollArea.Shape.NoFrame)
        self.explanation_area.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.explanation_area.setMaximumHeight(5 * self.fontMetrics().lineSpacing())
        self.apply_fix_button = QPushButton("Apply this fix")
        self.apply_fix_button.setToolTip("Log this finding's fix as the next step; undo it later.")
        self.apply_fix_button.clicked.connect(self.apply_selected_fix)
        self.accept_button = QPushButton("Accept as expected")
        self.accept_button.setToolTip(
            "Keep the readings as they are (a planned shutdown, a holiday the calendar lacks): "
            "the log says so, and the finding no longer shows while that step is active."
        )
        self.accept_button.clicked.connect(self.accept_selected)
        self.rescale_button = QPushButton("Correct the scale…")
        self.rescale_button.setToolTip(
            "For a level change caused by the meter (its multiplier or unit changed and the "
            "export kept the old one): multiply the readings from the change on by a factor "
            "from the meter's records."
        )
        self.rescale_button.clicked.connect(lambda: self.rescale_selected())
        self.plot = FixPreviewPlot()
        self.quality = QualityPanel()
        self.log = CleaningLogView()
        self.log.switched.connect(self._switch_step)
        self.log.removal_asked.connect(self._remove_step)
        self.runner.started.connect(self._update_busy)
        self.runner.ended.connect(self._update_busy)
        self._lay_out()
        self.follow_session()

    def _lay_out(self) -> None:
        controls = QHBoxLayout()
        controls.addWidget(QLabel("Meter"))
        controls.addWidget(self.meter)
        controls.addWidget(self.review_button)
        controls.addStretch(1)
        controls.addWidget(self.apply_all_reason)
        controls.addWidget(self.apply_all_button)
        controls.addWidget(self.apply_everywhere_button)
        actions = QVBoxLayout()  # stacked beside the explanation, which keeps the width
        actions.setSpacing(2)
        actions.addWidget(self.apply_fix_button)
        actions.addWidget(self.accept_button)
        actions.addWidget(self.rescale_button)
        actions.addStretch(1)
        fix_row = QHBoxLayout()
        fix_row.addWidget(self.explanation_area, 1)
        fix_row.addLayout(actions)
        preview = QWidget()
        preview_layout = QVBoxLayout(preview)
        preview_layout.setContentsMargins(0, 0, 0, 0)
        preview_layout.addLayout(fix_row)
        preview_layout.addWidget(self.plot, 1)
        work = QSplitter(Qt.Orientation.Vertical)
        work.addWidget(self.findings)
        work.addWidget(preview)
        work.setStretchFactor(0, 2)
        work.setStretchFactor(1, 3)
        side = QWidget()
        side.setMinimumWidth(SIDE_WIDTH)
        side_layout = QVBoxLayout(side)
        side_layout.setContentsMargins(0, 0, 0, 0)
        side_layout.addWidget(self.quality)
        side_layout.addWidget(self.log, 1)
        split = QSplitter(Qt.Orientation.Horizontal)
        split.addWidget(work)
        split.addWidget(side)
        split.setStretchFactor(0, 3)
        split.setStretchFactor(1, 1)
        split.setChildrenCollapsible(False)
        split.setSizes([3 * SIDE_WIDTH, SIDE_WIDTH])
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addWidget(split, 1)

    # -- choices ----------------------------------------------------------------------------

    def refresh(self) -> None:
        """Review the chosen meter afresh, once any running work stops."""
        name = self.meter.currentText()
        if self.session.project is None or not name:
            self._show_empty("This project has no meters yet: add files on the Files step.")
            return
        self.runner.request(self._job(name))

    def _undone_or_redone(self, change: Reversible) -> None:
        super()._undone_or_redone(change)
        if change.kind == CLEANING:
            for name in change.meters:
                self.log_changed.emit(name)

    # -- changes ----------------------------------------------------------------------------

    def apply_selected_fix(self) -> None:
        """Log the selected finding's fix as the next step of the meter's log."""
        finding = self.findings.selected()
        if finding is None or finding.fix is None:
            return
        change = partial(Project.add_cleaning_step, step=finding.fix.to_dict())
        words = f"Logged: {step_name(finding.fix.kind)} for the {finding_name(finding.kind)}."
        self._change(change, words, f"apply fix '{step_name(finding.fix.kind)}' on {{meter}}")

    def accept_selected(self) -> None:
        """Log that the selected finding is expected: its readings stay as they are."""
        finding = self.findings.selected()
        if finding is None:
            return
        change = partial(Project.add_cleaning_step, step=accepted_step(finding).to_dict())
        what = finding_name(finding.kind)
        self._change(
            change,
            f"The {what} is accepted as expected.",
            f"accept the {what} on {{meter}} as expected",
        )

    def rescale_selected(self, factor: float | None = None) -> None:
        """Multiply the selected level shift's readings, from the change to the last reading,
        by ``factor`` (asked for, with the likely one offered, when not given)."""
        finding, review = self.findings.selected(), self.review
        if finding is None or finding.kind != "level_shift" or review is None:
            return
        if factor is None:
            factor, ok = QInputDialog.getDouble(
                self,
                "Correct the scale",
                _rescale_question(finding, review.meter.timezone),
                likely_factor(finding),
                0.0001,
                10000.0,
                4,
            )
            if not ok:
                return
        change = partial(rescale_after_shift, review=review, finding=finding, factor=factor)
        self._change(
            change,
            f"Logged: the readings from the level change on multiplied by {factor:g}.",
            f"rescale readings on {{meter}} by {factor:g}",
        )

    def apply_recommended_everywhere(self) -> None:
        """Review every meter and log its recommended fixes, all in one save."""
        self._change(
            apply_recommended_everywhere,
            "Logged the recommended fixes of every meter.",
            "apply the recommended fixes of every meter",
            every_meter=True,
        )

    def apply_all_recommended(self) -> None:
        """Log every recommended fix of the review shown, in one save."""
        review = self.review
        if review is None:
            return
        count = len(recommended_steps(review.findings))
        change = partial(apply_recommended, review=review)
        fixes = f"{count} recommended fix{'es' * (count != 1)}"
        self._change(change, f"Logged {fixes}.", f"apply {fixes} on {{meter}}")

    def _switch_step(self, step_id: int, active: bool) -> None:
        change = partial(Project.set_step_active, step_id=step_id, active=active)
        number = self._number(step_id)
        self._change(
            change,
            f"Step {number} {'redone' if active else 'undone'}.",
            f"switch step {number} of {{meter}} {'on' if active else 'off'}",
        )

    def _remove_step(self, step_id: int) -> None:
        number = self._number(step_id)
        answer = QMessageBox.question(
            self,
            "Remove a cleaning step",
            f"Remove step {number} from the project's log? Edit ▸ Undo puts it back; the "
            "step's own undo button keeps it and switches it off instead.",
        )
        if answer != QMessageBox.StandardButton.Yes:
            return
        change = partial(Project.remove_cleaning_step, step_id=step_id)
        self._change(change, f"Step {number} removed.", f"remove step {number} from {{meter}}")

    def _number(self, step_id: int) -> int:
        ids = [int(stored["id"]) for stored in self.log.steps]
        return ids.index(step_id) + 1 if step_id in ids else 0

    def _change(self, change: Change, done: str, command: str, every_meter: bool = False) -> None:
        """Make ``change`` on a worker, then review the meter shown; the logs it touches are
        the shown meter's, or every meter's. ``command`` words it for Edit ▸ Undo, with
        ``{meter}`` for the meter's name as shown."""
        name = self.meter.currentText()
        project = self.session.project
        if project is None or not name:
            return
        touched = tuple(project.meter_names()) if every_meter else (name,)
        words = command.format(meter=self.meter.shown())
        self.runner.start(self._job(name, change, done, touched, words))

    # -- work -------------------------------------------------------------------------------

    def _job(
        self,
        meter: str,
        change: Change | None = None,
        done: str = "",
        touched: tuple[str, ...] = (),
        command: str = "",
    ) -> Job:
        """Make ``change`` (if any), then review ``meter``; Edit ▸ Undo remembers the change
        as ``command``."""
        shown = self.meter.shown_as(meter)
        doing = f"reviewing '{shown}'" if change is None else f"changing the cleaning of '{shown}'"
        project, remember = self.session.project, self.undo.made_on_worker
        return Job(
            partial(cleaning_change_remembered, remember, project, meter, change, command),
            doing,
            partial(self._reviewed, done),
            stopped=partial(self._cancelled, meter),
            failed=self._failed,
            ended=partial(self._ended, meter, touched),
        )

    def _reviewed(self, done: str, review: MeterReview) -> None:
        if self.session.project is None:
            return  # the project closed meanwhile
        self.review = review
        meter = review.meter
        self.quality.show_quality(review.quality())
        self.findings.show_findings(review.findings, meter.timezone, meter.interval)
        if done:
            self.notice.say(f"{done} Saved in {self.session.project.path.name}.", "done")

    def _failed(self, _failure: Failure) -> None:
        self._clear_review("No findings to show: see the message above.")

    def _cancelled(self, meter: str) -> None:
        shown = self.meter.shown_as(meter)
        self._clear_review(f"Stopped reviewing '{shown}'.")
        self.notice.say(
            f"Stopped reviewing '{shown}'. Press 'Review again' to see its findings.", "info"
        )

    def _ended(self, meter: str, touched: tuple[str, ...]) -> None:
        """Whatever became of the work: the log as saved, and the meters it may have touched."""
        self._show_log(meter)
        for name in touched:
            self.log_changed.emit(name)

    # -- showing ----------------------------------------------------------------------------

    def _update_busy(self) -> None:
        busy = self.runner.busy
        self.review_button.setEnabled(not busy)
        self.log.set_busy(busy)
        self._update_buttons()

    def _update_buttons(self) -> None:
        idle = not self.runner.busy
        review = self.review
        recommended = review is not None and bool(recommended_steps(review.findings))
        self.apply_all_button.setEnabled(idle and recommended)
        self.apply_all_reason.setText("" if recommended else nothing_recommended(review))
        # A fix is offered once its preview shows it applies: one that cannot be replayed
        # would break the meter's log.
        previewed = self.preview is not None and self.preview.after is not None
        self.apply_fix_button.setEnabled(idle and previewed)
        self.accept_button.setEnabled(idle and self.findings.selected() is not None)
        chosen = self.findings.selected()
        shift = chosen is not None and chosen.kind == "level_shift"
        self.rescale_button.setVisible(shift)
        self.rescale_button.setEnabled(idle and shift and self.review is not None)

    def _show_log(self, meter: str) -> None:
        """The meter's log as the project holds it, undone steps included.

        It is read even when the review failed, so a damaged step can still be removed.
        """
        project = self.session.project
        if project is None or meter != self.meter.currentText():
            return
        try:
            steps = project.cleaning_steps(meter, active_only=False)
        except (InputError, ProjectError) as error:
            self.log.clear(str(error))
            return
        review = self.review
        known = review is not None and review.meter.name == meter
        interval = review.meter.interval if known else UNKNOWN_INTERVAL
        self.log.show_steps(steps, project.timezone, interval)

    def _finding_chosen(self, finding: Finding | None) -> None:
        self.preview = None
        if finding is None or self.review is None:
            self.explanation.setText("")
            self.plot.show_note("Select a finding to see its readings before and after its fix.")
        else:
            self.explanation.setText(finding.explanation)
            self._preview(self.review, finding)
        self._update_buttons()

    def _preview(self, review: MeterReview, finding: Finding) -> None:
        try:
            self.preview = preview_fix(review, finding)
        except Exception as error:
            failure = Failure.from_exception(error, "previewing the fix")
            self.plot.show_note(f"No preview, so the fix cannot be applied: {failure.message}")
            if failure.kind == "internal":
                self.notice.show_failure(failure)
            return
        self.plot.show_preview(self.preview)

    def _clear_review(self, words: str) -> None:
        self.review = None
        self.preview = None
        self.findings.clear()
        self.quality.clear()
        self.explanation.setText("")
        self.plot.show_note(words)
        self._update_buttons()

    def _show_empty(self, words: str) -> None:
        self._clear_review(words)
        self.log.clear(words)


def _rescale_question(finding: Finding, timezone: str) -> str:
    """What the scale dialog asks: the change found, and the factor that would undo it."""
    day = finding.start.tz_convert(timezone).strftime("%a %Y-%m-%d")
    ratio = float(finding.measures["ratio"])
    return (
        f"Daily energy changed ×{ratio:.3g} from {day} on and stayed there.\n"
        "If the meter's multiplier or unit changed and the readings kept the old one, multiply "
        "the readings from the change to the last reading by (take the factor from the "
        "meter's records; the likely one is offered):"
    )
