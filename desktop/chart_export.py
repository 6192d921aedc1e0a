"""Save a chart as a PNG picture or an SVG drawing, or copy it to the clipboard.

Every plot panel carries the same two actions (in a small menu beside its title and on its
right-click menu), so a chart can go into a report or an e-mail as it is on screen. The whole
panel is drawn, not only the pyqtgraph plot: its title, the key naming the series and the
caption live in labels beside the plot, and a chart without them cannot be read. (pyqtgraph
0.14's own SVG exporter also fails on paths Qt 6.10 writes, pyqtgraph issue #3495.)
"""

from __future__ import annotations

import re
from pathlib import Path

from PySide6.QtCore import QPoint, Qt
from PySide6.QtGui import QAction, QGuiApplication, QImage, QPaintDevice, QPainter, QRegion
from PySide6.QtSvg import QSvgGenerator
from PySide6.QtWidgets import QMenu, QMessageBox, QToolButton, QWidget

from desktop.file_dialogs import ask_save_path

PIXELS_PER_POINT = 2  # a saved picture has twice the screen's pixels: sharp in print
PNG_FILTER = "PNG picture (*.png)"
SVG_FILTER = "SVG drawing (*.svg)"
CHART_FILTERS = f"{PNG_FILTER};;{SVG_FILTER}"
FOLDER_PURPOSE = "charts"


def file_name(title: str) -> str:
    """A file name for a chart titled ``title``, e.g. "Monthly totals" → "monthly-totals"."""
    return re.sub(r"[^a-z0-9]+", "-", title.lower()).strip("-") or "chart"


class ChartActions:
    """The "Save chart…" and "Copy chart" actions of one plot panel, and the small menu
    button that offers them beside the panel's title."""

    def __init__(self, panel: QWidget, title: str) -> None:
        self.panel = panel
        self.title = title
        self.save_action = QAction("Save chart…", panel)
        self.save_action.setToolTip("Save this chart as a PNG picture or an SVG drawing.")
        self.save_action.triggered.connect(self.ask_and_save)
        self.copy_action = QAction("Copy chart", panel)
        self.copy_action.setToolTip("Copy this chart as a picture, to paste into a report.")
        self.copy_action.triggered.connect(self.copy)
        actions = (self.save_action, self.copy_action)
        panel.addActions(actions)
        panel.setContextMenuPolicy(Qt.ContextMenuPolicy.ActionsContextMenu)
        menu = QMenu(panel)
        menu.addActions(actions)
        self.button = QToolButton(panel)
        self.button.setText("Chart")
        self.button.setToolTip("Save or copy this chart")
        self.button.setAutoRaise(True)
        self.button.setMenu(menu)
        self.button.setPopupMode(QToolButton.ToolButtonPopupMode.InstantPopup)

    def set_enabled(self, enabled: bool) -> None:
        """Offer the actions only while a chart (not a note) is shown."""
        for action in (self.save_action, self.copy_action):
            action.setEnabled(enabled)
        self.button.setEnabled(enabled)

    def _paint(self, device: QPaintDevice, scale: float) -> None:
        """Draw the panel, less the menu button, on ``device`` ``scale`` times its size."""
        painter = QPainter(device)
        painter.scale(scale, scale)
        painter.fillRect(self.panel.rect(), self.panel.palette().window())
        shown = QRegion(self.panel.rect()) - QRegion(self.button.geometry())
        self.panel.render(painter, QPoint(), shown)
        painter.end()

    def image(self) -> QImage:
        """The chart as a picture, :data:`PIXELS_PER_POINT` times the size on screen."""
        image = QImage(self.panel.size() * PIXELS_PER_POINT, QImage.Format.Format_RGB32)
        self._paint(image, PIXELS_PER_POINT)
        return image

    def save_to(self, path: Path) -> Path:
        """Write the chart to ``path``: an SVG drawing for ``.svg``, else a PNG picture."""
        if path.suffix.lower() == ".svg":
            drawing = QSvgGenerator()
            drawing.setFileName(str(path))
            drawing.setSize(self.panel.size())
            drawing.setViewBox(self.panel.rect())
            drawing.setTitle(self.title)
            self._paint(drawing, 1)
            if not path.is_file():
                raise OSError("the drawing could not be written")
        elif not self.image().save(str(path), "PNG"):
            raise OSError("the picture could not be written")
        return path

    def ask_and_save(self) -> Path | None:
        """Ask where to save the chart and save it; the path written, None if not saved."""
        answer = ask_save_path(
            self.panel, FOLDER_PURPOSE, "Save chart", CHART_FILTERS, f"{file_name(self.title)}.png"
        )
        if answer is None:
            return None
        path, picked = answer
        if path.suffix.lower() not in (".png", ".svg"):
            path = path.with_suffix(".svg" if picked == SVG_FILTER else ".png")
        try:
            return self.save_to(path)
        except OSError as error:
            QMessageBox.warning(self.panel, "Chart not saved", f"{path}: {error}.")
            return None

    def copy(self) -> QImage:
        """Put the chart on the clipboard as a picture; the picture."""
        image = self.image()
        QGuiApplication.clipboard().setImage(image)
        return image
