"""`clean --apply-recommended` saves every meter's fixes at once: a kill at any moment leaves
the project whole (SQLite's integrity check) with none of the run's steps or all of them
(see :mod:`tests.kills`).

The sample campus's electricity export (invented; its generator plants the faults the
recommended fixes answer) is imported once, and each kill runs on a fresh copy.
"""

from __future__ import annotations

import random
from pathlib import Path

from tests.cli.cli_support import loadledger
from tests.kills import kill_trials

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample" / "data"
KILLS = 4  # with the other commands' kills (test_writing_kills.py), 14 in the suite


def test_a_killed_clean_leaves_none_or_all_of_its_steps(tmp_path):
    imported = tmp_path / "campus.loadledger"
    loadledger("new", imported, "--timezone", "America/Chicago",
               "--meters", DATA / "electricity-15min.xlsx",
               "--calendar", DATA / "campus-calendar.csv", "--holidays", "US-IL")  # fmt: skip
    tally = kill_trials("clean --apply-recommended",
                        lambda target: ("clean", target, "--apply-recommended"),
                        imported, tmp_path, kills=KILLS, chance=random.Random(22))  # fmt: skip
    assert tally.kills == KILLS
