"""The calendar proposed from the readings: how well, how fast, and what it does to a budget.

Run with ``.venv/bin/python tests/benchmarks/bench_calendar_proposal.py [--budgets]`` (not
collected by pytest). Prints

* on the invented sites of tests/engine/test_calendar_proposal.py (seeds 1–20): the recall and
  precision of the true break weekdays, and the share of the US holidays that ran low;
* on the sample campus (all meters and the weather, no calendar given): each true break,
  closure and summer session beside the proposed stretch and the days between their ends,
  the holidays' evidence, and the seconds the proposal takes;
* with ``--budgets``: one-shot budgets of the sample's five electricity meters for January and
  July 2026, from the day before each month, with the proposed calendar (the default now) and
  with none (``--holidays none`` and a calendar of one period long before the readings, as a
  one-shot budget had before), each P50 beside the generator's clean month total
  (sample/data/truth.json). Several minutes per budget on a 2-core machine.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from engine.calendar_proposal import propose_calendar, propose_for_site  # noqa: E402
from engine.reading import ReadOptions  # noqa: E402
from engine.steps.cleaning import apply_recommended_everywhere  # noqa: E402
from engine.steps.importing import create_project, read_project_files  # noqa: E402
from engine.steps.prepared_site import prepare_site  # noqa: E402
from tests.engine.test_calendar_proposal import synthetic_site, weekdays_in  # noqa: E402
from tests.engine.test_calendar_proposal_sample import (  # noqa: E402
    DATA,
    found_stretches,
    true_stretches,
)

ZONE = "America/Chicago"
LOADLEDGER = [sys.executable, "-c", "from desktop.launcher import main; main()"]


def synthetic() -> None:
    print("invented sites (3 years, 3 meters, US holidays): recall, precision, holidays low")
    scores = []
    for seed in range(1, 21):
        daily, hourly, truth = synthetic_site("US", seed)
        proposal = propose_calendar(daily, ZONE, hourly)
        weekdays = truth[truth.index.day_of_week < 5]
        true = weekdays.index[weekdays == "break"]
        found = weekdays_in([p for p in proposal.periods if not p.projected])
        found = found.intersection(weekdays.index)
        hit = len(found.intersection(true))
        share = proposal.holidays.low / proposal.holidays.tested if proposal.holidays else 0.0
        scores.append((hit / len(true), hit / max(len(found), 1), share))
    recall, precision, holidays = np.array(scores).T
    for name, values in (("recall", recall), ("precision", precision), ("holidays", holidays)):
        print(f"  {name:<9} mean {values.mean():.3f}  min {values.min():.3f}")


def sample() -> None:
    files = read_project_files(
        [DATA / "electricity-15min.xlsx", DATA / "gas-boilerhouse-daily.csv",
         DATA / "chilled-water-plant.csv"],
        weather=[DATA / "weather-station.csv"],
        options=ReadOptions(timezone=ZONE),
    )  # fmt: skip
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "sample.loadledger"
        with create_project(path, files, timezone=ZONE) as project:
            apply_recommended_everywhere(project)
            site = prepare_site(project)
            started = time.perf_counter()
            proposal = propose_for_site(site)
            seconds = time.perf_counter() - started
    print(f"\nsample campus: proposal in {seconds:.1f} s")
    for kinds in ({"break", "closure"}, {"summer"}):
        found = found_stretches(proposal, kinds)
        for first, last in true_stretches(kinds):
            near = [(a, b) for a, b in found if a <= last and b >= first]
            words = ", ".join(f"{a} – {b} ({(a - first).days:+d}, {(b - last).days:+d} days)"
                              for a, b in near) or "not found"  # fmt: skip
            print(f"  {'/'.join(sorted(kinds)):<13} {first} – {last}: {words}")
    print(f"  {proposal.holidays.evidence if proposal.holidays else 'no holidays proposed'}")


def budgets() -> None:
    truth = json.loads((DATA / "truth.json").read_text())["electricity"]["buildings"]
    with tempfile.TemporaryDirectory() as folder:
        old = Path(folder) / "none.csv"
        old.write_text("Period,First Day,Last Day,Kind\nLong ago,1990-01-01,1990-01-02,other\n")
        print("\none-shot budgets of the five electricity meters: P50 error against the truth")
        for month, as_of in (("2026-01", "2025-12-31"), ("2026-07", "2026-06-30")):
            for label, extra in (("proposed", []), ("none", ["--holidays", "none",
                                                            "--calendar", str(old)])):  # fmt: skip
                started = time.perf_counter()
                done = subprocess.run(
                    [*LOADLEDGER, "budget", "--meters", str(DATA / "electricity-15min.xlsx"),
                     "--weather-file", str(DATA / "weather-station.csv"), "--timezone", ZONE,
                     "--start", month, "--as-of", as_of, "--paths", "300", "--json", *extra],
                    capture_output=True, text=True, check=True,
                )  # fmt: skip
                report = json.loads(done.stdout)
                errors = {}
                for meter in report["meters"]:
                    actual = truth[f"{meter['name']} (kWh)"]["monthly_kwh"][month]
                    errors[meter["name"]] = meter["total"]["quantiles"]["50"] / actual - 1
                mean = np.mean(np.abs(list(errors.values())))
                each = "  ".join(f"{name[:14]} {error:+.1%}" for name, error in errors.items())
                print(
                    f"  {month} {label:<9} mean |error| {mean:.1%}   {each}   "
                    f"({time.perf_counter() - started:.0f} s)"
                )


if __name__ == "__main__":
    pd.set_option("display.width", 120)
    synthetic()
    sample()
    if "--budgets" in sys.argv:
        budgets()
