"""Refits before many monthly cuts: shared work against fits from scratch, on a sample meter.

Run with ``.venv/bin/python tests/benchmarks/bench_refits.py`` (not collected by pytest). The
meter is the sample campus's Library (3 years of 15-minute readings fitted at the hour, with
the sample weather and calendar, as the fit command prepares it), from the cleaned project
``out/cleaned.loadledger`` (made by ``installer/run-sample.sh``; imported afresh when absent).
For each explainable linear family (and the last-year-adjusted regression built on the
calendar one), the 24 refits a first budget makes (one before each of the last 24 whole
months) are timed on one BLAS thread both ways: one ``fit_before_each`` call and 24 fits from
scratch on ``inputs.window(end=cut)``. Shared work: the calendar regression's features,
temperature order, calendar columns and month-block ``XᵀX``; the time-of-week regression's
slots, labels and usable rows (each window sums its rows per slot and temperature bin); the
daily change-point regression's days (each window is the history's first days, its day
shapes summed between cuts). Printed: seconds each way (best of three) and the largest
relative difference of the next quarter's predictions between the two.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from engine.backtest import backtest_origins  # noqa: E402
from engine.models import MODEL_FAMILIES  # noqa: E402
from engine.project import Project  # noqa: E402
from engine.steps.prepared_site import prepare_site  # noqa: E402

PROJECT = ROOT / "out" / "cleaned.loadledger"
FAMILIES = (
    "calendar_regression",
    "time_of_week_temperature",
    "daily_change_point",
    "last_year_adjusted",
)
CUTS = 24
QUARTER = pd.Timedelta(days=92)


def best(work, repeats: int = 3) -> tuple[float, object]:
    times, result = [], None
    for _ in range(repeats):
        began = time.perf_counter()
        result = work()
        times.append(time.perf_counter() - began)
    return min(times), result


def main() -> int:
    if not PROJECT.exists():
        print(f"no {PROJECT.relative_to(ROOT)}: run installer/run-sample.sh first")
        return 1
    with Project.open(PROJECT) as project:
        inputs = prepare_site(project, ["Library"]).meter("Library").inputs
    cuts = list(backtest_origins(inputs.index, inputs.timezone, CUTS, inputs.interval))
    print(f"Library: {len(inputs.index):,} hourly intervals, {len(cuts)} cuts")
    print(f"{'family':<28}{'shared s':>10}{'scratch s':>11}{'speed-up':>10}{'max rel diff':>14}")
    with threadpool_limits(limits=1):
        for name in FAMILIES:
            family = MODEL_FAMILIES[name]
            shared_s, shared = best(lambda family=family: family().fit_before_each(inputs, cuts))
            scratch_s, scratch = best(
                lambda family=family: [family().fit(inputs.window(end=cut)) for cut in cuts]
            )
            worst = 0.0
            for cut, one, other in zip(cuts, shared, scratch, strict=True):
                ahead = inputs.window(start=cut, end=cut + QUARTER).without_energy()
                a, b = one.predict(ahead).to_numpy(), other.predict(ahead).to_numpy()
                worst = max(worst, float(np.nanmax(np.abs(a - b)) / np.nanmax(np.abs(b))))
            print(
                f"{name:<28}{shared_s:>10.2f}{scratch_s:>11.2f}{scratch_s / shared_s:>9.1f}x"
                f"{worst:>14.1e}"
            )
    return 0


if __name__ == "__main__":
    sys.exit(main())
