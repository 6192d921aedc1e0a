"""The Budget screen: choose the period, as-of date, weather and tariff; the engine budgets
every meter on a worker; see the monthly totals with their range, cost, how well such ranges
held in past months, and the cautions that go with a forecast.

The last budget run stays on the screen (``budget``) and is announced with
``budget_changed`` so the Export step can write it. Opening a project shows the budget it
keeps last, and the form shows the choices that budget was run with.
"""

from __future__ import annotations

from functools import partial
from html import escape

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QComboBox,
    QHBoxLayout,
    QInputDialog,
    QLabel,
    QMessageBox,
    QPushButton,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from desktop.budget_form import BudgetForm
from desktop.budget_jobs import (
    BudgetChoices,
    adopt_shown,
    budget_cautions,
    kept_choices,
    meters_without_model,
    period_words,
    run_budget,
)
from desktop.budget_plot import BudgetRangePanel
from desktop.budget_table import BudgetTable
from desktop.palette import TONES
from desktop.project_changes import LABELS, Reversible
from desktop.session import Session
from desktop.task_screen import TaskScreen
from desktop.undo import undo_for
from desktop.work_area import chart_notes_over_table
from engine.errors import InputError, ProjectError
from engine.meter_labels import Labels, shown_name
from engine.project import Project
from engine.steps.adopting import adopted_as_issued
from engine.steps.budgeting import ProjectBudget, last_reading_day, latest_budget
from engine.steps.labels import meter_labels


