"""The Track step: an adopted budget against the readings now in the project, month by month.

Choose an adopted budget and the as-of date (the last day with a reading, by default) and
press Track: the engine tracks it on a worker (:func:`desktop.tracking_jobs.run_tracking`,
which makes a fresh year-end outlook, so it takes as long as a budget). Pick the campus, a
utility or a meter to see its months — budget range, actual, variance and its weather, usage
and price effects — drawn against the adopted range, with the year-end outlook beside the
adopted total and the cautions. The report shown can be written as the tracking workbook.

Until a budget is adopted (on the Budget step) there is nothing to track, and the step says so.
"""

from __future__ import annotations

from datetime import date
from functools import partial
from html import escape
from pathlib import Path

from PySide6.QtCore import QDate, Signal
from PySide6.QtWidgets import (
    QComboBox,
    QDateEdit,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QTextBrowser,
    QVBoxLayout,
    QWidget,
)

from desktop.budget_table import item_title
from desktop.choices import ChoiceBox
from desktop.file_dialogs import ask_workbook_path
from desktop.palette import TONES
from desktop.session import Session
from desktop.task_screen import TaskScreen
from desktop.tracking_jobs import (
    Tracked,
    YearEnd,
    default_as_of,
    levels,
    month_table,
    run_tracking,
    tracked,
    workbook_name,
    write_tracking,
    year_end,
)
from desktop.tracking_plot import TrackingPanel
from desktop.tracking_table import TrackingTable
from desktop.work_area import chart_notes_over_table
from engine.export.finance_tables import Budgeted
from engine.project import Project

NOTHING_ADOPTED = (
    "Nothing to track yet: no budget is adopted in this project. Run a budget on the Budget "
    "step and press 'Adopt…' to keep it under a name; then track it here against the readings."
)
NO_PROJECT = "Open a project to track its adopted budgets."
ABOUT_TRACKING = (
    "<b>What tracking shows</b><p>For each month of an adopted budget: its range as adopted, "
    "the metered actual, the variance (actual − budget P50) split into a weather effect and "
    "a usage effect (and a price effect on cost), whether the actual fell outside the range, "
    "and a year-end outlook beside the adopted total. Press F1 for more.</p>"
)


