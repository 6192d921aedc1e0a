"""The main window: the steps of the job down the side, the current step's screen beside it."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QFileDialog,
    QListWidget,
    QMainWindow,
    QMessageBox,
    QSplitter,
    QStackedWidget,
)

from desktop.budget_screen import BudgetScreen
from desktop.cleaning_screen import CleaningScreen
from desktop.export_screen import ExportScreen
from desktop.files_screen import FilesScreen
from desktop.models_screen import ModelsScreen
from desktop.patterns_screen import PatternsScreen
from desktop.session import Session
from engine.errors import ProjectError
from engine.project import Project

STEPS = (
    ("Files", "Bring in meter exports, bills and weather; check what was understood."),
    ("Cleaning", "Review gaps, spikes and stuck meters; apply or undo fixes."),
    ("Patterns", "Typical days, seasons, base load and temperature response."),
    ("Models", "Fit explainable models and compare their backtests."),
    ("Budget", "Monthly totals with P10/P50/P90 and cost."),
    ("Export", "Write the workbook for finance."),
)
STEP_NAMES = tuple(name for name, _ in STEPS)


class MainWindow(QMainWindow):
    """Holds the session (the open project) and one screen per step."""

    def __init__(self) -> None:
        super().__init__()
        self.session = Session()
        self.setWindowTitle("Loadledger")
        self.resize(1280, 800)
        self.files_screen = FilesScreen(self.session)
        self.cleaning_screen = CleaningScreen(self.session)
        self.patterns_screen = PatternsScreen(self.session)
        self.models_screen = ModelsScreen(self.session)
        self.budget_screen = BudgetScreen(self.session)
        self.export_screen = ExportScreen()
        self.cleaning_screen.log_changed.connect(self.patterns_screen.meter_cleaned)
        self.budget_screen.budget_changed.connect(self.export_screen.set_budget)
        self.budget_screen.budget_changed.connect(self._budget_changed)
        self.export_screen.budget_asked.connect(lambda: self.show_step("Budget"))
        built = {
            "Files": self.files_screen,
            "Cleaning": self.cleaning_screen,
            "Patterns": self.patterns_screen,
            "Models": self.models_screen,
            "Budget": self.budget_screen,
            "Export": self.export_screen,
        }
        self.steps = QListWidget()
        self.steps.addItems(list(STEP_NAMES))
        self.steps.setFixedWidth(170)
        for row, (_, purpose) in enumerate(STEPS):
            self.steps.item(row).setToolTip(purpose)
        self.screens = QStackedWidget()
        for name in STEP_NAMES:
            self.screens.addWidget(built[name])
        self.steps.currentRowChanged.connect(self.screens.setCurrentIndex)
        self.steps.setCurrentRow(0)
        splitter = QSplitter(Qt.Orientation.Horizontal)
        splitter.addWidget(self.steps)
        splitter.addWidget(self.screens)
        splitter.setStretchFactor(0, 0)
        splitter.setStretchFactor(1, 1)
        splitter.setChildrenCollapsible(False)
        splitter.setSizes([self.steps.width(), self.width()])
        self.setCentralWidget(splitter)
        menu = self.menuBar().addMenu("&Project")
        menu.addAction("&New from files…", self._new_from_files)
        menu.addAction("&Open…", self._ask_open)
        menu.addSeparator()
        menu.addAction("&Quit", self.close)
        self.session.subscribe(self._project_changed)
        self._project_changed(None)

    @property
    def project(self) -> Project | None:
        """The open project, if any."""
        return self.session.project

    def show_step(self, name: str) -> None:
        """Bring the screen of step ``name`` (one of :data:`STEP_NAMES`) forward."""
        self.steps.setCurrentRow(STEP_NAMES.index(name))

    def open_project(self, path: str | Path) -> bool:
        """Open a project file; report problems in a message box, never as a traceback."""
        try:
            project = Project.open(path)
        except ProjectError as error:
            QMessageBox.warning(self, "Cannot open project", str(error))
            return False
        self.session.open(project)
        return True

    def _project_changed(self, project: Project | None) -> None:
        if project is None:
            self.statusBar().showMessage("No project open")
            return
        meters = len(project.meter_names())
        words = f"{project.path.name}: {meters} meter(s), site zone {project.timezone}"
        if project.upgrade_note:
            words += f" — {project.upgrade_note}"
        self.statusBar().showMessage(words)

    def _budget_changed(self, budget) -> None:
        """A budget may have fitted models for meters that had none: show them (unless the
        Models step is busy)."""
        if budget is not None and self.models_screen.task is None:
            self.models_screen.refresh()

    def _new_from_files(self) -> None:
        self.show_step("Files")
        self.files_screen.choose_files()

    def _ask_open(self) -> None:
        path, _ = QFileDialog.getOpenFileName(
            self, "Open project", "", f"Loadledger projects (*{Project.EXTENSION})"
        )
        if path:
            self.open_project(path)

    def screens_with_work(self) -> tuple:
        """Every screen that may run engine work on a worker."""
        return (
            self.files_screen,
            self.cleaning_screen,
            self.patterns_screen,
            self.models_screen,
            self.budget_screen,
            self.export_screen,
        )

    def closeEvent(self, event) -> None:
        for screen in self.screens_with_work():
            screen.shutdown()
        self.session.close()
        super().closeEvent(event)
