"""The main window: the steps of the job down the side, the current step's screen beside it."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QFileDialog,
    QLabel,
    QListWidget,
    QMainWindow,
    QMessageBox,
    QSplitter,
    QStackedWidget,
    QVBoxLayout,
    QWidget,
)

from engine.errors import ProjectError
from engine.project import Project

STEPS = (
    ("Files", "Bring in meter exports, bills and weather; check what was understood."),
    ("Cleaning", "Review gaps, spikes and stuck meters; apply or undo fixes."),
    ("Patterns", "Typical days, seasons, base load and temperature response."),
    ("Models", "Fit explainable models and compare their backtests."),
    ("Budget", "Monthly totals with P10/P50/P90 and cost."),
    ("Export", "Write the workbook for finance."),
)


class MainWindow(QMainWindow):
    """Holds the open project and one screen per step."""

    def __init__(self) -> None:
        super().__init__()
        self.project: Project | None = None
        self.setWindowTitle("Loadledger")
        self.resize(1100, 700)
        self.steps = QListWidget()
        self.steps.addItems([name for name, _ in STEPS])
        self.steps.setFixedWidth(170)
        self.screens = QStackedWidget()
        for name, purpose in STEPS:
            self.screens.addWidget(_placeholder(name, purpose))
        self.steps.currentRowChanged.connect(self.screens.setCurrentIndex)
        self.steps.setCurrentRow(0)
        splitter = QSplitter(Qt.Orientation.Horizontal)
        splitter.addWidget(self.steps)
        splitter.addWidget(self.screens)
        splitter.setStretchFactor(1, 1)
        self.setCentralWidget(splitter)
        menu = self.menuBar().addMenu("&Project")
        menu.addAction("&Open…", self._ask_open)
        menu.addAction("&Quit", self.close)
        self.statusBar().showMessage("No project open")

    def open_project(self, path: str | Path) -> bool:
        """Open a project file; report problems in a message box, never as a traceback."""
        try:
            project = Project.open(path)
        except ProjectError as error:
            QMessageBox.warning(self, "Cannot open project", str(error))
            return False
        if self.project is not None:
            self.project.close()
        self.project = project
        summary = project.summary()
        self.statusBar().showMessage(
            f"{Path(path).name}: {len(summary['meters'])} meter(s), site zone {project.timezone}"
        )
        return True

    def _ask_open(self) -> None:
        path, _ = QFileDialog.getOpenFileName(
            self, "Open project", "", f"Loadledger projects (*{Project.EXTENSION})"
        )
        if path:
            self.open_project(path)

    def closeEvent(self, event) -> None:
        if self.project is not None:
            self.project.close()
            self.project = None
        super().closeEvent(event)


def _placeholder(name: str, purpose: str) -> QWidget:
    widget = QWidget()
    layout = QVBoxLayout(widget)
    title = QLabel(f"<h2>{name}</h2><p>{purpose}</p>")
    title.setWordWrap(True)
    layout.addWidget(title)
    layout.addStretch(1)
    return widget
