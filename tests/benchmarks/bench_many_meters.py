"""A site with many meters: the budget modelled serially, in local worker processes and on a
Dask cluster, with equal results.

Run with ``.venv/bin/python tests/benchmarks/bench_many_meters.py [--meters 200]`` (not
collected by pytest). An invented small utility (Fernhollow Co-operative, a mild coastal
climate; ``--meters`` daily-read service points over three years, each a base load plus its
own heating and cooling response and noise) is imported from one wide CSV, each meter's model
is chosen once (daily change-point regression) and then the next-month budget is made three
times from the same project state, each in a fresh copy so nothing is reused between them:

* serially (``workers=1``);
* in local worker processes (one per core);
* on a ``distributed.LocalCluster`` of 2 single-threaded worker processes on 127.0.0.1.

It prints the three times, the time of a plain pandas read of the meter file, and whether the
three budgets are equal meter by meter (they must be: each meter's work is the same
computation wherever it runs).
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from engine.project import Project  # noqa: E402
from engine.reading import ReadOptions  # noqa: E402
from engine.steps.budgeting import budget_project, budget_request  # noqa: E402
from engine.steps.fitting import fit_meters  # noqa: E402
from engine.steps.importing import create_project, read_project_files  # noqa: E402

TIMEZONE = "Pacific/Auckland"


def write_site(folder: Path, meters: int) -> tuple[Path, Path]:
    """The invented co-operative's daily meter reads and hourly weather, as CSV files."""
    rng = np.random.default_rng(200)
    hours = pd.date_range("2022-01-01", "2024-12-31 23:00", freq="h")
    day_of_year = hours.day_of_year.to_numpy()
    seasons = 5 * np.cos(2 * np.pi * (day_of_year - 30) / 365.25)
    temps = 14 + seasons + rng.normal(0, 1.5, len(hours))
    weather = folder / "fernhollow-weather.csv"
    pd.DataFrame(
        {"Air temperature (°C)": temps.round(2)},
        index=pd.Index(hours.strftime("%Y-%m-%d %H:%M"), name="Time"),
    ).to_csv(weather)
    daily_temps = pd.Series(temps, index=hours).resample("D").mean()
    days = daily_temps.index
    t = daily_temps.to_numpy()
    base = rng.uniform(20, 400, meters)
    heating = rng.uniform(0, 12, meters)
    cooling = rng.uniform(0, 6, meters)
    load = (
        base[:, None]
        + heating[:, None] * np.maximum(15 - t, 0)
        + cooling[:, None] * np.maximum(t - 19, 0)
    ) * (1 + rng.normal(0, 0.06, (meters, len(days))))
    frame = pd.DataFrame(
        load.T.round(2),
        index=pd.Index(days.strftime("%Y-%m-%d"), name="Read date"),
        columns=[f"Service point {number:03d} (kWh)" for number in range(1, meters + 1)],
    )
    reads = folder / "fernhollow-daily-reads.csv"
    frame.to_csv(reads)
    return reads, weather


def budget_totals(path: Path, **where) -> tuple[float, dict[str, dict]]:
    """Seconds of one next-month budget, and every meter's period total."""
    with Project.open(path) as project:
        request = budget_request(project, ["2025-01"], paths=200)
        started = time.perf_counter()
        run = budget_project(project, request, **where).run.to_json()
        seconds = time.perf_counter() - started
    return seconds, {meter["name"]: meter["total"] for meter in run["meters"]}


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--meters", type=int, default=200)
    args = parser.parse_args()
    from distributed import LocalCluster

    with tempfile.TemporaryDirectory(prefix="bench-many-") as temp:
        folder = Path(temp)
        reads, weather = write_site(folder, args.meters)
        started = time.perf_counter()
        pd.read_csv(reads)
        read_seconds = time.perf_counter() - started
        project = folder / "fernhollow.loadledger"
        files = read_project_files([reads], (), [weather], ReadOptions(timezone=TIMEZONE))
        with create_project(project, files, timezone=TIMEZONE) as made:
            fit_meters(made, families=["daily_change_point"], origins=2)
        copies = {}
        for mode in ("serial", "processes", "cluster"):
            copies[mode] = folder / f"{mode}.loadledger"
            shutil.copyfile(project, copies[mode])
        timings, totals = {}, {}
        timings["serial"], totals["serial"] = budget_totals(copies["serial"], workers=1)
        timings["processes"], totals["processes"] = budget_totals(copies["processes"])
        with LocalCluster(
            n_workers=2, threads_per_worker=1, host="127.0.0.1", dashboard_address=None
        ) as cluster:
            timings["cluster"], totals["cluster"] = budget_totals(
                copies["cluster"], scheduler=cluster.scheduler_address
            )
    print(f"{args.meters} daily meters, 3 years each; next-month budget, 200 paths")
    print(f"plain pandas read of the meter file: {read_seconds:.2f} s")
    for mode, seconds in timings.items():
        print(f"{mode:10} {seconds:7.1f} s")
    equal = totals["processes"] == totals["serial"] == totals["cluster"]
    print(f"results equal across the three: {equal}")
    return 0 if equal else 1


if __name__ == "__main__":
    sys.exit(main())
