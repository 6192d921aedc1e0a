"""`loadledger` with no arguments opens the main window; with a command it stays headless."""

from __future__ import annotations

from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication

from desktop.launcher import main
from desktop.main_window import MainWindow


def test_no_arguments_open_the_window(qapp):
    seen = []

    def look_and_close():
        windows = [w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow)]
        seen.extend(w.isVisible() for w in windows)
        for window in windows:
            window.close()
        qapp.quit()

    QTimer.singleShot(200, look_and_close)
    assert main([]) == 0
    assert seen == [True]


def test_a_command_runs_without_the_window(capsys):
    before = [w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow)]
    status = main(["info", "no-such-project.loadledger"])
    after = [w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow)]
    assert status == 2 and len(after) == len(before)
    assert "no-such-project.loadledger" in capsys.readouterr().err