class TrackScreen(TaskScreen):
    """Track an adopted budget of the open project and show the report."""

    budget_asked = Signal()

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.session = session
        self.report: dict | None = None
        self.items: list[Tracked] = []
        self.written: Path | None = None
        self.budgets = QComboBox()
        self.budgets.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.budgets.setToolTip("The budgets adopted in this project (adopt one on Budget).")
        self.budgets.setPlaceholderText("none adopted yet")
        self.as_of = QDateEdit()
        self.as_of.setDisplayFormat("yyyy-MM-dd")
        self.as_of.setCalendarPopup(True)
        self.as_of.setToolTip(
            "The as-of date: readings after this day are left out; the month it falls in is "
            "under way."
        )
        self.track_button = QPushButton("Track")
        self.track_button.setToolTip(
            "Compare the adopted budget with the readings and forecast the year-end (this "
            "budgets the months left, so it takes a while)."
        )
        self.track_button.clicked.connect(self.run)
        self.export_button = QPushButton("Export tracking workbook…")
        self.export_button.clicked.connect(self.ask_export)
        self.go_button = QPushButton("Go to the Budget step")
        self.go_button.clicked.connect(self.budget_asked)
        self.pick = ChoiceBox(())
        self.pick.setMinimumContentsLength(28)
        self.pick.setPlaceholderText("press 'Track' first")
        self.pick.activated.connect(lambda _position: self._show_item())
        self.summary = QLabel()
        self.summary.setWordWrap(True)
        self.summary.setStyleSheet("color: #5a5f66;")
        self.plot = TrackingPanel()
        self.notes = QTextBrowser()
        self.notes.setOpenLinks(False)
        self.table = TrackingTable()
        self._lay_out()
        session.subscribe(self._project_changed)
        self._project_changed(session.project)

    def _lay_out(self) -> None:
        controls = QHBoxLayout()
        controls.addWidget(QLabel("Adopted budget"))
        controls.addWidget(self.budgets)
        controls.addWidget(QLabel("Readings up to"))
        controls.addWidget(self.as_of)
        controls.addWidget(self.track_button)
        controls.addStretch(1)
        controls.addWidget(self.go_button)
        controls.addWidget(self.export_button)
        showing = QHBoxLayout()
        showing.addWidget(QLabel("Show"))
        showing.addWidget(self.pick)
        showing.addWidget(self.summary, 1)
        work = chart_notes_over_table(self.plot, self.notes, self.table, [600, 400], [330, 300])
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addLayout(showing)
        layout.addWidget(work, 1)

    # -- project and adopted budgets --------------------------------------------------------

    def _project_changed(self, project: Project | None) -> None:
        self.runner.cancel()  # its result is dropped: it belongs to the project before
        self.written = None
        self._clear()
        self.list_adopted()
        day = None if project is None else default_as_of(project)
        if day is not None:
            self.as_of.setDate(QDate(day.year, day.month, day.day))

    def list_adopted(self) -> None:
        """List the open project's adopted budgets (after one is adopted on Budget)."""
        project = self.session.project
        chosen = self.budgets.currentText()
        names = [] if project is None else project.adopted_budget_names()
        self.budgets.clear()
        self.budgets.addItems(names)
        if chosen in names:
            self.budgets.setCurrentText(chosen)
        elif names:
            self.budgets.setCurrentIndex(len(names) - 1)  # the newest
        if self.report is None:
            self.plot.show_note(
                NO_PROJECT
                if project is None
                else NOTHING_ADOPTED
                if not names
                else "Choose the adopted budget and the date, then press 'Track'."
            )
        self.go_button.setVisible(project is not None and not names)
        self.set_busy(self.runner.busy)

    def set_busy(self, busy: bool) -> None:
        """Track needs an adopted budget; export a report shown; nothing while working."""
        has_budget = self.budgets.count() > 0
        self.budgets.setEnabled(has_budget and not busy)
        self.as_of.setEnabled(self.session.project is not None and not busy)
        self.track_button.setEnabled(has_budget and not busy)
        self.export_button.setEnabled(self.report is not None and not busy)

    # -- work -------------------------------------------------------------------------------

    def run(self) -> None:
        """Track the chosen adopted budget as of the date shown."""
        project, name = self.session.project, self.budgets.currentText()
        if project is None or not name:
            return
        as_of: date = self.as_of.date().toPython()
        self.start_task(
            partial(run_tracking, project, name, as_of),
            f"tracking '{name}' as of {as_of}",
            partial(self._tracked, project),
        )

    def _tracked(self, project: Project, report: dict) -> None:
        if self.session.project is not project:
            return  # another project was opened meanwhile
        self.written = None
        self.show_report(report)
        self.notice.say(
            f"'{report['budget']}' tracked as of {report['as_of']}. Pick what to show; write "
            "it for finance with 'Export tracking workbook…'.",
            "done",
        )

    def ask_export(self) -> None:
        """Ask where to write the tracking workbook, then write it."""
        if self.report is None:
            return
        path = ask_workbook_path(
            self, "Export tracking workbook", workbook_name(self.report["budget"])
        )
        if path is not None:
            self.export_to(path)

    def export_to(self, path: Path) -> None:
        """Write the report shown to ``path`` (.xlsx) on a worker."""
        if self.report is not None:
            work = partial(write_tracking, path, self.report)
            self.start_task(work, f"writing {path.name}", self._written)

    def _written(self, path: Path) -> None:
        self.written = path.resolve()
        self.notice.say(f"Tracking workbook written: {self.written}.", "done")

    # -- showing ----------------------------------------------------------------------------

    def _clear(self) -> None:
        self.report = None
        self.items = []
        self.pick.clear()
        self.summary.clear()
        self.notes.setHtml(ABOUT_TRACKING)
        self.table.clear()

    def show_report(self, report: dict) -> None:
        """Offer everything ``report`` tracks (the campus first) and show the first."""
        self.report = report
        self.items = tracked(report)
        self.pick.clear()
        for number, item in enumerate(self.items):
            title = item_title(Budgeted(item.scope, item.key, item.meters, [], None))
            self.pick.addItem(title, number)
        self.summary.setText(_summary_words(report))
        day = date.fromisoformat(report["as_of"])
        self.as_of.setDate(QDate(day.year, day.month, day.day))
        self.set_busy(self.runner.busy)
        self._show_item()

    def shown(self) -> Tracked | None:
        """The tracked thing picked."""
        number = self.pick.value()
        return None if number is None else self.items[number]

    def show_pick(self, scope: str, key: str) -> None:
        """Pick the tracked thing ``key`` of ``scope`` ("campus", "utility" or "meter")."""
        number = next(i for i, t in enumerate(self.items) if (t.scope, t.key) == (scope, key))
        self.pick.set_value(number)
        self._show_item()

    def _show_item(self) -> None:
        report, item = self.report, self.shown()
        if report is None or item is None:
            return
        self.plot.show_item(item, levels(report))
        self.table.show_frame(month_table(report, item), report.get("currency"))
        self.notes.setHtml(_notes_html(report, year_end(item)))


