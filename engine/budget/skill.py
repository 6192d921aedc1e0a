"""The budget's P50 beside the budgets a finance office would make without the tool.

Two naive month budgets are scored on the same past months as the range's calibration
(:mod:`engine.budget.calibration`): the same month last year (its metered total, the usual
office practice), and a seasonal naive budget, the last whole week before the month repeated
over it (the seasonal naive method with a weekly season: Hyndman & Athanasopoulos,
*Forecasting: Principles and Practice*, 3rd ed., section 5.2, from memory). A naive budget
needs only readings from before the month, so it is what a budget made then could have used.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.budget.periods import BudgetWindow
from engine.budget.result import Skill

#: The baselines, as budgets and their readers name them.
LAST_YEAR = "the same month last year"
SEASONAL_NAIVE = "the last week repeated"
#: Columns of the past budgets' table holding each baseline's month total.
LAST_YEAR_COLUMN = "last year kWh"
SEASONAL_NAIVE_COLUMN = "last week kWh"
_WEEK = pd.DateOffset(days=7)


def baseline_windows(
    start: pd.Timestamp, month: str, timezone: str
) -> dict[str, tuple[pd.Timestamp, pd.Timestamp, float]]:
    """Per baseline column, the UTC span whose metered total it takes and the factor it is
    multiplied by: the same month a year before (1), and the 7 local days before ``start``
    (the month's days / 7)."""
    year_before = BudgetWindow.of([str(pd.Period(month, freq="M") - 12)], timezone)
    week_start = (start.tz_convert(timezone) - _WEEK).tz_convert("UTC")
    days = pd.Period(month, freq="M").days_in_month
    return {
        LAST_YEAR_COLUMN: (year_before.start, year_before.end, 1.0),
        SEASONAL_NAIVE_COLUMN: (week_start, start, days / 7.0),
    }


def skill(pairs: pd.DataFrame, column: str, baseline: str, middle: str = "P50") -> Skill:
    """The ``middle`` column's MAPE against ``column``'s over the months both are known."""
    actual, ours, theirs = (
        pairs[name].to_numpy(dtype=np.float64) for name in ("actual kWh", middle, column)
    )
    usable = np.isfinite(actual) & np.isfinite(ours) & np.isfinite(theirs) & (actual != 0)
    if not usable.any():
        return Skill(baseline, 0, float("nan"), float("nan"))
    scale = np.abs(actual[usable])
    return Skill(
        baseline=baseline,
        months=int(usable.sum()),
        p50_mape=float(np.mean(np.abs(ours[usable] - actual[usable]) / scale) * 100),
        baseline_mape=float(np.mean(np.abs(theirs[usable] - actual[usable]) / scale) * 100),
    )
