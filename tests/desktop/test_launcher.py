"""`loadledger` with no arguments opens the main window; with a command it stays headless.

The window test runs in its own process: it runs the application's event loop to its end,
which the other window tests, sharing one QApplication, must not see.
"""

from __future__ import annotations

import os
import subprocess
import sys

from PySide6.QtWidgets import QApplication

from desktop.launcher import main
from desktop.main_window import MainWindow

OPEN_AND_LOOK = """
import sys
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication
from desktop.launcher import main
from desktop.main_window import MainWindow

app = QApplication(sys.argv[:1])

def look_and_close():
    windows = [w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow)]
    print("visible windows:", sum(w.isVisible() for w in windows))
    for window in windows:
        window.close()
    app.quit()

QTimer.singleShot(300, look_and_close)
sys.exit(main([]))
"""


def test_no_arguments_open_the_window(tmp_path):
    # the window remembers its settings under XDG_CONFIG_HOME: keep them out of the real home
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen", "XDG_CONFIG_HOME": str(tmp_path)}
    done = subprocess.run([sys.executable, "-c", OPEN_AND_LOOK], capture_output=True,
                          text=True, timeout=120, env=env)  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert "visible windows: 1" in done.stdout
    assert list(tmp_path.rglob("*.ini")), "the window kept no settings where it was told to"


def test_a_command_runs_without_the_window(qapp, capsys):
    before = [w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow)]
    status = main(["info", "no-such-project.loadledger"])
    after = [w for w in QApplication.topLevelWidgets() if isinstance(w, MainWindow)]
    assert status == 2 and len(after) == len(before)
    assert "no-such-project.loadledger" in capsys.readouterr().err
