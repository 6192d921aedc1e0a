"""`new` (with and without --overwrite), `fit` and `budget` killed at random moments: every
project left behind is whole (SQLite's integrity check), opens, and holds the state before the
command or the state after it, never part of a save (see :mod:`tests.kills`).

Each command is killed two or three times here (ten kills in all);
``tests/benchmarks/kill_long.py`` kills each twenty times or more.
The site is invented (two meters and a weather station, two years hourly).
"""

from __future__ import annotations

import random

import pytest

from tests.cli.cli_support import loadledger
from tests.kills import kill_trials, write_small_site

FIT = ("--models", "calendar_regression", "--origins", "2", "--workers", "1")
BUDGET = ("--start", "2026-01", "--paths", "100", "--workers", "1")


@pytest.fixture(scope="module")
def site(tmp_path_factory) -> dict:
    folder = tmp_path_factory.mktemp("site")
    meters, weather = write_small_site(folder)
    imported = folder / "imported.loadledger"
    loadledger("new", imported, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    fitted = folder / "fitted.loadledger"
    fitted.write_bytes(imported.read_bytes())
    loadledger("fit", fitted, *FIT)
    return {"meters": meters, "weather": weather, "imported": imported, "fitted": fitted}


def _new(site: dict, *extra: str):
    return lambda target: ("new", target, "--meters", site["meters"], "--weather",
                           site["weather"], "--timezone", "UTC", *extra)  # fmt: skip


def _trials(tmp_path, command: str, args, before, seed: int, kills: int = 3) -> None:
    """Kill the command ``kills`` times; :func:`kill_trials` judges each project it leaves."""
    tally = kill_trials(command, args, before, tmp_path, kills=kills, chance=random.Random(seed))
    assert tally.kills == kills


def test_a_killed_new_leaves_no_project_or_a_whole_one(site, tmp_path):
    _trials(tmp_path, "new", _new(site), None, 1, kills=2)


def test_a_killed_new_overwrite_leaves_the_old_project_or_the_new_one(site, tmp_path):
    """The project being replaced holds the meters without the weather."""
    old = tmp_path / "meters-only.loadledger"
    loadledger("new", old, "--meters", site["meters"], "--timezone", "UTC")
    _trials(tmp_path, "new --overwrite", _new(site, "--overwrite"), old, 2, kills=2)


def test_a_killed_fit_keeps_no_model_or_every_meter_s(site, tmp_path):
    _trials(tmp_path, "fit", lambda t: ("fit", t, *FIT), site["imported"], 3)


def test_a_killed_budget_keeps_the_run_whole_or_not_at_all(site, tmp_path):
    _trials(tmp_path, "budget", lambda t: ("budget", t, *BUDGET), site["fitted"], 4)
