"""The Export screen: write the last budget run as the finance workbook, on a worker.

Without a budget run it says so and offers to go to the Budget step; after writing it shows
the path and opens its folder on request.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from functools import partial
from pathlib import Path

from PySide6.QtCore import QUrl, Signal
from PySide6.QtGui import QDesktopServices
from PySide6.QtWidgets import (
    QHBoxLayout,
    QLabel,
    QPushButton,
    QVBoxLayout,
    QWidget,
)

from desktop.budget_jobs import period_words
from desktop.file_dialogs import ask_workbook_path
from desktop.task_screen import TaskScreen
from engine.export.finance_workbook import SHEETS, write_finance_workbook
from engine.meter_labels import Labels
from engine.progress import Progress
from engine.steps.budgeting import ProjectBudget
from engine.steps.checklist import StepState
from engine.words import counted

WORKBOOK_NAME = "finance-budget.xlsx"
NO_BUDGET = (
    "The open project keeps no budget yet. Run one on the Budget step; the workbook is "
    "written from it."
)


def write_workbook(
    path: Path,
    budget: ProjectBudget,
    project: str | None = None,
    labels: Labels | None = None,
    progress: Progress | None = None,
) -> Path:
    """Write ``budget`` of the project named ``project`` as the finance workbook at ``path``
    (the name heads every printed page; meters named and shown by ``labels``); the path
    written."""
    return write_finance_workbook(
        path,
        budget.run,
        quality=budget.quality,
        steps=budget.steps,
        scorecards=budget.scorecards,
        data_range=budget.data_range,
        project=project,
        labels=labels,
        progress=progress,
    )


def budget_words(budget: ProjectBudget) -> str:
    """Which budget will be written, in one line."""
    run = budget.run
    accounts = sum(meter.source == "bills" for meter in run.meters)
    budgeted = counted(len(run.meters) - accounts, "meter")
    if accounts:  # a bill account is no meter: "8 meters and 1 bill account"
        budgeted += f" and {counted(accounts, 'bill account')}"
    return (
        f"Budget {period_words(budget)}, readings up to {run.as_of}, "
        f"{budgeted}, {run.paths:,} paths"
        + (f", costs under {run.tariff}." if run.tariff else ", energy only (no tariff).")
    )


class ExportScreen(TaskScreen):
    """Write the last budget for finance; ``budget_asked`` when the user wants to run one."""

    budget_asked = Signal()
    #: The workbook of the budget shown was written to this path.
    workbook_written = Signal(Path)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.budget: ProjectBudget | None = None
        self.project_name: str | None = None
        #: The open project's meter names and units when the workbook is written (set by the
        #: window; None: raw names, kWh only).
        self.labels_of: Callable[[], Labels | None] = lambda: None
        self.written: Path | None = None
        self.what = QLabel()
        self.what.setWordWrap(True)
        self.write_button = QPushButton("Write finance workbook…")
        self.write_button.clicked.connect(self.ask_path)
        self.go_button = QPushButton("Go to the Budget step")
        self.go_button.clicked.connect(self.budget_asked)
        self.where = QLabel()
        self.where.setWordWrap(True)
        self.open_button = QPushButton("Open its folder")
        self.open_button.clicked.connect(self.open_folder)
        sheets = QLabel(
            "The workbook holds the sheets " + ", ".join(f"'{name}'" for name in SHEETS) + ": "
            "totals with their range, the monthly and daily figures, what the budget assumes, "
            "the data quality and the models' backtest scores."
        )
        sheets.setWordWrap(True)
        sheets.setStyleSheet("color: #5a5f66;")
        buttons = QHBoxLayout()
        buttons.addWidget(self.write_button)
        buttons.addWidget(self.go_button)
        buttons.addStretch(1)
        written = QHBoxLayout()
        written.addWidget(self.where, 1)
        written.addWidget(self.open_button)
        layout = QVBoxLayout(self)
        layout.addWidget(QLabel("<h2>Finance workbook</h2>"))
        layout.addWidget(self.what)
        layout.addLayout(buttons)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addLayout(written)
        layout.addWidget(sheets)
        layout.addStretch(1)
        self.set_budget(None)

    def set_budget(self, budget: ProjectBudget | None, project: str | None = None) -> None:
        """The budget to write (None: none has been run), of the project named ``project``."""
        if budget is not self.budget:
            self.written = None  # a workbook written before was of another budget
            self.where.clear()
        self.budget = budget
        self.project_name = project
        self.what.setText(NO_BUDGET if budget is None else budget_words(budget))
        self.go_button.setVisible(budget is None)
        self.set_busy(self.runner.busy)

    def set_busy(self, busy: bool) -> None:
        self.write_button.setEnabled(self.budget is not None and not busy)
        self.open_button.setVisible(self.written is not None)

    def ask_path(self) -> None:
        """Ask where to write the workbook, then write it."""
        path = ask_workbook_path(self, "Write finance workbook", WORKBOOK_NAME)
        if path is not None:
            self.write_to(path)

    def write_to(self, path: Path) -> None:
        """Write the budget to ``path`` (.xlsx) on a worker."""
        if self.budget is None:
            self.notice.say(NO_BUDGET, "info")
            return
        work = partial(write_workbook, path, self.budget, self.project_name, self.labels_of())
        self.start_task(work, f"writing {path.name}", self._written)

    def _written(self, path: Path) -> None:
        self.written = path.resolve()
        self.where.setText(f"Written: {self.written}")
        self.open_button.setVisible(True)
        self.notice.say(f"Finance workbook written: {self.written.name}.", "done")
        self.workbook_written.emit(self.written)

    def step_state(self, state: StepState) -> StepState:
        """The Export step's ``state`` (from the project's checklist, which keeps no record of
        workbooks) once this budget's workbook is written: done, and what comes next."""
        if self.written is None or self.budget is None:
            return state
        return replace(
            state,
            done=True,
            found=f"Written: {self.written.name}.",
            next="Adopt this budget on the Budget step ('Adopt…') to track the year against it.",
        )

    def open_folder(self) -> None:
        """Show the folder of the workbook written last in the system's file browser."""
        if self.written is not None:
            QDesktopServices.openUrl(QUrl.fromLocalFile(str(self.written.parent)))
