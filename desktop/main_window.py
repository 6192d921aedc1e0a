"""The main window: the steps of the job down the side, the current step's screen beside it."""

from __future__ import annotations

from collections.abc import Callable
from html import escape
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (
    QLabel,
    QListWidget,
    QMainWindow,
    QMenu,
    QMessageBox,
    QPushButton,
    QSplitter,
    QStackedWidget,
    QVBoxLayout,
    QWidget,
)

from desktop.budget_screen import BudgetScreen
from desktop.cleaning_screen import CleaningScreen
from desktop.export_screen import ExportScreen
from desktop.file_dialogs import ask_open_path
from desktop.files_screen import FilesScreen
from desktop.help_pages import ReadingDialog, about_text, help_text
from desktop.meters_dialog import MetersDialog
from desktop.models_screen import ModelsScreen
from desktop.patterns_screen import PatternsScreen
from desktop.preferences import RecentProjects, stored_settings
from desktop.project_changes import CALENDAR, Reversible
from desktop.recent_list import RecentList
from desktop.session import Session
from desktop.track_screen import TrackScreen
from desktop.undo import undo_for
from engine.errors import ProjectError
from engine.project import Project
from engine.steps.budgeting import ProjectBudget
from engine.steps.checklist import checklist
from engine.steps.labels import meter_labels
from engine.words import counted

STEPS = (
    ("Files", "Bring in meter exports, bills and weather; check what was understood."),
    ("Cleaning", "Review gaps, spikes and stuck meters; apply or undo fixes."),
    ("Patterns", "Typical days, seasons, base load and temperature response."),
    ("Models", "Fit explainable models and compare their backtests."),
    ("Budget", "Monthly totals with P10/P50/P90 and cost."),
    ("Export", "Write the workbook for finance."),
    ("Track", "An adopted budget against the actuals, month by month, and the year-end."),
)
STEP_NAMES = tuple(name for name, _ in STEPS)
APP_NAME = "Loadledger"
SIDE_WIDTH = 170
PROJECT_FILTER = f"Loadledger projects (*{Project.EXTENSION})"


