"""The frame every chart of the window shares: a title with the chart's save and copy
actions, a colour key, the plot (pyqtgraph) or in its place a note saying why there is none,
and a caption."""

from __future__ import annotations

from collections.abc import Sequence
from html import escape

import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QHBoxLayout,
    QLabel,
    QSizePolicy,
    QStackedWidget,
    QVBoxLayout,
    QWidget,
)

from desktop.chart_export import ChartActions
from desktop.palette import INK, PAPER


class GroupedAxis(pg.AxisItem):
    """An axis whose whole numbers print with thousands separators (381,000, not 381000)."""

    def tickStrings(self, values: list[float], scale: float, spacing: float) -> list[str]:
        if spacing * scale < 1:
            return super().tickStrings(values, scale, spacing)
        return [f"{value * scale:,.0f}" for value in values]


class PlotPanel(QWidget):
    """A titled plot with a caption, or in its place a note saying why there is no plot."""

    def __init__(
        self,
        title: str,
        x_label: str,
        y_label: str,
        axis_items: dict | None = None,
        parent: QWidget | None = None,
    ) -> None:
        super().__init__(parent)
        self.title = QLabel(f"<b>{title}</b>")
        axes = {"left": GroupedAxis("left"), **(axis_items or {})}
        self.plot = pg.PlotWidget(background=PAPER, axisItems=axes)
        self.plot.setMenuEnabled(False)
        item = self.plot.getPlotItem()
        item.hideButtons()
        item.showGrid(x=True, y=True, alpha=0.15)
        for side, words in (("bottom", x_label), ("left", y_label)):
            axis = item.getAxis(side)
            axis.setPen(INK)
            axis.setTextPen(INK)
            axis.enableAutoSIPrefix(False)
            axis.setLabel(words, color=INK)
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setAlignment(Qt.AlignmentFlag.AlignCenter)
        self.note.setStyleSheet(f"color: {INK}; background: {PAPER}; padding: 12px;")
        self.stack = QStackedWidget()
        self.stack.addWidget(self.plot)
        self.stack.addWidget(self.note)
        self.chart_actions = ChartActions(self, title)
        self.stack.currentChanged.connect(lambda: self.chart_actions.set_enabled(self.showing_plot))
        self.key = QLabel()
        self.key.setWordWrap(True)
        self.key.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Minimum)
        self.caption = QLabel()
        self.caption.setWordWrap(True)
        self.caption.setStyleSheet("color: #5a5f66;")
        self.caption.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Minimum)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        heading = QHBoxLayout()
        heading.addWidget(self.title, 1)
        heading.addWidget(self.chart_actions.button)
        layout.addLayout(heading)
        layout.addWidget(self.key)
        layout.addWidget(self.stack, 1)
        layout.addWidget(self.caption)

    @property
    def showing_plot(self) -> bool:
        return self.stack.currentWidget() is self.plot

    def show_note(self, words: str) -> None:
        self.note.setText(words)
        self.caption.clear()
        self.key.clear()
        self.stack.setCurrentWidget(self.note)

    def set_key(self, entries: Sequence[tuple[str, str, str]]) -> None:
        """Name each series (mark, name, colour) beside the title, off the plot area."""
        self.key.setText(
            "&nbsp;&nbsp;".join(
                f"<span style='color:{colour}'>{mark}</span>&nbsp;{escape(name)}"
                for mark, name, colour in entries
            )
        )

    def _show_plot(self, caption: str = "") -> None:
        self.caption.setText(caption)
        self.stack.setCurrentWidget(self.plot)
