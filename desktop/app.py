"""Start the Qt application and show the main window."""

from __future__ import annotations

import sys

from PySide6.QtWidgets import QApplication

from desktop.main_window import MainWindow


def run_window(project: str | None = None) -> int:
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setApplicationName("Loadledger")
    window = MainWindow()
    if project:
        window.open_project(project)
    window.show()
    return app.exec()
