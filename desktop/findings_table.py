"""The Cleaning screen's table of findings, most serious first, with a filter per severity."""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd
from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from desktop.cleaning_words import (
    energy_words,
    finding_meaning,
    finding_name,
    fix_words,
    is_recommended,
    local_range,
    step_meaning,
)
from desktop.palette import INK, SERIES_CYCLE, TONES
from desktop.understood_view import NUMBER_ROLE
from engine.cleaning import SEVERITIES, Finding

HEADERS = ("Severity", "Finding", "Site time", "Fix", "Recorded", "Typical", "Explanation")
EXPLANATION = HEADERS.index("Explanation")
#: The explanation column's least width: the whole text shows below the table when selected.
EXPLANATION_WIDTH = 320
#: Severities from the most to the least pressing, as the table lists them.
SEVERITY_ORDER = tuple(reversed(SEVERITIES))
SEVERITY_INK = {"serious": TONES["problem"][1], "warning": SERIES_CYCLE[1], "info": INK}
#: Data role holding the finding's id on the first cell of its row.
FINDING_ROLE = Qt.ItemDataRole.UserRole + 1


def _ordered(findings: Sequence[Finding]) -> list[Finding]:
    return sorted(findings, key=lambda f: (SEVERITY_ORDER.index(f.severity), f.start, f.end))


class FindingsTable(QWidget):
    """Lists findings; ``chosen`` carries the selected :class:`Finding` (or None)."""

    chosen = Signal(object)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.findings: list[Finding] = []
        self.filters: dict[str, QToolButton] = {}
        filters = QHBoxLayout()
        filters.addWidget(QLabel("<b>Findings</b>"))
        filters.addStretch(1)
        filters.addWidget(QLabel("Show"))
        for severity in SEVERITY_ORDER:
            button = QToolButton()
            button.setCheckable(True)
            button.setChecked(True)
            button.setStyleSheet(f"QToolButton {{ color: {SEVERITY_INK[severity]}; }}")
            button.toggled.connect(self._apply_filters)
            self.filters[severity] = button
            filters.addWidget(button)
        self.table = QTableWidget(0, len(HEADERS))
        self.table.setHorizontalHeaderLabels(HEADERS)
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setWordWrap(False)
        self.table.setHorizontalScrollMode(QAbstractItemView.ScrollMode.ScrollPerPixel)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(EXPLANATION, QHeaderView.ResizeMode.Interactive)
        header.setStretchLastSection(True)
        self.table.setColumnWidth(EXPLANATION, EXPLANATION_WIDTH)
        self.table.itemSelectionChanged.connect(self._selection_changed)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addLayout(filters)
        layout.addWidget(self.table, 1)
        self._count_filters()

    def show_findings(
        self, findings: Sequence[Finding], timezone: str, interval: pd.Timedelta
    ) -> None:
        """List ``findings``; the one selected before stays selected when it is still there."""
        kept = self.selected()
        self.findings = _ordered(findings)
        self.table.blockSignals(True)
        self.table.clearSelection()
        self.table.setRowCount(len(self.findings))
        for row, finding in enumerate(self.findings):
            self._fill_row(row, finding, timezone, interval)
        self.table.blockSignals(False)
        self._count_filters()
        self._apply_filters()
        if kept is not None:
            self.select(kept.id)
        if self.selected() is None:
            self.chosen.emit(None)

    def _fill_row(self, row: int, finding: Finding, timezone: str, interval: pd.Timedelta) -> None:
        cells = (
            (finding.severity, None, None),
            (finding_name(finding.kind), None, finding_meaning(finding.kind)),
            (local_range(finding.start, finding.end, timezone, interval), None, None),
            (fix_words(finding), None, _fix_tip(finding)),
            (energy_words(finding.energy_kwh), finding.energy_kwh, None),
            (energy_words(finding.expected_kwh), finding.expected_kwh, None),
            (finding.explanation, None, finding.explanation),
        )
        for column, (words, number, tip) in enumerate(cells):
            item = QTableWidgetItem(words)
            if number is not None:
                item.setData(NUMBER_ROLE, float(number))
                item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            if tip:
                item.setToolTip(tip)
            self.table.setItem(row, column, item)
        first = self.table.item(row, 0)
        first.setData(FINDING_ROLE, finding.id)
        first.setForeground(QBrush(QColor(SEVERITY_INK[finding.severity])))
        if finding.severity == "serious":
            bold = QFont(first.font())
            bold.setBold(True)
            first.setFont(bold)

    def clear(self) -> None:
        self.findings = []
        self.table.setRowCount(0)
        self._count_filters()

    def selected(self) -> Finding | None:
        rows = self.table.selectionModel().selectedRows()
        if not rows or rows[0].row() >= len(self.findings):
            return None
        return self.findings[rows[0].row()]

    def select(self, finding_id: str) -> bool:
        """Select the finding with ``finding_id`` (showing its severity); False if not listed."""
        for row, finding in enumerate(self.findings):
            if finding.id == finding_id:
                self.filters[finding.severity].setChecked(True)
                self.table.selectRow(row)
                return True
        return False

    def shown(self) -> list[Finding]:
        """The findings the filters let through, in table order."""
        return [f for row, f in enumerate(self.findings) if not self.table.isRowHidden(row)]

    def _count_filters(self) -> None:
        for severity, button in self.filters.items():
            count = sum(f.severity == severity for f in self.findings)
            button.setText(f"{severity} ({count})")

    def _apply_filters(self) -> None:
        for row, finding in enumerate(self.findings):
            self.table.setRowHidden(row, not self.filters[finding.severity].isChecked())
        selected = self.selected()
        if selected is not None and not self.filters[selected.severity].isChecked():
            self.table.clearSelection()

    def _selection_changed(self) -> None:
        self.chosen.emit(self.selected())


def _fix_tip(finding: Finding) -> str:
    if finding.fix is None:
        return "The engine suggests no change for this finding."
    unasked = (
        "'Apply all recommended' applies it."
        if is_recommended(finding)
        else "Not applied by 'Apply all recommended': look at the preview and decide."
    )
    return f"{step_meaning(finding.fix.kind)}. {unasked}"