class BudgetScreen(TaskScreen):
    """Budget the open project's meters and show the run."""

    budget_changed = Signal(object)
    #: A budget was adopted (its name): the Track step lists it.
    adopted_budget = Signal(str)

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.session = session
        self.budget: ProjectBudget | None = None
        self._as_of_for: Project | None = None
        self.form = BudgetForm()
        self.budget_button = QPushButton("Budget")
        self.budget_button.setToolTip("Forecast every meter for the period, with its range.")
        self.budget_button.clicked.connect(self.run)
        self.ran_with: BudgetChoices | None = None  # the choices of the budget run here
        self.adopt_button = QPushButton("Adopt…")
        self.adopt_button.setToolTip(
            "Keep this budget in the project under a name (e.g. FY2027) with everything it "
            "assumed, to track the year against it; later imports, cleaning and fits never "
            "change it."
        )
        self.adopt_button.setEnabled(False)
        self.adopt_button.clicked.connect(lambda: self.ask_adopt())
        self.adopted = QComboBox()
        self.adopted.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.adopted.setToolTip("Budgets adopted in this project: choose one to see it again.")
        self.adopted.activated.connect(self._adopted_chosen)
        self.summary = QLabel()
        self.summary.setWordWrap(True)
        self.summary.setStyleSheet("color: #5a5f66;")
        self.plot = BudgetRangePanel()
        self.notes = QTextBrowser()
        self.notes.setOpenLinks(False)
        self.table = BudgetTable()
        self._lay_out()
        session.subscribe(self._project_changed)
        undo_for(session).changed.connect(self._undone_or_redone)
        self._project_changed(session.project)

    def _lay_out(self) -> None:
        controls = QHBoxLayout()
        controls.addWidget(self.form, 1)
        buttons = QVBoxLayout()
        buttons.addStretch(1)
        buttons.addWidget(self.adopted)
        buttons.addWidget(self.adopt_button)
        buttons.addWidget(self.budget_button)
        controls.addLayout(buttons)
        work = chart_notes_over_table(self.plot, self.notes, self.table, [620, 420], [380, 320])
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addWidget(self.summary)
        layout.addWidget(work, 1)

    # -- project ----------------------------------------------------------------------------

    def _project_changed(self, project: Project | None) -> None:
        self.ran_with = None
        self._keep(None)
        self._list_adopted(project)
        if project is None:
            self._clear("Open a project to budget its meters.")
        else:
            self._clear("Choose the period and press 'Budget'.")
            self._show_kept(project)
        if self.runner.busy:
            self.runner.cancel()  # the new project's as-of date is looked up once it stops
            return
        self._look_up_as_of()

    def _look_up_as_of(self) -> None:
        """Default the as-of date to the project's last day with a reading (on a worker: it
        reads every meter)."""
        project = self.session.project
        self._as_of_for = project
        if project is None:
            return
        self.start_task(
            lambda progress: last_reading_day(project),
            "finding the last day with readings",
            partial(self._as_of_found, project),
        )

    def _as_of_found(self, project: Project, day) -> None:
        if self.session.project is not project:
            return
        self.form.set_as_of(day)
        kept = kept_choices(project)
        if kept is not None:
            self.form.show_choices(kept)

    def _show_kept(self, project: Project) -> None:
        """Show the budget the project keeps last, if any."""
        try:
            budget = latest_budget(project)
        except ProjectError as error:
            self.notice.say(str(error), "problem")
            return
        if budget is not None:
            self._display(budget)
            self.summary.setText(
                f"The budget {period_words(budget)} kept in {project.path.name}, as it was "
                f"run (budget again for new readings or other choices): "
                f"{self.summary.text()}"
            )

    def task_ended(self) -> None:
        if self._as_of_for is not self.session.project:
            self._look_up_as_of()

    # -- work -------------------------------------------------------------------------------

    def run(self) -> None:
        """Budget every meter of the open project with the choices shown."""
        project = self.session.project
        if project is None:
            return
        choices = self.form.choices()
        started = self.start_task(
            partial(run_budget, project, choices),
            "budgeting the meters",
            partial(self._show, project, choices),
        )
        if started and self.budget is None:
            self.plot.show_note(
                "Budgeting: the monthly range appears here when the run ends (the bar above "
                "shows how far it is)."
            )
        unfitted = meters_without_model(project) if started else []
        if unfitted:
            labels = meter_labels(project)
            names = ", ".join(shown_name(labels, name) for name in unfitted)
            self.notice.say(
                f"{names} {'has' if len(unfitted) == 1 else 'have'} no fitted "
                "model yet: the budget first compares the default models for "
                f"{'it' if len(unfitted) == 1 else 'them'}, which takes a while. Fit on the "
                "Models step to choose yourself.",
                "info",
            )

    def set_busy(self, busy: bool) -> None:
        """Buttons for the state: a budget run here can be adopted, an adopted one shown."""
        self.budget_button.setEnabled(not busy)
        self.adopt_button.setEnabled(not busy and self.ran_with is not None)
        self.adopted.setEnabled(not busy and self.adopted.count() > 1)

    # -- adopted budgets --------------------------------------------------------------------

    def _list_adopted(self, project: Project | None) -> None:
        self.adopted.clear()
        names = [] if project is None else project.adopted_budget_names()
        self.adopted.addItem(f"Adopted budgets ({len(names)})" if names else "None adopted yet")
        self.adopted.addItems(names)
        self.adopted.setEnabled(bool(names))

    def ask_adopt(self, name: str | None = None, replace: bool = False) -> None:
        """Adopt the budget run here under a name the person gives."""
        project, choices = self.session.project, self.ran_with
        if project is None or choices is None or self.budget is None:
            return
        if name is None:
            name, given = QInputDialog.getText(
                self, "Adopt this budget", "Name to track the year by (e.g. FY2027):"
            )
            if not given or not name.strip():
                return
            if name.strip() in project.adopted_budget_names():
                answer = QMessageBox.question(
                    self,
                    "Replace the adopted budget?",
                    f"A budget is already adopted as '{name.strip()}'. Replace it with this one?",
                )
                if answer != QMessageBox.StandardButton.Yes:
                    return
                replace = True
        self.start_task(
            partial(adopt_shown, project, name, self.budget, choices, replace),
            f"adopting the budget as '{name.strip()}'",
            partial(self._adopted_done, project),
        )

    def _adopted_done(self, project: Project, name: str) -> None:
        if self.session.project is not project:
            return
        self._list_adopted(project)
        self.notice.say(
            f"Adopted as '{name}' in {project.path.name}: track the year against it on the "
            f"Track step. Choose it under 'Adopted budgets' to see it again.",
            "done",
        )
        self.adopted_budget.emit(name)

    def _adopted_chosen(self, position: int) -> None:
        project = self.session.project
        if project is None or position < 1:
            return
        name = self.adopted.itemText(position)
        try:
            budget = adopted_as_issued(project, name)
        except (InputError, ProjectError) as error:
            self.notice.say(str(error), "problem")
            return
        self.ran_with = None
        self._display(budget)
        self.set_busy(self.runner.busy)
        self.summary.setText(
            f"The budget adopted as '{name}', as it was issued (write it again on the Export "
            f"step): {self.summary.text()}"
        )

    def task_cancelled(self, doing: str) -> None:
        super().task_cancelled(doing)
        if self.budget is None:
            self._clear("Stopped before the budget was ready.")

    def task_failed(self) -> None:
        if self.budget is None:  # the chart no longer waits for a run that has ended
            self._clear("No budget was made (the notice above says why).")

    # -- showing ----------------------------------------------------------------------------

    def _keep(self, budget: ProjectBudget | None) -> None:
        self.budget = budget
        self.budget_changed.emit(budget)

    def _clear(self, words: str) -> None:
        self.summary.clear()
        self.table.clear()
        self.notes.clear()
        self.plot.show_note(words)

    def _show(self, project: Project, choices: BudgetChoices, budget: ProjectBudget) -> None:
        if self.session.project is not project:
            return  # another project was opened meanwhile
        self.ran_with = choices  # adopting is offered once the task has ended (set_busy)
        self._display(budget)
        self.notice.say(
            f"Budget {period_words(budget)} ready; kept in "
            f"{project.path.name}. Write it for finance on the Export step.",
            "done",
        )

    def _display(self, budget: ProjectBudget) -> None:
        self._keep(budget)
        self._show_run(budget)

    def _show_run(self, budget: ProjectBudget) -> None:
        """The budget's words, range and table, meters named as the project names them."""
        project = self.session.project
        labels = None if project is None else meter_labels(project)
        self.summary.setText(_summary_words(budget, labels))
        self.table.show_run(budget.run, labels)
        self.plot.show_run(budget.run, labels)
        self.notes.setHtml(_notes_html(budget, labels))

    def _undone_or_redone(self, change: Reversible) -> None:
        """Meters named or shown afresh after a change of names or units."""
        if change.kind == LABELS and self.budget is not None:
            self._show_run(self.budget)


def _summary_words(budget: ProjectBudget, labels: Labels | None) -> str:
    run = budget.run
    parts = [
        f"Readings up to {run.as_of}",
        f"weather: {run.weather}",
        f"{run.paths:,} simulated paths",
        f"tariff: {run.tariff}" if run.tariff else "no tariff (energy only)",
    ]
    models = run.assumptions.get("models", {})
    if models:
        parts.append(
            "models: "
            + ", ".join(f"{shown_name(labels, name)} {label}" for name, label in models.items())
        )
    return " · ".join(parts) + "."


def _notes_html(budget: ProjectBudget, labels: Labels | None) -> str:
    """How well the range held in past months, per meter, then the cautions."""
    problem = TONES["problem"][1]
    parts = ["<b>How well such ranges held</b><ul>"]
    for meter, calibration in budget.run.calibration.items():
        sentence = calibration.sentence()
        name = shown_name(labels, meter)
        parts.append(f"<li><i>{escape(name)}</i>: {escape(sentence)}.</li>")
    parts.append(f"</ul><b style='color:{problem}'>Before you use these numbers</b><ul>")
    parts += [f"<li>{escape(caution)}</li>" for caution in budget_cautions(budget)]
    parts.append("</ul>")
    return "".join(parts)