class MainWindow(QMainWindow):
    """Holds the session (the open project) and one screen per step."""

    def __init__(self) -> None:
        super().__init__()
        self.session = Session()
        self.settings = stored_settings()
        self.recent = RecentProjects(self.settings)
        self.help_dialog = ReadingDialog(self)
        self.about_dialog = ReadingDialog(self)
        self.about_dialog.resize(540, 330)
        self.resize(1280, 800)
        self.files_screen = FilesScreen(self.session)
        self.cleaning_screen = CleaningScreen(self.session)
        self.patterns_screen = PatternsScreen(self.session)
        self.models_screen = ModelsScreen(self.session)
        self.budget_screen = BudgetScreen(self.session)
        self.export_screen = ExportScreen()
        self.track_screen = TrackScreen(self.session)
        self.export_screen.labels_of = lambda: self.project and meter_labels(self.project)
        self.undo = undo_for(self.session)
        self.undo.changed.connect(self._undone_or_redone)
        self.undo.problem.connect(lambda words: QMessageBox.warning(self, "Undo", words))
        self.meters_dialog: MetersDialog | None = None
        self.cleaning_screen.log_changed.connect(self.patterns_screen.meter_cleaned)
        self.cleaning_screen.log_changed.connect(lambda _meter: self.show_guide())
        self.budget_screen.budget_changed.connect(self._budget_to_export)
        self.budget_screen.budget_changed.connect(self._budget_changed)
        self.export_screen.budget_asked.connect(lambda: self.show_step("Budget"))
        self.export_screen.workbook_written.connect(lambda _path: self.show_guide())
        self.track_screen.budget_asked.connect(lambda: self.show_step("Budget"))
        self.budget_screen.adopted_budget.connect(lambda _name: self.track_screen.list_adopted())
        self.budget_screen.adopted_budget.connect(lambda _name: self.show_guide())
        self.models_screen.accepted.connect(lambda _meter: self.show_step("Budget"))
        self.models_screen.model_kept.connect(lambda _meter: self.show_guide())
        built = {
            "Files": self.files_screen,
            "Cleaning": self.cleaning_screen,
            "Patterns": self.patterns_screen,
            "Models": self.models_screen,
            "Budget": self.budget_screen,
            "Export": self.export_screen,
            "Track": self.track_screen,
        }
        self.steps = QListWidget()
        self.steps.addItems(list(STEP_NAMES))
        for row, (_, purpose) in enumerate(STEPS):
            self.steps.item(row).setToolTip(purpose)
        self.screens = QStackedWidget()
        for name in STEP_NAMES:
            self.screens.addWidget(built[name])
        self.steps.currentRowChanged.connect(self.screens.setCurrentIndex)
        self.steps.setCurrentRow(0)
        splitter = QSplitter(Qt.Orientation.Horizontal)
        splitter.addWidget(self._side_column())
        self.steps.currentRowChanged.connect(lambda _row: self.show_guide())
        splitter.addWidget(self.screens)
        splitter.setStretchFactor(0, 0)
        splitter.setStretchFactor(1, 1)
        splitter.setChildrenCollapsible(False)
        splitter.setSizes([SIDE_WIDTH, self.width()])
        self.setCentralWidget(splitter)
        self.recent_menu = QMenu("Open &recent", self)
        self.recent_menu.setToolTipsVisible(True)
        self.recent_menu.aboutToShow.connect(self.fill_recent_menu)
        self._build_menus()
        self.session.subscribe(self._project_changed)
        self._project_changed(None)
        self._restore_layout()

    def _side_column(self) -> QWidget:
        """The steps, with the recent projects below them while no project is open."""
        self.recent_list = RecentList()
        self.recent_list.chosen.connect(self.open_recent)
        column = QWidget()
        column.setFixedWidth(SIDE_WIDTH)
        layout = QVBoxLayout(column)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.steps, 1)
        self.guide = QLabel()
        self.guide.setWordWrap(True)
        self.guide.setStyleSheet("color: #3d4148; padding: 4px;")
        self.next_button = QPushButton("Next step ›")
        self.next_button.clicked.connect(self.next_step)
        layout.addWidget(self.guide)
        layout.addWidget(self.next_button)
        layout.addWidget(self.recent_list, 1)
        return column

    def show_guide(self) -> None:
        """Mark the steps done so far and say what the current step found and what to do."""
        states = checklist(self.session.project)
        states[STEP_NAMES.index("Export")] = self.export_screen.step_state(
            states[STEP_NAMES.index("Export")]
        )
        for row, state in enumerate(states):
            self.steps.item(row).setText(f"{'✓ ' if state.done else ''}{state.step}")
        current = states[max(self.steps.currentRow(), 0)]
        words = f"<b>Next:</b> {escape(current.next, quote=False)}"
        if current.found:
            words = f"{escape(current.found, quote=False)}<br>{words}"
        self.guide.setText(words)
        self.next_button.setEnabled(self.steps.currentRow() < len(STEP_NAMES) - 1)

    def next_step(self) -> None:
        """Go on to the step after the current one."""
        self.steps.setCurrentRow(min(self.steps.currentRow() + 1, len(STEP_NAMES) - 1))

    def _build_menus(self) -> None:
        """The Project, Steps and Help menus. Shortcuts are the platform's standard keys, so
        each system gets the keys its people know."""
        keys = QKeySequence.StandardKey
        project = self.menuBar().addMenu("&Project")
        self._add(project, "&New from files…", self._new_from_files, keys.New)
        self._add(project, "&Open…", self._ask_open, keys.Open)
        project.addMenu(self.recent_menu)
        self.close_action = self._add(project, "&Close project", self.close_project, keys.Close)
        project.addSeparator()
        self.meters_action = self._add(project, "&Meters, units and calendar…", self.show_meters)
        project.addSeparator()
        # Windows (and Qt's generic platform) bind no key to Quit: Ctrl+Q there, common practice
        self._add(project, "&Quit", self.close, keys.Quit, fallback="Ctrl+Q")
        edit = self.menuBar().addMenu("&Edit")
        for action, key in (
            (self.undo.stack.createUndoAction(self, "&Undo"), keys.Undo),
            (self.undo.stack.createRedoAction(self, "&Redo"), keys.Redo),
        ):
            action.setShortcuts(QKeySequence.keyBindings(key))
            edit.addAction(action)
        steps = self.menuBar().addMenu("&Steps")
        for number, name in enumerate(STEP_NAMES, start=1):
            go = self._add(steps, f"&{number} {name}", lambda _=False, n=name: self.show_step(n))
            go.setShortcut(QKeySequence(f"Ctrl+{number}"))
        help_menu = self.menuBar().addMenu("&Help")
        self._add(help_menu, "Help on this &step", self.show_help, keys.HelpContents)
        self._add(help_menu, f"&About {APP_NAME}", self.show_about)

    def _add(
        self,
        menu: QMenu,
        words: str,
        slot: Callable[[], object],
        key: QKeySequence.StandardKey | None = None,
        fallback: str = "",
    ) -> QAction:
        """Add an action to ``menu`` with the platform's keys for ``key`` (else ``fallback``)."""
        action = menu.addAction(words, slot)
        if key is not None:
            bound = QKeySequence.keyBindings(key)
            action.setShortcuts(bound or [QKeySequence(fallback)])
        return action

    @property
    def project(self) -> Project | None:
        """The open project, if any."""
        return self.session.project

    def show_step(self, name: str) -> None:
        """Bring the screen of step ``name`` (one of :data:`STEP_NAMES`) forward."""
        self.steps.setCurrentRow(STEP_NAMES.index(name))

    def show_help(self) -> None:
        """Show the help page of the step on screen."""
        step = STEP_NAMES[self.steps.currentRow()]
        self.help_dialog.show_page(f"Help: {step}", help_text(step))

    def show_about(self) -> None:
        """Show the version and what the figures may and may not be used for."""
        self.about_dialog.show_page(f"About {APP_NAME}", about_text())

    def _recent_paths(self) -> tuple[list[Path], str]:
        """The recent projects, newest first, and a word on any taken off for being gone."""
        gone = self.recent.drop_missing()
        note = ""
        if gone:
            note = "No longer found, taken off the list: " + ", ".join(p.name for p in gone)
        return self.recent.paths(), note

    def fill_recent_menu(self) -> None:
        """List the recent projects in the Project menu (newest first)."""
        self.recent_menu.clear()
        paths, note = self._recent_paths()
        if note:
            self.recent_menu.addAction(note).setEnabled(False)
            self.recent_menu.addSeparator()
        for number, path in enumerate(paths, start=1):
            action = self.recent_menu.addAction(
                f"&{number} {path.name}", lambda _=False, p=path: self.open_recent(p)
            )
            action.setToolTip(str(path))
            action.setStatusTip(str(path))
        if not paths:
            self.recent_menu.addAction("No projects opened yet").setEnabled(False)

    def open_recent(self, path: Path) -> bool:
        """Open a project from the recent list; one that has gone is taken off it."""
        if not path.is_file():
            self.recent.forget(path)
            QMessageBox.warning(
                self,
                "Project not found",
                f"{path} is no longer there, so it was taken off the recent projects.",
            )
            return False
        return self.open_project(path)

    def close_project(self) -> None:
        """Stop any running work and close the open project (the window stays)."""
        for screen in self.screens_with_work():
            screen.runner.shutdown()
        self.session.close()

    def open_project(self, path: str | Path) -> bool:
        """Open a project file; report problems in a message box, never as a traceback."""
        try:
            project = Project.open(path)
        except ProjectError as error:
            QMessageBox.warning(self, "Cannot open project", str(error))
            return False
        self.session.open(project)
        return True

    def show_meters(self) -> None:
        """Show the open project's meter names, units and calendar (changes can be undone)."""
        if self.meters_dialog is None:
            self.meters_dialog = MetersDialog(self.session, self)
        self.meters_dialog.show()
        self.meters_dialog.raise_()

    def _undone_or_redone(self, change: Reversible) -> None:
        """The screens that are not about one meter follow an undo or redo; the step marks
        and the status line too."""
        if change.kind == CALENDAR and self.project is not None:
            self.files_screen.show_project_holidays(self.project)
        self.show_guide()

    def _budget_to_export(self, budget: ProjectBudget | None) -> None:
        project = self.session.project
        self.export_screen.set_budget(budget, None if project is None else project.path.stem)

    def _project_changed(self, project: Project | None) -> None:
        self.show_guide()
        self.close_action.setEnabled(project is not None)
        self.meters_action.setEnabled(project is not None)
        self.setWindowFilePath("" if project is None else str(project.path))
        self.recent_list.setVisible(project is None)
        if project is None:
            self.setWindowTitle(APP_NAME)
            self.statusBar().showMessage("No project open")
            self.recent_list.show_paths(*self._recent_paths())
            return
        self.setWindowTitle(f"{project.path.stem} — {APP_NAME}")
        self.recent.remember(project.path)
        meters = len(project.meter_names())
        words = f"{project.path.name}: {counted(meters, 'meter')}, site zone {project.timezone}"
        if project.upgrade_note:
            words += f" — {project.upgrade_note}"
        self.statusBar().showMessage(words)

    def _budget_changed(self, budget) -> None:
        """A budget may have fitted models for meters that had none: show them (unless the
        Models step is busy)."""
        if budget is not None and not self.models_screen.runner.busy:
            self.models_screen.refresh()
        self.show_guide()

    def _new_from_files(self) -> None:
        self.show_step("Files")
        self.files_screen.choose_files()

    def _ask_open(self) -> None:
        path = ask_open_path(self, "projects", "Open project", PROJECT_FILTER)
        if path is not None:
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
            self.track_screen,
        )

    def _restore_layout(self) -> None:
        """Put the window back where and as large as it was when last closed."""
        geometry = self.settings.value("window/geometry")
        if geometry is not None:
            self.restoreGeometry(geometry)
        state = self.settings.value("window/state")
        if state is not None:
            self.restoreState(state)

    def closeEvent(self, event) -> None:
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState())
        self.close_project()
        super().closeEvent(event)
