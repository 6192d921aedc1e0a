"""Killing a writing command at random moments and judging the project file it leaves behind.

Shared by the kill tests in the suite (a few kills each) and ``tests/benchmarks/kill_long.py``
(hundreds). A trial copies the project as it was before the command (or starts with no file,
for ``new``), starts the real command line on the copy, kills it (SIGKILL) after a random
delay, and then asks of the file: does SQLite's ``PRAGMA integrity_check`` pass, does
Loadledger open it, and is it the state before the command or the state after it? A state is
the row count of every table (no file at all is the state ``None``), so a save that kept some
meters' rows and not others, or one result of two, is neither and fails the trial.
"""

from __future__ import annotations

import contextlib
import random
import re
import shutil
import sqlite3
import subprocess
import sys
import time
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path

import numpy as np
import pandas as pd

from engine.project import Project
from tests.cli.cli_support import write_hall_and_boiler

COMMAND = (sys.executable, "-m", "desktop.launcher")

#: Row counts per table, or None where there is no project file.
State = dict[str, int] | None


def state(path: Path) -> State:
    """The project's row counts, after checking it is whole and that Loadledger opens it."""
    if not path.exists():
        return None
    with contextlib.closing(sqlite3.connect(path)) as conn:
        check = conn.execute("PRAGMA integrity_check").fetchall()
        assert check == [("ok",)], f"{path.name}: {check[:3]}"
        tables = [
            name
            for (name,) in conn.execute(
                "SELECT name FROM sqlite_schema WHERE type = 'table' ORDER BY name"
            )
        ]
        counts = {t: conn.execute(f'SELECT COUNT(*) FROM "{t}"').fetchone()[0] for t in tables}
    Project.open(path).close()
    return counts


def seconds_to_run(args: Sequence[object]) -> float:
    """How long the command takes when nobody stops it (it must succeed)."""
    started = time.perf_counter()
    done = subprocess.run([*COMMAND, *map(str, args)], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    return time.perf_counter() - started


@cache
def startup_seconds() -> float:
    """How long the command line takes to start and stop doing nothing (``--version``),
    measured once per process."""
    return seconds_to_run(["--version"])


def killed_after(args: Sequence[object], delay: float) -> float | None:
    """Run the command and SIGKILL it after ``delay`` seconds; None when it was killed, else
    the seconds it took to finish."""
    started = time.perf_counter()
    running = subprocess.Popen(
        [*COMMAND, *map(str, args)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
    )
    try:
        running.wait(timeout=delay)
        return time.perf_counter() - started
    except subprocess.TimeoutExpired:
        running.kill()
        running.wait()
        return None


@dataclass
class Tally:
    """What the kills of one command left: every project whole, and old or new."""

    command: str
    kills: int = 0  # the process was still running when it was killed
    finished: int = 0  # it had already finished (the moment came too late)
    intact: int = 0  # of all runs: a project file there, whole, and Loadledger opened it
    old: int = 0  # of all runs: the state before the command (no file, for `new`)
    new: int = 0  # of all runs: the state after it
    leftovers: list[str] = field(default_factory=list)  # files left beside the project

    def line(self) -> str:
        return (
            f"{self.command:<22} kills {self.kills:>4}  (finished first {self.finished:>3})  "
            f"integrity passed {self.intact:>4}  old {self.old:>4}  new {self.new:>4}  "
            f"files left beside {len(self.leftovers)} {self.leftover_kinds()}"
        )

    def leftover_kinds(self) -> str:
        """The kinds of file left beside the project (building files' random parts as *)."""
        kinds = Counter(re.sub("[0-9a-f]{32}", "*", name) for name in self.leftovers)
        return ", ".join(f"{kind} x{count}" for kind, count in sorted(kinds.items()))


def kill_trials(
    command: str,
    args: Callable[[Path], Sequence[object]],
    before: Path | None,
    folder: Path,
    *,
    kills: int,
    chance: random.Random,
) -> Tally:
    """Kill ``args(target)`` until it has been killed ``kills`` times (at most 3 × ``kills``
    runs), each time at a moment drawn uniformly between the command line's start-up time and
    the end of an uninterrupted run, both measured first (the machine's load changes them; a
    run that ends before its moment brings the end forward).

    Each run starts from a copy of ``before`` (no file when None) at a fresh ``target`` in
    ``folder``; a run that finishes before its moment is judged too and counted apart.
    """
    tally = Tally(command)
    old, new, seconds = _old_and_new(args, before, folder / "whole.loadledger")
    earliest = min(startup_seconds(), 0.8 * seconds)
    for number in range(3 * kills):
        if tally.kills == kills:
            break
        trial = folder / f"trial-{number}"
        trial.mkdir()
        target = trial / "site.loadledger"
        if before is not None:
            shutil.copyfile(before, target)
        finished = killed_after(args(target), chance.uniform(earliest, seconds))
        if finished is None:
            tally.kills += 1
        else:  # the machine got faster: draw the next moments before this run's end
            tally.finished += 1
            seconds = 0.95 * finished
            earliest = min(earliest, 0.8 * seconds)
        found = state(target)
        tally.intact += found is not None
        assert found in (old, new), f"{command}: neither old nor new after a kill: {found}"
        tally.old += found == old
        tally.new += found == new
        tally.leftovers += [p.name for p in trial.iterdir() if p.name != target.name]
        shutil.rmtree(trial)
    return tally


def _old_and_new(args: Callable[[Path], Sequence[object]], before: Path | None, target: Path):
    if before is not None:
        shutil.copyfile(before, target)
    old = state(target)
    seconds = seconds_to_run(args(target))
    new = state(target)
    target.unlink()
    assert old != new, "the command changed nothing, so a kill could not show a mix"
    return old, new, seconds


def write_small_site(folder: Path) -> tuple[Path, Path]:
    """An invented two-meter site (hourly, two years, one weather station): its two files.

    Small enough that fitting and budgeting take seconds, so kills can land in every phase.
    """
    rng = np.random.default_rng(14)
    hours = pd.date_range("2024-01-01", "2025-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    busy = (hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 18)
    hall = (50 + 60 * busy + 3 * np.maximum(12 - temps, 0)) * rng.normal(1, 0.04, len(hours))
    boiler = (5 + 9 * np.maximum(14 - temps, 0)) * rng.normal(1, 0.05, len(hours))
    return write_hall_and_boiler(folder, hours, hall, boiler, temps)
