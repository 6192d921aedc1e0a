"""`loadledger --self-check` opens the window, shows every step once and exits 0; a step that
breaks makes it exit 1 and say what broke. Each run is its own process, as a person's is."""

from __future__ import annotations

import os
import subprocess
import sys

from desktop.main_window import STEP_NAMES

BROKEN_HELP = """
import sys
from desktop.launcher import main
from desktop.main_window import MainWindow

def broken(self):
    raise RuntimeError("the help pages are missing")

MainWindow.show_help = broken
sys.exit(main(["--self-check"]))
"""


def _run(args: list[str], config) -> subprocess.CompletedProcess:
    (config / "tmp").mkdir()
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen", "XDG_CONFIG_HOME": str(config),
           "TMPDIR": str(config / "tmp")}  # fmt: skip
    return subprocess.run([sys.executable, *args], capture_output=True, text=True,
                          timeout=180, env=env)  # fmt: skip


def test_the_self_check_shows_every_step_and_passes(tmp_path):
    done = _run(["-m", "desktop.launcher", "--self-check"], tmp_path)
    assert done.returncode == 0, done.stderr
    for name in STEP_NAMES:
        assert f"self-check: step {name}: shown" in done.stdout
    assert "self-check: window shown after" in done.stdout and "Traceback" not in done.stderr
    assert not list((tmp_path / "tmp").iterdir()), "the check left its settings folder behind"
    assert not list(tmp_path.rglob("*.ini")), "the check changed the person's window settings"


def test_a_step_that_breaks_fails_the_check(tmp_path):
    done = _run(["-c", BROKEN_HELP], tmp_path)
    assert done.returncode == 1
    assert "self-check: FAILED" in done.stderr and "the help pages are missing" in done.stderr
    assert "passed" not in done.stdout