def _summary_words(report: dict) -> str:
    months = report["months"]
    return (
        f"'{report['budget']}', adopted on readings up to {report['adopted_as_of']}, for "
        f"{months[0]} to {months[-1]}; tracked on readings up to {report['as_of']}."
    )


def _levels_row(label: str, values: dict[str, float] | None, keys: list[str]) -> str:
    cells = "".join(
        f"<td align='right'>{'–' if values is None else f'{values[key]:,.0f}'}</td>" for key in keys
    )
    return f"<tr><td>{escape(label)}</td>{cells}</tr>"


def _year_end_html(report: dict, end: YearEnd) -> str:
    """The outlook beside the adopted total, energy then cost, with how far it moved."""
    keys = levels(report)
    head = "".join(f"<th align='right'>P{key}</th>" for key in keys)
    rows = [
        _levels_row("adopted total (kWh)", end.adopted, keys),
        _levels_row("year-end outlook (kWh)", end.outlook, keys),
    ]
    if end.adopted_cost is not None:
        money = report.get("currency") or "cost"
        rows += [
            _levels_row(f"adopted total ({money})", end.adopted_cost, keys),
            _levels_row(f"year-end outlook ({money})", end.outlook_cost, keys),
        ]
    parts = [
        "<b>Year-end outlook beside the adopted total</b>",
        f"<table cellspacing='0' cellpadding='2'><tr><th></th>{head}</tr>{''.join(rows)}</table>",
    ]
    if end.outlook is None:
        parts.append("<p>No outlook was made (the cautions below say why).</p>")
    else:
        change = end.change
        side = f"{abs(change):,.0f} kWh{_share(change, end.adopted['50'])} " + (
            "above the adopted P50" if change >= 0 else "below the adopted P50"
        )
        parts.append(
            f"<p>Every month is complete: the year came in at {end.actual_to_date:,.0f} kWh, "
            f"{side}.</p>"
            if end.over
            else f"<p>Actual to date {end.actual_to_date:,.0f} kWh plus a fresh forecast of the "
            f"rest: the outlook's P50 is {side}.</p>"
        )
    return "".join(parts)


def _share(change: float, adopted: float) -> str:
    """The change as a share of the adopted figure, in words (" (2.6 %)")."""
    if adopted <= 0:
        return ""
    percent = abs(change) / adopted * 100
    return f" ({percent:.1f} %)" if percent >= 0.05 else " (under 0.1 %)"


def _notes_html(report: dict, end: YearEnd) -> str:
    """The year-end outlook, the cautions, then how the parts add up."""
    problem = TONES["problem"][1]
    parts = [
        _year_end_html(report, end),
        f"<b style='color:{problem}'>Before you use these numbers</b><ul>",
        *(f"<li>{escape(caution)}</li>" for caution in report["cautions"]),
        "</ul>",
        f"<b>The parts add up</b><p>{escape(report['identity'])}</p>",
    ]
    return "".join(parts)
