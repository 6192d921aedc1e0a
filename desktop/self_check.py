"""``loadledger --self-check``: open the window, show every step and the help once, close, and
exit 0 — or 1 naming what failed.

It proves that an installed copy has everything the window needs (Qt's platform plugin, the
plotting library, the help pages) without a person watching; it works with
``QT_QPA_PLATFORM=offscreen``. The window's remembered settings are kept in a temporary
folder for the run, so a check never changes the person's recent projects or window size.
"""

from __future__ import annotations

import sys
import tempfile
import time
import traceback
from collections.abc import Callable

from PySide6.QtCore import QSettings, QTimer

#: Seconds the whole check may take before it gives up (the event loop never came back).
LIMIT_SECONDS = 60


def run_self_check(started: float, say: Callable[[str], None] = print) -> int:
    """Show the window and each step once; 0 when all went well, else 1.

    ``started`` is the ``time.perf_counter()`` reading taken when the program started, so the
    report can say how long the window took to appear.
    """
    from desktop.app import prepared_application
    from desktop.main_window import STEP_NAMES, MainWindow

    failures: list[str] = []
    walked: list[bool] = []
    keep = sys.excepthook
    sys.excepthook = lambda kind, error, tb: failures.append(
        "".join(traceback.format_exception(kind, error, tb))
    )
    with tempfile.TemporaryDirectory(prefix="loadledger-self-check-") as settings_folder:
        QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, settings_folder)
        app = prepared_application()
        window = MainWindow()
        window.show()
        app.processEvents()
        say(f"self-check: window shown after {time.perf_counter() - started:.2f} s")
        if window.windowIcon().pixmap(64, 64).isNull():
            failures.append("the window has no icon (desktop/loadledger.svg not found or unread)")

        def walk() -> None:
            try:
                for name in STEP_NAMES:
                    window.show_step(name)
                    app.processEvents()
                    screen = window.screens.currentWidget()
                    seen = screen.isVisible() and window.steps.currentItem().text() == name
                    say(f"self-check: step {name}: {'shown' if seen else 'NOT SHOWN'}")
                    if not seen:
                        failures.append(f"the {name} step was not shown")
                window.show_help()
                window.show_about()
                app.processEvents()
                window.help_dialog.close()
                window.about_dialog.close()
                walked.append(True)
            except Exception:  # any failure is the check's finding, reported below
                failures.append(traceback.format_exc())
            finally:
                window.close()
                app.quit()

        QTimer.singleShot(0, walk)
        QTimer.singleShot(LIMIT_SECONDS * 1000, app.quit)
        app.exec()
        window.settings.sync()  # now, not when the process ends, after the folder is removed
    sys.excepthook = keep
    if not walked and not failures:
        failures.append(f"the window did not answer within {LIMIT_SECONDS} s")
    for failure in failures:
        print(f"self-check: FAILED: {failure}", file=sys.stderr)
    if failures:
        return 1
    say(f"self-check: passed in {time.perf_counter() - started:.2f} s")
    return 0
