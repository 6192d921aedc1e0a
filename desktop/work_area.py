"""The work area the Budget and Track steps share: a chart beside its notes, over a table."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QSplitter, QWidget


def chart_notes_over_table(
    chart: QWidget, notes: QWidget, table: QWidget, widths: list[int], heights: list[int]
) -> QSplitter:
    """``chart`` and ``notes`` side by side (``widths``) above ``table`` (``heights``); the
    person can drag both dividers."""
    top = QSplitter(Qt.Orientation.Horizontal)
    top.addWidget(chart)
    top.addWidget(notes)
    top.setSizes(widths)
    work = QSplitter(Qt.Orientation.Vertical)
    work.addWidget(top)
    work.addWidget(table)
    work.setSizes(heights)
    return work
