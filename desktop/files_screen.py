"""The Files screen: choose files, see what the importer understood, correct it, then store.

Files are read on a worker as soon as they are chosen and again whenever their settings change.
Nothing is stored until "Create project…" or "Add to the open project".
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (
    QAbstractItemView,
    QFileDialog,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QSplitter,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.calendar_proposal_dialog import CalendarProposalDialog
from desktop.choices import ChoiceBox, ZoneBox
from desktop.holiday_picker import HolidayPicker
from desktop.import_plan import (
    ImportPlan,
    PlannedFile,
    add_to_project,
    build_project,
    project_path,
    read_jobs,
    stored_summary,
)
from desktop.notice import Notice
from desktop.reading_form import ReadingForm
from desktop.session import Session
from desktop.task_bar import TaskBar
from desktop.task_runner import Job, TaskRunner
from desktop.understood_view import KIND_WORDS, UnderstoodView
from desktop.workers import Work
from engine.calendar_proposal import CalendarProposal
from engine.errors import InputError
from engine.project import Project
from engine.steps import calendar_edit
from engine.steps.calendar_edit import current as current_calendar
from engine.words import counted

KINDS = (("decide from the contents", None), *((words, kind) for kind, words in KIND_WORDS.items()))
FILE_FILTER = "Spreadsheets and text files (*.xlsx *.xlsm *.xls *.csv *.txt *.tsv);;All files (*)"
PROBLEM_INK = QColor("#9b3b16")
READING = "reading files"
PROPOSING = "finding a campus calendar in the readings"


def _state_words(planned: PlannedFile, reading: bool) -> str:
    if planned.state == "problem":
        if planned.read_as is None:
            return "cannot be read"
        return f"cannot be read as {KIND_WORDS[planned.read_as]}"
    if planned.state == "waiting":
        return "reading…" if reading else "not read yet"
    report = planned.report
    if report["kind"] == "meters":
        count = len(report["meters"])
        return f"read: {counted(count, 'meter')}"
    if report["kind"] == "bills":
        return f"read: {report['periods']} bills"
    if report["kind"] == "calendar":
        count = len(report["periods"])
        return f"read: {counted(count, 'campus period')}"
    return f"read: {report['count']:,} temperatures"


class FilesScreen(QWidget):
    """Chooses and reads files, shows what was understood, and stores them when asked."""

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.session = session
        self.plan = ImportPlan()
        self.add_button = QPushButton("Add files…")
        self.add_button.clicked.connect(self.choose_files)
        self.remove_button = QPushButton("Remove file")
        self.remove_button.clicked.connect(self._remove_selected)
        self.site_zone = ZoneBox("choose the site's time zone")
        self.site_zone.zone_chosen.connect(self._site_zone_chosen)
        self.holidays = HolidayPicker()
        self.holidays.setToolTip(
            "The public holidays a campus calendar file takes (closed days in profiles and "
            "models); the command line's --holidays."
        )
        self.holidays.chosen.connect(self._holidays_chosen)
        self.propose_button = QPushButton("Propose from the readings…")
        self.propose_button.setToolTip(
            "For a project without a campus calendar: the breaks, sessions and public holidays "
            "its readings show, each with its evidence, to keep or edit "
            "(the command line's calendar --propose)."
        )
        self.propose_button.clicked.connect(self.propose_calendar)
        self.proposal_dialog: CalendarProposalDialog | None = None
        self.file_table = QTableWidget(0, 3)
        self.file_table.setHorizontalHeaderLabels(("File", "What it is", "State"))
        self.file_table.verticalHeader().hide()
        self.file_table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.file_table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.file_table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        header = self.file_table.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(1, QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(2, QHeaderView.ResizeMode.ResizeToContents)
        self.file_table.itemSelectionChanged.connect(self._selection_changed)
        self.form = ReadingForm()
        self.form.read_again.connect(self._read_selected_again)
        self.view = UnderstoodView()
        self.notice = Notice()
        self.task_bar = TaskBar()
        self.runner = TaskRunner(self, self.notice, self.task_bar)
        self.runner.started.connect(self._plan_changed)
        self.runner.ended.connect(self._plan_changed)
        self.store_hint = QLabel()
        self.store_hint.setWordWrap(True)
        self.add_to_project_button = QPushButton("Add to the open project")
        self.add_to_project_button.clicked.connect(self.add_to_open_project)
        self.create_button = QPushButton("Create project…")
        self.create_button.clicked.connect(self._ask_create)
        self._lay_out()
        self.setAcceptDrops(True)
        self.plan.subscribe(self._plan_changed)
        session.subscribe(self._project_changed)
        self._project_changed(session.project)

    def _lay_out(self) -> None:
        top = QHBoxLayout()
        top.addWidget(self.add_button)
        top.addWidget(self.remove_button)
        top.addWidget(QLabel("or drop files here"))
        top.addStretch(1)
        top.addWidget(QLabel("Site time zone"))
        top.addWidget(self.site_zone)
        calendar = QHBoxLayout()
        calendar.addWidget(QLabel("Public holidays of the campus calendar"))
        calendar.addWidget(self.holidays)
        calendar.addWidget(self.propose_button)
        calendar.addStretch(1)
        details = QSplitter(Qt.Orientation.Horizontal)
        details.addWidget(self.form)
        details.addWidget(self.view)
        details.setStretchFactor(1, 1)
        middle = QSplitter(Qt.Orientation.Vertical)
        middle.addWidget(self.file_table)
        middle.addWidget(details)
        middle.setStretchFactor(1, 3)
        bottom = QHBoxLayout()
        bottom.addWidget(self.task_bar, 2)
        bottom.addWidget(self.store_hint, 2)
        bottom.addWidget(self.add_to_project_button)
        bottom.addWidget(self.create_button)
        layout = QVBoxLayout(self)
        layout.addLayout(top)
        layout.addLayout(calendar)
        layout.addWidget(self.notice)
        layout.addWidget(middle, 1)
        layout.addLayout(bottom)

    # -- choosing files ---------------------------------------------------------------------

    def choose_files(self) -> None:
        """Ask for files with the system's dialog and add them."""
        paths, _ = QFileDialog.getOpenFileNames(self, "Choose files to import", "", FILE_FILTER)
        if paths:
            self.add_files(paths)

    def add_files(self, paths: list[str | Path]) -> None:
        """Add files (folders and missing paths are named and left out) and read them."""
        files = [Path(p) for p in paths if Path(p).is_file()]
        added = self.plan.add(files)
        if added:
            self._select(added[0])
            self._request_read()
        skipped = [Path(p).name for p in paths if not Path(p).is_file()]
        if skipped:
            self.notice.say(
                f"Not a file, left out: {', '.join(skipped)}. Choose the files inside folders.",
                "info",
            )

    def dragEnterEvent(self, event) -> None:
        if event.mimeData().hasUrls():
            event.acceptProposedAction()

    def dropEvent(self, event) -> None:
        paths = [url.toLocalFile() for url in event.mimeData().urls() if url.isLocalFile()]
        if paths:
            event.acceptProposedAction()
            self.add_files(paths)

    def _remove_selected(self) -> None:
        planned = self.selected()
        if planned is not None:
            self.plan.remove(planned.path)

    def _kind_chosen(self, path: Path, box: ChoiceBox, _position: int) -> None:
        self.plan.set_kind(path, box.value())
        self._request_read()

    def _site_zone_chosen(self, zone: str | None) -> None:
        try:
            self.plan.set_site_timezone(zone)
        except InputError as error:
            self.notice.say(error.message, "problem")
            self.site_zone.set_zone(self.plan.site_timezone)
            return
        self._request_read()

    def _holidays_chosen(self, code: str | None) -> None:
        self.plan.set_holidays(code)
        self._request_read()

    def set_site_timezone(self, zone: str | None) -> None:
        """Choose the site's zone as the user would in the box."""
        self.site_zone.set_zone(zone)
        self._site_zone_chosen(zone)

    def _read_selected_again(self) -> None:
        planned = self.selected()
        if planned is None:
            return
        self.plan.set_options(planned.path, self.form.options())
        self._request_read()

    # -- reading ----------------------------------------------------------------------------

    def _request_read(self) -> None:
        """Read the files waiting to be read, once the work running now has ended."""
        self.runner.after(self._read_pending)

    def _read_pending(self) -> None:
        jobs = self.plan.pending()
        if jobs:
            self._run(partial(read_jobs, jobs), READING, self.plan.record)

    def _run(self, work: Work, doing: str, done: Callable) -> None:
        stopped = partial(self.notice.say, f"Stopped {doing}; nothing was stored.", "info")
        self.runner.start(Job(work, doing, done, stopped=stopped))

    # -- a calendar from the readings -------------------------------------------------------

    def propose_calendar(self) -> None:
        """Find a campus calendar in the open project's readings on a worker, then offer it."""
        project = self.session.project
        if project is None or self.runner.busy:
            return
        self._run(lambda _progress: calendar_edit.proposal(project), PROPOSING, self._offer)

    def _offer(self, proposal: CalendarProposal) -> None:
        project = self.session.project
        if project is None:
            return
        dialog = CalendarProposalDialog(proposal, current_calendar(project), self)
        dialog.accepted.connect(lambda: self._keep_calendar(dialog))
        self.proposal_dialog = dialog
        dialog.open()

    def _keep_calendar(self, dialog: CalendarProposalDialog) -> None:
        project = self.session.project
        if project is None:
            return
        calendar = dialog.calendar()
        with project.transaction():
            calendar_edit.store(project, calendar)
        holidays = f"{calendar.country} public holidays" if calendar.country else "no holidays"
        self.notice.say(
            f"Campus calendar stored: {counted(len(calendar.periods), 'period')}, {holidays}.",
            "done",
        )
        self.session.open(project)  # the other steps label their days again
        self.holidays.choose(calendar.country, calendar.subdivision)

    # -- storing ----------------------------------------------------------------------------

    def _ask_create(self) -> None:
        path, _ = QFileDialog.getSaveFileName(
            self, "Create project", "", f"Loadledger projects (*{Project.EXTENSION})"
        )
        if path:
            self.create_project_at(path)

    def create_project_at(self, path: str | Path) -> None:
        """Store every file in a new project at ``path`` (the extension is added if missing)."""
        problem = self._storing_problem(None)
        if problem:
            self.notice.say(problem, "problem")
            return
        target = project_path(path)
        bundles = self.plan.bundles()
        zone = self.plan.site_timezone
        stored = [planned.path for planned in self.plan.files]
        self._run(
            partial(build_project, target, zone, bundles),
            "creating the project",
            partial(self._stored, stored, stored_summary(bundles), "Created"),
        )

    def add_to_open_project(self) -> None:
        """Store every file in the open project, in one save."""
        project = self.session.project
        if project is None:
            self.notice.say("No project is open: open one, or create a new one.", "problem")
            return
        problem = self._storing_problem(project.timezone)
        if problem:
            self.notice.say(problem, "problem")
            return
        bundles = self.plan.bundles()
        stored = [planned.path for planned in self.plan.files]
        self._run(
            partial(add_to_project, project, bundles),
            "adding the files to the project",
            partial(self._stored, stored, stored_summary(bundles), "Added to"),
        )

    def _storing_problem(self, project_timezone: str | None) -> str | None:
        return self.runner.refusal() or self.plan.storing_problem(project_timezone)

    def _stored(self, paths: list[Path], what: str, verb: str, project: Project) -> None:
        self.session.open(project)
        self.plan.discard(paths)
        self.notice.say(f"{verb} {project.path.name}: {what} stored.", "done")

    # -- showing ----------------------------------------------------------------------------

    def _project_changed(self, project: Project | None) -> None:
        if project is not None and self.plan.site_timezone is None:
            self.set_site_timezone(project.timezone)
        if project is not None and self.plan.holidays is None:
            self.show_project_holidays(project)
        self._update_store_buttons()

    def show_project_holidays(self, project: Project) -> None:
        """Start from the public holidays the open project's calendar already takes."""
        try:
            calendar = current_calendar(project)
        except InputError as error:
            self.notice.say(error.message, "problem")
            return
        self.holidays.choose(calendar.country, calendar.subdivision)

    def selected(self) -> PlannedFile | None:
        """The file whose settings and report are shown."""
        rows = self.file_table.selectionModel().selectedRows()
        if not rows or rows[0].row() >= len(self.plan.files):
            return None
        return self.plan.files[rows[0].row()]

    def _select(self, path: Path) -> None:
        paths = [planned.path for planned in self.plan.files]
        if path in paths:
            self.file_table.selectRow(paths.index(path))

    def _plan_changed(self) -> None:
        self._sync_table()
        self._show_selected()
        self._update_store_buttons()

    def _sync_table(self) -> None:
        files = self.plan.files
        shown = [
            self.file_table.item(row, 0).data(Qt.ItemDataRole.UserRole)
            for row in range(self.file_table.rowCount())
        ]
        if shown != [planned.path for planned in files]:
            kept = self.selected_path()
            self.file_table.setRowCount(0)
            self.file_table.setRowCount(len(files))
            for row, planned in enumerate(files):
                name = QTableWidgetItem(planned.path.name)
                name.setData(Qt.ItemDataRole.UserRole, planned.path)
                name.setToolTip(str(planned.path))
                self.file_table.setItem(row, 0, name)
                box = ChoiceBox(KINDS)
                box.set_value(planned.kind)
                box.activated.connect(partial(self._kind_chosen, planned.path, box))
                self.file_table.setCellWidget(row, 1, box)
                self.file_table.setItem(row, 2, QTableWidgetItem())
            if kept is not None:
                self._select(kept)
            elif files:
                self.file_table.selectRow(0)
        task = self.runner.task
        reading = task is not None and task.doing == READING
        for row, planned in enumerate(files):
            state = self.file_table.item(row, 2)
            state.setText(_state_words(planned, reading))
            state.setForeground(QBrush(PROBLEM_INK) if planned.state == "problem" else QBrush())
            state.setToolTip(planned.problem or "")

    def selected_path(self) -> Path | None:
        planned = self.selected()
        return None if planned is None else planned.path

    def _selection_changed(self) -> None:
        planned = self.selected()
        if planned is None:
            self.form.setEnabled(False)
        else:
            self.form.show_options(planned.options)
        self._show_selected()

    def _show_selected(self) -> None:
        planned = self.selected()
        self.form.ask_for_date_order(planned is not None and "day-first" in (planned.problem or ""))
        if planned is None:
            self.view.show_nothing("Add files to see what the importer understands of them.")
        elif planned.problem is not None:
            told = planned.kind is not None
            self.view.show_problem(planned.path.name, planned.problem, planned.read_as, told)
        elif planned.report is not None:
            self.view.show_report(planned.report)
        else:
            self.view.show_nothing(
                f"{planned.path.name} has not been read with these settings yet."
            )

    def _update_store_buttons(self) -> None:
        busy = self.runner.busy
        project = self.session.project
        for_new = self.plan.storing_problem(None)
        for_open = (
            "No project is open."
            if project is None
            else self.plan.storing_problem(project.timezone)
        )
        self.create_button.setEnabled(not busy and for_new is None)
        self.add_to_project_button.setEnabled(not busy and for_open is None)
        self.propose_button.setEnabled(not busy and project is not None)
        self.store_hint.setText("" if busy else (for_new or ""))
