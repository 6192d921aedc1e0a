"""`clean --apply-recommended` saves every meter's fixes at once: a kill at any moment leaves
the project whole (SQLite's integrity check) with none of the run's steps or all of them.

The sample campus's electricity export (invented; its generator plants the faults the
recommended fixes answer) is imported once, and each kill runs on a fresh copy.
"""

from __future__ import annotations

import random
import shutil
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.cli.cli_support import loadledger

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample" / "data"
KILLS = 10


@pytest.fixture(scope="module")
def imported(tmp_path_factory) -> Path:
    project = tmp_path_factory.mktemp("kills") / "campus.loadledger"
    loadledger("new", project, "--timezone", "America/Chicago",
               "--meters", DATA / "electricity-15min.xlsx",
               "--calendar", DATA / "campus-calendar.csv", "--holidays", "US-IL")  # fmt: skip
    return project


def _steps(path: Path) -> int:
    with sqlite3.connect(path) as conn:
        assert conn.execute("PRAGMA integrity_check").fetchone() == ("ok",)
        return conn.execute("SELECT COUNT(*) FROM cleaning_steps").fetchone()[0]


def test_a_killed_clean_leaves_none_or_all_of_its_steps(imported, tmp_path):
    whole = tmp_path / "whole.loadledger"
    shutil.copyfile(imported, whole)
    started = time.perf_counter()
    loadledger("clean", whole, "--apply-recommended")
    seconds = time.perf_counter() - started
    every = _steps(whole)
    assert every >= 5  # one or more fixes on each of the five meters
    chance = random.Random(22)
    for number in range(KILLS):
        copy = tmp_path / f"kill-{number}.loadledger"
        shutil.copyfile(imported, copy)
        running = subprocess.Popen(
            [sys.executable, "-m", "desktop.launcher", "clean", copy, "--apply-recommended"],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        time.sleep(chance.uniform(0.4 * seconds, 1.0 * seconds))
        running.kill()
        running.wait()
        assert _steps(copy) in (0, every)
        copy.unlink()
