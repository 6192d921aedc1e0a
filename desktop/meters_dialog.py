"""Meters, units and calendar of the open project: display names, utilities, the units meters
were read in, the temperature unit, and the campus calendar's public holidays.

Every change goes through the window's undo stack (:mod:`desktop.undo`) as an engine call
that makes it and one that takes it back; the dialog shows the project afresh after each.
"""

from __future__ import annotations

from functools import partial

from PySide6.QtCore import Qt, QTimer
from PySide6.QtWidgets import (
    QAbstractItemView,
    QDialog,
    QDialogButtonBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.choices import ChoiceBox
from desktop.holiday_picker import HolidayPicker
from desktop.notice import Notice
from desktop.project_changes import (
    Reversible,
    account_change,
    calendar_change,
    label_change,
    temperature_change,
)
from desktop.session import Session
from desktop.undo import undo_for
from engine.errors import InputError
from engine.meter_labels import READ_UNITS, TEMPERATURE_UNITS
from engine.meters import UTILITIES, utility_words
from engine.project import Project
from engine.steps import calendar_edit
from engine.steps.account_membership import account_names, meter_accounts
from engine.steps.labels import meter_labels, temperature_unit

HEADERS = ("Column in the meter file", "Shown as", "Utility", "Read in", "Part of bill account")
NAME, SHOWN, UTILITY, READ_IN, ACCOUNT = range(len(HEADERS))
#: The account box's entry for a meter that belongs to no bill account.
NO_ACCOUNT = "none"
EXPLANATION = (
    "Figures are always worked out in kWh and °C under each meter's column name; these "
    "settings only change how meters are named and which units are shown beside kWh "
    "(gas volumes at 1,036 Btu per cubic foot). The utility decides the roll-up a meter "
    "joins and the bill prices that cost it. A meter that is part of a bill account measures "
    "part of the same supply: budgets then count the meter, not the account's bills as well. "
    "Edit ▸ Undo takes any change back."
)


class MetersDialog(QDialog):
    """The open project's meter names, utilities and units, temperature unit and holidays."""

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Meters, units and calendar")
        self.session = session
        self.undo = undo_for(session)
        self._filling = False
        self.table = QTableWidget(0, len(HEADERS))
        self.table.setHorizontalHeaderLabels(HEADERS)
        self.table.verticalHeader().hide()
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(SHOWN, QHeaderView.ResizeMode.Stretch)
        self.table.itemChanged.connect(self._name_edited)
        self.temperature = ChoiceBox([(unit, unit) for unit in TEMPERATURE_UNITS])
        self.temperature.activated.connect(self._temperature_chosen)
        self.holidays = HolidayPicker()
        self.holidays.chosen.connect(self._holidays_chosen)
        self.copy_forward = QPushButton("Copy the last year's periods forward")
        self.copy_forward.setToolTip(
            "Add the campus calendar's last year of terms and breaks again a year later, on "
            "the same weekdays (years in their names move on too)."
        )
        self.copy_forward.clicked.connect(self._copy_forward)
        self.periods = QLabel()
        self.notice = Notice()
        self._lay_out()
        session.subscribe(self.fill)
        self.undo.changed.connect(lambda _change: self._fill_later())
        self.fill(session.project)

    def _lay_out(self) -> None:
        explanation = QLabel(EXPLANATION)
        explanation.setWordWrap(True)
        explanation.setStyleSheet("color: #5a5f66;")
        units = QHBoxLayout()
        units.addWidget(QLabel("Temperatures shown in"))
        units.addWidget(self.temperature)
        units.addStretch(1)
        calendar = QHBoxLayout()
        calendar.addWidget(QLabel("Public holidays"))
        calendar.addWidget(self.holidays)
        calendar.addStretch(1)
        periods = QHBoxLayout()
        periods.addWidget(self.periods, 1)
        periods.addWidget(self.copy_forward)
        close = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        close.rejected.connect(self.close)
        layout = QVBoxLayout(self)
        layout.addWidget(QLabel("<b>Meters</b>"))
        layout.addWidget(explanation)
        layout.addWidget(self.table, 1)
        layout.addLayout(units)
        layout.addWidget(QLabel("<b>Campus calendar</b>"))
        layout.addLayout(calendar)
        layout.addLayout(periods)
        layout.addWidget(self.notice)
        layout.addWidget(close)
        self.resize(820, 460)

    # -- showing ----------------------------------------------------------------------------

    def _fill_later(self) -> None:
        """Show the project afresh once the signal that asked has returned: the cell or box
        that sent it is rebuilt."""
        QTimer.singleShot(0, lambda: self.fill(self.session.project))

    def fill(self, project: Project | None) -> None:
        """Show the project's settings as stored (nothing without a project)."""
        self._filling = True
        try:
            self._fill(project)
        except InputError as error:
            self.notice.say(error.message, "problem")
        finally:
            self._filling = False

    def _fill(self, project: Project | None) -> None:
        self.setEnabled(project is not None)
        self.table.setRowCount(0)
        if project is None:
            self.periods.clear()
            return
        labels = list(meter_labels(project).values())
        accounts, belongs = account_names(project), meter_accounts(project)
        self.table.setColumnHidden(ACCOUNT, not accounts)
        self.table.setRowCount(len(labels))
        for row, label in enumerate(labels):
            name = QTableWidgetItem(label.name)
            name.setFlags(name.flags() & ~Qt.ItemFlag.ItemIsEditable)
            self.table.setItem(row, NAME, name)
            self.table.setItem(row, SHOWN, QTableWidgetItem(label.shown))
            utility = ChoiceBox([(utility_words(u), u) for u in UTILITIES])
            utility.setMinimumContentsLength(13)  # "chilled water" whole
            utility.set_value(label.utility)
            utility.activated.connect(partial(self._utility_chosen, label.name, utility))
            self.table.setCellWidget(row, UTILITY, utility)
            unit = ChoiceBox([(u, u) for u in READ_UNITS])
            unit.set_value(label.read_unit)
            unit.activated.connect(partial(self._unit_chosen, label.name, unit))
            self.table.setCellWidget(row, READ_IN, unit)
            if accounts:
                account = ChoiceBox([(NO_ACCOUNT, None), *((a, a) for a in accounts)])
                account.set_value(belongs.get(label.name))
                account.activated.connect(partial(self._account_chosen, label.name, account))
                self.table.setCellWidget(row, ACCOUNT, account)
        self.temperature.set_value(temperature_unit(project))
        calendar = calendar_edit.current(project)
        self.holidays.choose(calendar.country, calendar.subdivision)
        count = len(calendar.periods)
        self.periods.setText(
            f"{count} campus period{'s' * (count != 1)} (terms, breaks, closures)"
            if count
            else "No campus periods: add a campus calendar file on the Files step."
        )
        self.copy_forward.setEnabled(bool(count))

    # -- changes ----------------------------------------------------------------------------

    def _push(self, make) -> None:
        """Make the change ``make()`` builds, through the undo stack; a refusal is said in
        words and the stored settings shown again."""
        project = self.session.project
        if project is None or self._filling:
            return
        try:
            change: Reversible | None = make(project)
            if change is not None:
                self.undo.push(change)
                self.notice.say(f"Done: {change.words}. Edit ▸ Undo takes it back.", "done")
        except InputError as error:
            self.notice.say(error.message, "problem")
            self._fill_later()

    def _name_edited(self, item: QTableWidgetItem) -> None:
        if self._filling or item.column() != SHOWN:
            return
        name = self.table.item(item.row(), NAME).text()
        self._push(lambda project: label_change(project, name, display_name=item.text()))

    def _utility_chosen(self, name: str, box: ChoiceBox, _position: int) -> None:
        self._push(lambda project: label_change(project, name, utility=box.value()))

    def _unit_chosen(self, name: str, box: ChoiceBox, _position: int) -> None:
        self._push(lambda project: label_change(project, name, read_unit=box.value()))

    def _account_chosen(self, name: str, box: ChoiceBox, _position: int) -> None:
        self._push(lambda project: account_change(project, name, box.value()))

    def _temperature_chosen(self, _position: int) -> None:
        unit = self.temperature.value()
        self._push(lambda project: temperature_change(project, unit))

    def _holidays_chosen(self, code: str | None) -> None:
        edit = partial(calendar_edit.with_holidays, code=code or "none")
        words = f"take the public holidays of {code}" if code else "take no public holidays"
        self._push(lambda project: calendar_change(project, edit, words))

    def _copy_forward(self) -> None:
        words = "copy the campus calendar's last year forward"
        self._push(lambda project: calendar_change(project, calendar_edit.copied_forward, words))
