"""The calendar the readings propose, offered for acceptance and editing.

One row per proposed period with a tick, its name, first and last day (editable), its kind and
the evidence; the proposed public holidays with their evidence and the holiday picker to change
them. Keeping stores the ticked rows and the chosen holidays as the project's campus calendar,
exactly as a calendar file and ``--holidays`` would.
"""

from __future__ import annotations

from datetime import date

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QDialog,
    QDialogButtonBox,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.choices import ChoiceBox
from desktop.holiday_picker import HolidayPicker
from engine.calendar import PERIOD_KINDS, CampusCalendar, CampusPeriod
from engine.calendar_proposal import CalendarProposal
from engine.words import counted

COLUMNS = ("Keep", "Period", "First day", "Last day", "Kind", "Evidence")
KEEP, NAME, FIRST, LAST, KIND, EVIDENCE = range(len(COLUMNS))


class CalendarProposalDialog(QDialog):
    """Shows ``proposal`` beside the project's ``current`` calendar; ``calendar()`` is what the
    user keeps (call it after the dialog is accepted)."""

    def __init__(
        self,
        proposal: CalendarProposal,
        current: CampusCalendar,
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("A campus calendar from the readings")
        self.proposal = proposal
        self.problem = QLabel()
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet("color: #9b3b16")
        self.use_holidays = QCheckBox()
        self.holidays = HolidayPicker()
        self.table = self._period_table()
        self._show_holidays()
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Cancel)
        self.keep_button = buttons.addButton(
            "Keep as the campus calendar", QDialogButtonBox.ButtonRole.AcceptRole
        )
        buttons.accepted.connect(self._keep)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        for note in (*proposal.notes, _replacing(current)):
            if note:
                label = QLabel(note)
                label.setWordWrap(True)
                layout.addWidget(label)
        holidays = QHBoxLayout()
        holidays.addWidget(self.use_holidays)
        holidays.addWidget(self.holidays)
        holidays.addStretch(1)
        layout.addLayout(holidays)
        self.holiday_evidence = QLabel(proposal.holidays.evidence if proposal.holidays else "")
        self.holiday_evidence.setWordWrap(True)
        layout.addWidget(self.holiday_evidence)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.problem)
        layout.addWidget(buttons)
        self.resize(1100, 640)

    def _show_holidays(self) -> None:
        found = self.proposal.holidays
        self.use_holidays.setText("Public holidays")
        self.use_holidays.setChecked(found is not None)
        if found is not None:
            self.holidays.choose(found.country, found.subdivision)
        self.holidays.setEnabled(found is not None)
        self.use_holidays.toggled.connect(self.holidays.setEnabled)

    def _period_table(self) -> QTableWidget:
        table = QTableWidget(len(self.proposal.periods), len(COLUMNS))
        table.setHorizontalHeaderLabels(COLUMNS)
        table.verticalHeader().hide()
        table.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        for row, proposed in enumerate(self.proposal.periods):
            period = proposed.period
            keep = QTableWidgetItem()
            keep.setFlags(Qt.ItemFlag.ItemIsUserCheckable | Qt.ItemFlag.ItemIsEnabled)
            keep.setCheckState(Qt.CheckState.Checked)
            table.setItem(row, KEEP, keep)
            table.setItem(row, NAME, QTableWidgetItem(period.name))
            table.setItem(row, FIRST, QTableWidgetItem(period.first_day.isoformat()))
            table.setItem(row, LAST, QTableWidgetItem(period.last_day.isoformat()))
            kind = ChoiceBox([(name, name) for name in PERIOD_KINDS])
            kind.set_value(period.kind)
            table.setCellWidget(row, KIND, kind)
            evidence = QTableWidgetItem(proposed.evidence)
            evidence.setFlags(Qt.ItemFlag.ItemIsEnabled)
            evidence.setToolTip(proposed.evidence)
            table.setItem(row, EVIDENCE, evidence)
        header = table.horizontalHeader()
        for column in (KEEP, NAME, FIRST, LAST, KIND):
            header.setSectionResizeMode(column, QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(EVIDENCE, QHeaderView.ResizeMode.Stretch)
        return table

    def calendar(self) -> CampusCalendar:
        """The ticked periods as edited, with the chosen public holidays.

        Raises ``ValueError`` naming the row when a date cannot be read or a period ends
        before it starts.
        """
        periods = []
        for row in range(self.table.rowCount()):
            if self.table.item(row, KEEP).checkState() != Qt.CheckState.Checked:
                continue
            name = self.table.item(row, NAME).text().strip() or f"Period {row + 1}"
            first, last = (_day(self.table.item(row, c).text(), row) for c in (FIRST, LAST))
            kind = self.table.cellWidget(row, KIND).value()
            try:
                periods.append(CampusPeriod(name, first, last, kind))
            except ValueError as error:
                raise ValueError(f"Row {row + 1}: {error}.") from None
        code = self.holidays.code() if self.use_holidays.isChecked() else None
        country, _, region = (code or "").partition("-")
        return CampusCalendar(country or None, region or None, tuple(periods))

    def _keep(self) -> None:
        try:
            self.calendar()
        except ValueError as error:
            self.problem.setText(str(error))
            return
        self.accept()


def _day(text: str, row: int) -> date:
    try:
        return date.fromisoformat(text.strip())
    except ValueError:
        raise ValueError(
            f"Row {row + 1}: '{text.strip()}' is not a date; write it as YYYY-MM-DD."
        ) from None


def _replacing(current: CampusCalendar) -> str:
    """What keeping replaces, when the project already has a calendar."""
    if not current.periods and current.country is None:
        return ""
    holidays = f"{current.country} public holidays" if current.country else "no public holidays"
    return (
        f"Keeping replaces the project's calendar ({counted(len(current.periods), 'period')}, "
        f"{holidays})."
    )
