"""Long kill run: every writing command killed at random moments, the projects judged.

    .venv/bin/python tests/benchmarks/kill_long.py               # 20 kills a command, seed 1
    .venv/bin/python tests/benchmarks/kill_long.py --per-command 50 --seed 7

Commands: ``new``, ``new --overwrite``, ``clean --apply-recommended`` (the sample campus's
electricity export), ``fit``, ``budget`` of a fitted project and ``budget`` of one never
fitted (its meters' modelling and the run are one save). Each kill lands at a moment drawn
uniformly between the command line's start-up time and the end of an uninterrupted run; runs
that finish before their moment are judged too and retried until the kills are made.
Printed per command and in total: kills, runs that finished before their moment, projects
(of all runs) that passed ``PRAGMA integrity_check`` and opened, old and new states, and files
left beside the project. Any project in neither state stops the run with an assertion (see
``tests/kills.py``).
"""

from __future__ import annotations

import argparse
import random
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from tests.kills import (  # noqa: E402
    Tally,
    kill_trials,
    seconds_to_run,
    write_small_site,
)

DATA = ROOT / "sample" / "data"
FIT = ("--models", "calendar_regression", "--origins", "2", "--workers", "1")
BUDGET = ("--start", "2026-01", "--paths", "100", "--workers", "1")


def _projects(folder: Path) -> dict[str, Path]:
    """The starting projects: imported, fitted, meters only (to overwrite), the sample campus."""
    meters, weather = write_small_site(folder)
    names = ("imported", "fitted", "old", "campus")
    paths = {name: folder / f"{name}.loadledger" for name in names}
    seconds_to_run(["new", paths["imported"], "--meters", meters, "--weather", weather,
                    "--timezone", "UTC"])  # fmt: skip
    paths["fitted"].write_bytes(paths["imported"].read_bytes())
    seconds_to_run(["fit", paths["fitted"], *FIT])
    seconds_to_run(["new", paths["old"], "--meters", meters, "--timezone", "UTC"])
    seconds_to_run(["new", paths["campus"], "--timezone", "America/Chicago",
                    "--meters", DATA / "electricity-15min.xlsx"])  # fmt: skip
    return paths | {"meters": meters, "weather": weather}


def _commands(p: dict[str, Path]) -> list[tuple]:
    def new(*extra):
        return lambda t: ("new", t, "--meters", p["meters"], "--weather", p["weather"],
                          "--timezone", "UTC", *extra)  # fmt: skip

    return [
        ("new", new(), None),
        ("new --overwrite", new("--overwrite"), p["old"]),
        ("clean --apply-recommended", lambda t: ("clean", t, "--apply-recommended"), p["campus"]),
        ("fit", lambda t: ("fit", t, *FIT), p["imported"]),
        ("budget (fitted)", lambda t: ("budget", t, *BUDGET), p["fitted"]),
        ("budget (not fitted)", lambda t: ("budget", t, *BUDGET), p["imported"]),
    ]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--per-command", type=int, default=20, help="kills per command (20)")
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args()
    chance = random.Random(args.seed)
    started = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="kill-long-") as name:
        folder = Path(name)
        projects = _projects(folder)
        tallies = []
        for number, (command, args_of, before) in enumerate(_commands(projects)):
            trials = folder / f"command-{number}"
            trials.mkdir()
            tally = kill_trials(command, args_of, before, trials, kills=args.per_command,
                                chance=chance)  # fmt: skip
            print(tally.line(), flush=True)
            tallies.append(tally)
    total = Tally("all", leftovers=[name for t in tallies for name in t.leftovers])
    for field in ("kills", "finished", "intact", "old", "new"):
        setattr(total, field, sum(getattr(t, field) for t in tallies))
    print(total.line())
    print(f"projects in neither state: 0; {time.perf_counter() - started:.0f} s in all")


if __name__ == "__main__":
    main()
