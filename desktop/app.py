"""Start the Qt application and show the main window."""

from __future__ import annotations

import sys
from importlib.resources import files

from PySide6.QtGui import QIcon
from PySide6.QtWidgets import QApplication

import engine
from desktop.main_window import APP_NAME, MainWindow
from desktop.preferences import ORGANISATION
from engine.parallel import start_workers_early


def prepared_application() -> QApplication:
    """The application object, named so settings and the About box find this program."""
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setOrganizationName(ORGANISATION)
    app.setApplicationName(APP_NAME)
    app.setApplicationVersion(engine.__version__)
    app.setDesktopFileName("loadledger")  # Wayland matches the window to the menu entry by it
    # the packaged icon is a file on disk both when installed and when bundled
    app.setWindowIcon(QIcon(str(files("desktop") / "loadledger.svg")))
    return app


def run_window(project: str | None = None) -> int:
    """Show the window (opening ``project`` if given) and run until it closes."""
    app = prepared_application()
    window = MainWindow()
    if project:
        window.open_project(project)
    window.show()
    start_workers_early()  # the first budget's meters then start at once
    return app.exec()
