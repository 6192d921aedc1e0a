"""A kill while a workbook is written never leaves a broken file: the target is always the
previous workbook or the new one (written beside it, then renamed over it)."""

from __future__ import annotations

import random
import subprocess
import sys
import time
import zipfile
from pathlib import Path

from openpyxl import load_workbook

from tests.cli.cli_support import loadledger

KILLS = 10


def _opens(path: Path) -> bool:
    try:
        book = load_workbook(path, read_only=True)
    except (zipfile.BadZipFile, OSError, KeyError, ValueError):
        return False
    names = book.sheetnames
    book.close()
    return bool(names)


def test_killing_the_profile_command_while_it_writes_keeps_a_whole_workbook(new_site, tmp_path):
    target = tmp_path / "profile.xlsx"
    started = time.perf_counter()
    loadledger("profile", new_site, "--xlsx", target)
    seconds = time.perf_counter() - started
    assert _opens(target)
    chance = random.Random(14)
    for _ in range(KILLS):
        running = subprocess.Popen(
            [sys.executable, "-m", "desktop.launcher", "profile", new_site, "--xlsx", target],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        time.sleep(chance.uniform(0.5 * seconds, 1.05 * seconds))  # most kills near the save
        running.kill()
        running.wait()
        assert _opens(target)
