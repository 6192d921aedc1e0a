"""Every chart in the window can be saved as a PNG picture or an SVG drawing and copied to the
clipboard, from one set of actions all plot panels share."""

from __future__ import annotations

import xml.etree.ElementTree as ElementTree

import numpy as np
import pytest
from desktop_support import save_screen, show_widget, wait_until_idle
from PySide6.QtCore import QPoint, QRect, Qt
from PySide6.QtGui import QGuiApplication, QImage, QPainter
from PySide6.QtSvg import QSvgRenderer
from PySide6.QtWidgets import QFileDialog, QMessageBox

from desktop.chart_export import PIXELS_PER_POINT, PNG_FILTER, SVG_FILTER
from desktop.main_window import MainWindow
from desktop.plot_panel import PlotPanel


@pytest.fixture
def window(qtbot, sample_project):
    widget = show_widget(qtbot, MainWindow(), (1280, 720))
    assert widget.open_project(sample_project)
    widget.show_step("Patterns")
    widget.patterns_screen.show_meter("Library")
    wait_until_idle(qtbot, widget.patterns_screen)
    return widget


def pixels(image: QImage) -> np.ndarray:
    """An image's red, green and blue as an (height, width, 3) array of floats."""
    image = image.convertToFormat(QImage.Format.Format_RGB32)
    raw = np.frombuffer(image.constBits(), np.uint8, image.sizeInBytes())
    rows = raw.reshape(image.height(), image.bytesPerLine())[:, : image.width() * 4]
    return rows.reshape(image.height(), image.width(), 4)[..., :3].astype(np.float64)


def plot_area_difference(picture: QImage, panel: PlotPanel) -> float:
    """Mean difference (0–255) between ``picture`` brought to the panel's size and what the
    panel shows on screen, over the plot area."""
    same_size = picture.scaled(panel.size(), Qt.AspectRatioMode.IgnoreAspectRatio,
                               Qt.TransformationMode.SmoothTransformation)  # fmt: skip
    area: QRect = panel.stack.geometry()
    shown = panel.grab().toImage().copy(area)
    return float(np.abs(pixels(same_size.copy(area)) - pixels(shown)).mean())


def test_every_chart_in_the_window_offers_save_and_copy(window):
    panels = window.findChildren(PlotPanel)
    assert len(panels) >= 9  # Cleaning 1, Patterns 5, Models 2, Budget 1
    for panel in panels:
        words = [action.text() for action in panel.actions()]
        assert words == ["Save chart…", "Copy chart"], type(panel).__name__
        assert panel.contextMenuPolicy() == Qt.ContextMenuPolicy.ActionsContextMenu
        assert panel.chart_actions.button.menu().actions() == panel.actions()
        # a panel showing a note instead of a chart offers nothing to save
        assert panel.chart_actions.save_action.isEnabled() == panel.showing_plot
    assert window.patterns_screen.typical.chart_actions.save_action.isEnabled()
    assert not window.budget_screen.findChild(PlotPanel).chart_actions.save_action.isEnabled()


def test_a_chart_saved_as_png_then_svg_looks_as_on_screen(window, tmp_path, monkeypatch):
    panel = window.patterns_screen.typical
    answers = iter([(tmp_path / "typical-day.png", PNG_FILTER), (tmp_path / "library", SVG_FILTER)])
    offered = []

    def choose(parent, title, start, pattern):
        offered.append(start)
        path, picked = next(answers)
        return str(path), picked

    monkeypatch.setattr(QFileDialog, "getSaveFileName", choose)
    panel.chart_actions.save_action.trigger()
    picture = QImage(str(tmp_path / "typical-day.png"))
    assert picture.size() == panel.size() * PIXELS_PER_POINT
    assert plot_area_difference(picture, panel) < 8.0

    panel.chart_actions.save_action.trigger()
    assert offered == ["typical-day.png", str(tmp_path / "typical-day.png")]
    drawing = tmp_path / "library.svg"
    title = ElementTree.parse(drawing).getroot().find("{http://www.w3.org/2000/svg}title")
    assert title is not None and title.text == "Typical day"
    renderer = QSvgRenderer(str(drawing))
    assert renderer.isValid()
    drawn = QImage(panel.size(), QImage.Format.Format_RGB32)
    drawn.fill(Qt.GlobalColor.white)
    painter = QPainter(drawn)
    renderer.render(painter)
    painter.end()
    assert plot_area_difference(drawn, panel) < 8.0
    # the difference is sensitive: another chart of the same screen is far from this one
    other = window.patterns_screen.monthly.chart_actions.image()
    assert plot_area_difference(other, panel) > 2 * plot_area_difference(picture, panel)


def test_copy_chart_puts_the_picture_on_the_clipboard(window):
    panel = window.patterns_screen.temperature
    QGuiApplication.clipboard().clear()
    panel.chart_actions.copy_action.trigger()
    copied = QGuiApplication.clipboard().image()
    assert copied.size() == panel.size() * PIXELS_PER_POINT
    assert np.array_equal(pixels(copied), pixels(panel.chart_actions.image()))
    assert plot_area_difference(copied, panel) < 8.0


def test_a_chart_that_cannot_be_written_says_so(window, tmp_path, monkeypatch):
    shown = []
    monkeypatch.setattr(QMessageBox, "warning", lambda *args: shown.append(args[1:]))
    target = tmp_path / "no such folder" / "duration.png"
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *args: (str(target), PNG_FILTER))
    assert window.patterns_screen.duration.chart_actions.ask_and_save() is None
    ((title, text),) = shown
    assert title == "Chart not saved" and str(target) in text and not target.exists()


def test_screenshot_of_the_chart_menu(window):
    save_screen(window, "patterns-with-chart-menus")
    panel = window.patterns_screen.typical
    menu = panel.chart_actions.button.menu()
    menu.popup(panel.mapToGlobal(QPoint(panel.width() - 120, 30)))
    save_screen(menu, "chart-menu", min_bytes=500)
    menu.hide()
