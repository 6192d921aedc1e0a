"""Table cells that show a rounded number and keep the number itself behind the words."""

from __future__ import annotations

import math

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QTableWidgetItem

from desktop.understood_view import NUMBER_ROLE


def number_cell(value: float | None, digits: int) -> QTableWidgetItem:
    """A right-aligned cell with ``value`` to ``digits`` decimals ("–" when unknown); the
    unrounded number (NaN when unknown) sits in :data:`NUMBER_ROLE`."""
    known = value is not None and not math.isnan(value)
    cell = QTableWidgetItem(f"{value:,.{digits}f}" if known else "–")
    cell.setData(NUMBER_ROLE, float(value) if known else math.nan)
    cell.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
    return cell
