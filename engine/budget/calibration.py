"""How well past budget ranges held the actual month totals, and a correction when they did not.

The check: over past origins (month-ahead budgets made before each month, see
:func:`engine.budget.backtest_budget`), count the months whose actual total fell inside the
P-low–P-high range. The range is *off* when the share held differs from the nominal coverage
``c`` (80 % for P10–P90) by more than an honest range's own luck would explain, and at least
``min_months`` months were tried: the count held is off when an honest range would hold so
few months less than one time in ten (binomial tail probability under :data:`WIDEN_TAIL`), or
so many less than one time in twenty (:data:`NARROW_TAIL`). A budget whose range is too narrow
misleads more than one too wide, so narrowing asks for the stronger evidence: for a year of
months and an 80 % range, 7 or fewer held is widened and 8 to 12 left alone (12 of 12 happens
one year in fifteen); for forty months, 28 or fewer is widened and 37 or more narrowed. A fixed
``tolerance`` (a share either side) may be given instead.

The correction is conformal-style scaling (after split-conformal prediction: Vovk, Gammerman &
Shafer 2005; Lei et al. 2018, "Distribution-free predictive inference for regression", from
memory): each past month gets the score ``r = (actual − mean) / (P-high − mean)`` above the
mean of the paths, ``(mean − actual) / (mean − P-low)`` below; the scale is the empirical
``c``-quantile of the scores (``c`` the nominal coverage), the factor by which the half-widths
around the mean must be multiplied for that share of the past months to have been held. The
split-conformal rank ``⌈(n + 1) · c⌉`` would guarantee *at least* ``c`` and, with a year of
months, overshoots (ranges held 24 of 24 months on the UCI household data); the empirical
quantile aims at ``c`` itself, which is what "an 80 % range" promises a budget reader.

Only the most recent :data:`CALIBRATION_WINDOW` months count: a model's errors shrink as its
history grows, so older months, budgeted from less data, would keep ranges too wide (on the UCI
household data, all past months: 24 of 24 held; the last 12: 21 of 24).

The centre is the mean, not the P50, because the mean adds up: widening every path's days
around their mean widens its months and its period around theirs by the same factor
(:func:`engine.budget.widen`), so a corrected period total stays the sum of its corrected
months path by path and its P50 stays near the sum of theirs.

A scale above :data:`MAX_SCALE` is not a correction but a verdict: the simulated ranges missed
most months by far, so the model is not fit for budgeting that meter. The scale is then
capped there and the budget's cautions say so.

:func:`rolling_calibration` replays that month by month: each month's range is corrected with
the calibration of the months before it only, which is how the tool uses it.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy.stats import binom

from engine.budget.result import Calibration
from engine.errors import InputError

#: Fewest past months from which a range is corrected.
MIN_MONTHS = 12
#: A count held this unlikely (or less) for an honest range, on the low side, widens it.
WIDEN_TAIL = 0.10
#: The same on the high side narrows it: stronger evidence, since narrow ranges mislead more.
NARROW_TAIL = 0.05
#: Largest factor a range is widened by; beyond it the model is not fit for budgeting.
MAX_SCALE = 5.0


#: How many of the most recent past months calibrate a range.
CALIBRATION_WINDOW = 12


def conformal_scale(
    actual: np.ndarray, middle: np.ndarray, low: np.ndarray, high: np.ndarray, coverage: float
) -> float:
    """The conformal-style factor on the half-widths around ``middle`` (see module notes).

    ``middle`` is the centre ranges are widened around (the paths' mean); a month whose
    centre lies outside its range scores infinity on that side.
    """
    above = actual >= middle
    width = np.where(above, high - middle, middle - low)
    miss = np.abs(actual - middle)
    with np.errstate(divide="ignore", invalid="ignore"):
        scores = np.where(miss == 0, 0.0, miss / width)
    return float(np.quantile(scores, coverage, method="linear"))


def calibrate(
    pairs: pd.DataFrame,
    *,
    level_low: int = 10,
    level_high: int = 90,
    tolerance: float | None = None,
    min_months: int = MIN_MONTHS,
    periods: str = "months",
) -> Calibration:
    """The coverage of past month-total ranges and, when it is off, a scale that corrects it.

    Parameters
    ----------
    pairs : pandas.DataFrame
        One row per past month: ``actual kWh`` and the budget's ``mean kWh``,
        ``P{level_low}`` and ``P{level_high}`` made before it (rows without an actual are
        left out).
    level_low, level_high : int, default 10 and 90
    tolerance : float, optional
        How far (as a share) the coverage may stray from the nominal before it is corrected;
        by default decided by the binomial tail probability instead (see the module notes).
    min_months : int, default 12
        Fewer past months are reported but not corrected.
    periods : {"months", "bills"}, default "months"
        What the past budgets covered, for the words (bill accounts check past bills).

    Returns
    -------
    Calibration
        ``held`` of ``tried`` months, the scale (1.0 when none was applied, at most
        :data:`MAX_SCALE`) and the method in words.
    """
    columns = ["actual kWh", f"P{level_low}", "mean kWh", f"P{level_high}"]
    missing = [column for column in columns if column not in pairs.columns]
    if missing:
        raise InputError(
            f"the past budgets have no {', '.join(missing)} column(s) to calibrate with.",
            hint="Calibrate on the table backtest_budget returns, run with these levels.",
        )
    if not 0 < level_low < 50 < level_high < 100:
        raise ValueError("the levels must lie either side of 50")
    known = pairs.dropna(subset=columns)
    actual, low, middle, high = (known[column].to_numpy(dtype=np.float64) for column in columns)
    held = int(((actual >= low) & (actual <= high)).sum())
    tried = len(actual)
    coverage = (level_high - level_low) / 100.0
    nominal = f"{level_high - level_low} %"

    def unchanged(reason: str) -> Calibration:
        return Calibration(
            level_low, level_high, held, tried, 1.0, f"not corrected: {reason}", periods=periods
        )

    if tried < min_months:
        return unchanged(f"{tried} past {periods} are fewer than the {min_months} needed")
    if tolerance is None:
        few = binom.cdf(held, tried, coverage)  # this many held, or fewer
        many = binom.sf(held - 1, tried, coverage)  # this many held, or more
        if few >= WIDEN_TAIL and many >= NARROW_TAIL:
            return unchanged(
                f"{held} of {tried} is a count an honest {nominal} range gives (binomial tail "
                f"probabilities {few:.2f} for as few, {many:.2f} for as many)"
            )
    elif abs(held - coverage * tried) <= tolerance * tried + 1e-9:
        return unchanged(f"{held} of {tried} is within {tolerance:.0%} of the nominal {nominal}")
    scale = conformal_scale(actual, middle, low, high, coverage)
    if not math.isfinite(scale) or scale <= 0:
        return unchanged(f"{held} of {tried} held, but the ranges have no width to scale")
    method = (
        f"conformal-style scaling of the half-widths around the mean by the {nominal} quantile "
        f"of the misses of the {tried} most recent past {periods}"
    )
    if scale > MAX_SCALE:
        method += f", capped at {MAX_SCALE:g} (the past {periods} asked for {scale:.1f})"
        scale = MAX_SCALE
    return Calibration(level_low, level_high, held, tried, scale, method, periods=periods)


def rolling_calibration(
    pairs: pd.DataFrame,
    *,
    level_low: int = 10,
    level_high: int = 90,
    first: int = MIN_MONTHS,
    tolerance: float | None = None,
    window: int = CALIBRATION_WINDOW,
    min_months: int = MIN_MONTHS,
) -> pd.DataFrame:
    """Each month's range corrected by the calibration of the ``window`` months before it.

    Parameters
    ----------
    pairs : pandas.DataFrame
        One meter's (or roll-up's) past budgets in time order, as for :func:`calibrate`.
    first : int, default 12
        Months left out at the start (with ``first=0`` every month comes back as the tool
        would have issued it: raw while fewer than ``min_months`` months came before it).
    min_months : int, default 12
        Fewest earlier months from which a range is corrected, as in :func:`calibrate`.

    Returns
    -------
    pandas.DataFrame
        Per corrected month: ``scale``, the corrected ``P{level_low}`` and ``P{level_high}``
        (named with ``corrected``), and whether the range ``held`` before and after.
    """
    low, high = f"P{level_low}", f"P{level_high}"
    rows = []
    for position in range(first, len(pairs)):
        scale = calibrate(
            pairs.iloc[max(0, position - window) : position],
            level_low=level_low,
            level_high=level_high,
            tolerance=tolerance,
            min_months=min_months,
        ).scale
        month = pairs.iloc[position]
        middle = month["mean kWh"]
        lower = middle - scale * (middle - month[low])
        upper = middle + scale * (month[high] - middle)
        actual = month["actual kWh"]
        rows.append(
            {
                "month": month.get("month"),
                "scale": scale,
                f"corrected {low}": lower,
                f"corrected {high}": upper,
                "held": bool(month[low] <= actual <= month[high]),
                "held corrected": bool(lower <= actual <= upper),
            }
        )
    return pd.DataFrame(rows)
