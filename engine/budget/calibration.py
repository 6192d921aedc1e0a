"""How well past budget ranges held the actual month totals, and the correction that makes
them hold what they promise.

The check: over past origins (month-ahead budgets made before each month, see
:func:`engine.budget.backtest_budget`), count the months whose actual total fell inside the
P-low–P-high range.

The correction is conformal scaling (after split-conformal prediction: Vovk, Gammerman &
Shafer 2005; Lei et al. 2018, "Distribution-free predictive inference for regression", from
memory): each past month gets the score ``r = (actual − mean) / (P-high − mean)`` above the
mean of the paths, ``(mean − actual) / (mean − P-low)`` below, the factor by which that month's
half-width around the mean would have had to be multiplied to hold it. The scale is the
``c``-quantile of the scores (``c`` the nominal coverage, 0.8 for P10–P90) taken at the rank
``c · (n + 1)`` among the ``n`` sorted scores, interpolated between order statistics (Hyndman &
Fan 1996, definition 6). That rank is the one at which a new, exchangeable month falls below
the scale with probability ``c``: the ``k``-th smallest of ``n`` scores is exceeded by a new one
with probability ``1 − k / (n + 1)``. The split-conformal rank ``⌈(n + 1) · c⌉`` would
guarantee *at least* ``c`` and overshoots with a year of months; the usual empirical quantile
(rank ``1 + c · (n − 1)``) undershoots, as the scales from twelve months held 75 % instead of 80.

The correction is applied whenever there is enough evidence, also when the count held looks
like an honest range's luck: a range that held 8 of 12 months (67 %) is as likely to be too
narrow as an honest one, and leaving every such meter alone kept almost every meter of the
sample campus at about two months in three (65 % over 192 meter-months).

Why ranges come out narrow in the first place: the simulation draws a month's model errors in
blocks of days from the errors of the past year's months, so a whole month's level error (a
model refitted before the month lands a few per cent off for all of it) is averaged with other
months' and the month totals vary less than they did. That shortfall is shared by the meters
of a site (same refits, same weather, same way of drawing), so the evidence is pooled: a
meter's scale is the quantile of its own scores, each counting once, together with the site's
other meters' scores, counting together as :data:`POOLED_MONTHS` months (a weighted quantile,
as in weighted conformal prediction: Tibshirani, Barber, Candès & Ramdas 2019, from memory).
A meter with a year of its own months thus leans two thirds on its site; a site corrects its
ranges after :data:`SHORTEST_WINDOW` past months instead of twelve (not sooner, however many
meters it has: they share their months' weather, so a site's few months are a few draws of
it; counted as months, eight meters corrected the sample's first issued ranges on two to four
past months, by factors near 3 that held every one of those months), and a single meter still
needs :data:`MIN_MONTHS` of its own. On the sample campus (28 past month-ahead budgets
per meter, the last 24 issued as the tool would have issued them) the ranges held 63 % raw,
77 % corrected per meter alone over a year (one meter 67 %), 84 % pooled over a year (every
meter 79–92 %) and 81 % pooled over the last six months (every meter 75–92 %); with the
binomial leave-alone band of earlier versions, 70 %, most meters about two in three.

The site's meters share that shortfall only as far as their past ranges agree: a meter whose
load hardly follows the weather misses by less than the weather-driven ones beside it, and
pooled fully it was widened with their misses (on the sample campus, Science Labs' ranges
held 23 of 24 issued months). So the pool's weight is an empirical-Bayes shrinkage of the
meters' own scales towards the site's (a random-effects mean, as in DerSimonian & Laird 1986;
James–Stein shrinkage; from memory): each meter's log scale from its own scores has a
sampling variance ``v`` (a bootstrap of its scores); the spread of the meters' log scales
beyond those variances is the between-meter variance ``τ²`` (method of moments, at least 0);
the site's share of a meter's evidence is then ``v / (v + τ²)``, so the other meters count as
``n · v / τ²`` months, ``n`` its months in the window the spread is judged on (the months
of its own at which they would weigh as much as the site's; all of :data:`POOLED_MONTHS` when
the meters agree within their sampling noise, ``τ² = 0``). The spread is judged on the last
:data:`SHORTEST_WINDOW` months, the months a site's scales are taken from when its meters agree,
when at least :data:`MIN_METERS_FOR_SPREAD` meters have a score in each of them; a meter that
leans less on its site needs more months of its own, so its window (below) grows, and only its
own. Judged on a year of months instead, a meter whose ranges had lately come to miss by less
than its site's kept being widened with them: the meters' relative misses move as their models
learn, and the year's older months said they agreed. Replayed on 60 sites of three, five or
eight of the sample campus's meters (``tests/benchmarks/bench_calibration_sites.py``, 24 issued
months per meter), a meter fell outside 65–95 % on 21 sites judged on a year (Science Labs 19
times, always above) and on 1 judged on six months, with 84.9 and 83.6 % held on average; from
the same sample's past budgets under the weather that happened, on 11 sites (Library) and on
none. The price is power: six months of scores tell alike meters apart by chance more often,
so six alike meters pool fully 58 % of the time instead of 83 % (100 invented sites, the
module's tests). On the whole sample campus the issued ranges of the last 24 past month-ahead
budgets held 83 % overall and 75–92 % per meter (85 % and 75–96 % judged on a year); since a
site's pool counts from six months on (above), 81 % and 71–88 %, and no site of the 60 has a
meter outside 65–95 % (average 80.7 % on sites of three meters, 81.1 % on five). These
figures move with the past budgets, a month in 24 at a time per meter.

Only recent months count: a model's errors shrink as its history grows, so older months,
budgeted from less data, would keep ranges too wide. The window is the shortest, from
:data:`SHORTEST_WINDOW` to :data:`CALIBRATION_WINDOW` months, that gives every meter
:data:`MIN_MONTHS` of evidence: six months on a site of three meters or more, a year for a
single meter.

Nor do the past budgets of the first years narrow a range: made from model errors of refits on
less than a year of readings, they were wider than a budget made later and held by more, so
a range is narrowed only on *settled* past budgets (:func:`site_calibrations`); widening takes
every recent month, so a range found too narrow is widened at once.

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
from dataclasses import replace

import numpy as np
import pandas as pd

from engine.budget.result import Calibration
from engine.errors import InputError

#: Fewest months of evidence (own months plus the pooled weight of the site's other meters)
#: from which a range is corrected.
MIN_MONTHS = 12
#: How many months the site's other meters' scores count for, together, in a meter's scale.
POOLED_MONTHS = 24
#: Fewest meters with :data:`SHORTEST_WINDOW` months of scores each from which the spread of
#: the site's scales is judged; with fewer, the other meters count fully.
MIN_METERS_FOR_SPREAD = 3
#: Bootstrap resamples of a meter's scores for the sampling variance of its log scale.
BOOTSTRAP_DRAWS = 200
#: Largest factor a range is widened by; beyond it the model is not fit for budgeting.
MAX_SCALE = 5.0
#: How many of the most recent past months calibrate a range, at most and at least.
CALIBRATION_WINDOW = 12
SHORTEST_WINDOW = 6


def miss_scores(
    actual: np.ndarray, middle: np.ndarray, low: np.ndarray, high: np.ndarray
) -> np.ndarray:
    """Each month's miss from ``middle`` over the range's half-width on its side (see the
    module notes); a month whose centre lies outside its range scores infinity on that side."""
    above = actual >= middle
    width = np.where(above, high - middle, middle - low)
    miss = np.abs(actual - middle)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(miss == 0, 0.0, miss / width)


def rank_quantile(scores: np.ndarray, coverage: float, weights: np.ndarray | None = None) -> float:
    """The ``coverage`` quantile of ``scores`` at the rank ``coverage · (W + 1)``.

    ``W`` is the total weight (the count with unit weights: Hyndman & Fan 1996, definition 6);
    each sorted score sits at its cumulative weight and ranks between them are interpolated.
    A rank beyond the total weight takes the largest score.
    """
    scores = np.asarray(scores, dtype=np.float64)
    weights = np.ones_like(scores) if weights is None else np.asarray(weights, dtype=np.float64)
    order = np.argsort(scores, kind="stable")
    ranks = np.cumsum(weights[order])
    target = coverage * (ranks[-1] + 1.0)
    return float(np.interp(target, ranks, scores[order]))


def conformal_scale(
    actual: np.ndarray,
    middle: np.ndarray,
    low: np.ndarray,
    high: np.ndarray,
    coverage: float,
    pooled: np.ndarray | None = None,
    pooled_months: float = POOLED_MONTHS,
) -> float:
    """The conformal factor on the half-widths around ``middle`` (see the module notes).

    ``middle`` is the centre ranges are widened around (the paths' mean); ``pooled`` holds
    the scores (:func:`miss_scores`) of the site's other meters, which count together as
    ``pooled_months`` months at most.
    """
    own = miss_scores(actual, middle, low, high)
    others = np.empty(0) if pooled is None else np.asarray(pooled, dtype=np.float64)
    each = _pooled_weight(len(others), pooled_months)
    weights = np.r_[np.ones(len(own)), np.full(len(others), each)]
    return rank_quantile(np.r_[own, others], coverage, weights)


def _pooled_weight(count: int, pooled_months: float = POOLED_MONTHS) -> float:
    """The weight of each of ``count`` pooled scores: one each, at most ``pooled_months``
    in all."""
    return min(1.0, pooled_months / count) if count else 0.0


def log_scale_variance(scores: np.ndarray, coverage: float) -> tuple[float, float]:
    """The log of the scale ``scores`` alone give (:func:`rank_quantile`) and its sampling
    variance over :data:`BOOTSTRAP_DRAWS` resamples (a fixed seed: the same scores always give
    the same answer). Scores must be finite and positive enough to take logs of."""
    draws = np.random.default_rng(0).integers(0, len(scores), (BOOTSTRAP_DRAWS, len(scores)))
    scales = np.array([rank_quantile(scores[drawn], coverage) for drawn in draws])
    floor = np.finfo(np.float64).tiny
    return (
        math.log(max(rank_quantile(scores, coverage), floor)),
        float(np.var(np.log(np.maximum(scales, floor)))),
    )


def agreed_pooling(scores: dict[str, np.ndarray], coverage: float) -> dict[str, float]:
    """Per meter of ``scores`` (each meter's scores over the window the spread is judged on),
    how many months the site's other meters count for in its scale: as far as the meters' own
    scales agree (empirical-Bayes shrinkage, see the module notes), at most
    :data:`POOLED_MONTHS`."""
    limits = {name: float(POOLED_MONTHS) for name in scores}
    usable = {name: values[np.isfinite(values) & (values > 0)] for name, values in scores.items()}
    usable = {name: values for name, values in usable.items() if len(values) >= SHORTEST_WINDOW}
    if len(usable) < MIN_METERS_FOR_SPREAD:
        return limits
    found = {name: log_scale_variance(values, coverage) for name, values in usable.items()}
    logs = np.array([log for log, _ in found.values()])
    variances = np.array([variance for _, variance in found.values()])
    spread = max(0.0, float(np.var(logs, ddof=1)) - float(variances.mean()))
    if spread == 0:
        return limits
    for name, (_, variance) in found.items():
        # n · v / τ², n the meter's months here: the pool's share v / (v + τ²) of its evidence
        limits[name] = min(float(POOLED_MONTHS), len(usable[name]) * variance / spread)
    return limits


def _columns(level_low: int, level_high: int) -> list[str]:
    return ["actual kWh", f"P{level_low}", "mean kWh", f"P{level_high}"]


def pair_scores(pairs: pd.DataFrame, level_low: int = 10, level_high: int = 90) -> np.ndarray:
    """The miss scores of the past budgets in ``pairs`` that have an actual total."""
    known = pairs.dropna(subset=_columns(level_low, level_high))
    actual, low, middle, high = (
        known[column].to_numpy(dtype=np.float64) for column in _columns(level_low, level_high)
    )
    return miss_scores(actual, middle, low, high)


def calibrate(
    pairs: pd.DataFrame,
    *,
    level_low: int = 10,
    level_high: int = 90,
    tolerance: float | None = None,
    min_months: int = MIN_MONTHS,
    periods: str = "months",
    pooled: np.ndarray | None = None,
    pooled_months: float = POOLED_MONTHS,
) -> Calibration:
    """The coverage of past month-total ranges and the scale that corrects it.

    Parameters
    ----------
    pairs : pandas.DataFrame
        One row per past month: ``actual kWh`` and the budget's ``mean kWh``,
        ``P{level_low}`` and ``P{level_high}`` made before it (rows without an actual are
        left out).
    level_low, level_high : int, default 10 and 90
    tolerance : float, optional
        Leave the range alone while the share held is within this share of the nominal
        coverage; by default it is always corrected (see the module notes).
    min_months : int, default 12
        Less evidence (own months plus the pooled weight) is reported but not corrected.
    periods : {"months", "bills"}, default "months"
        What the past budgets covered, for the words (bill accounts check past bills).
    pooled : numpy.ndarray, optional
        The miss scores (:func:`pair_scores`) of the site's other meters on the same window.
    pooled_months : float, default POOLED_MONTHS
        How many months the pooled scores count for together, at most.

    Returns
    -------
    Calibration
        ``held`` of ``tried`` months, the scale (1.0 when none was applied, at most
        :data:`MAX_SCALE`) and the method in words.
    """
    columns = _columns(level_low, level_high)
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
    others = 0 if pooled is None else len(pooled)
    counted = others * _pooled_weight(others, pooled_months)
    evidence = tried + counted

    def unchanged(reason: str) -> Calibration:
        return Calibration(
            level_low, level_high, held, tried, 1.0, f"not corrected: {reason}", periods=periods
        )

    if tried == 0 or evidence < min_months - 1e-9:
        return unchanged(f"{tried} past {periods} are fewer than the {min_months} needed")
    if tolerance is not None and abs(held - coverage * tried) <= tolerance * tried + 1e-9:
        return unchanged(f"{held} of {tried} is within {tolerance:.0%} of the nominal {nominal}")
    scale = conformal_scale(actual, middle, low, high, coverage, pooled, pooled_months)
    if not math.isfinite(scale) or scale <= 0:
        return unchanged(f"{held} of {tried} held, but the ranges have no width to scale")
    method = (
        f"conformal scaling of the half-widths around the mean by the {nominal} quantile "
        f"(rank {coverage:g}·(n + 1)) of the misses of the {tried} most recent past {periods}"
    )
    if others:
        weight = f"{round(counted, 1):g}"  # "24", "6", "1.4": a pool that agrees less counts less
        noun = periods[:-1] if weight == "1" else periods
        method += f" and of the site's other meters' {others} (counting as {weight} {noun})"
    if scale > MAX_SCALE:
        method += f", capped at {MAX_SCALE:g} (the past {periods} asked for {scale:.1f})"
        scale = MAX_SCALE
    return Calibration(level_low, level_high, held, tried, scale, method, periods=periods)


def site_calibrations(
    pairs: pd.DataFrame,
    *,
    level_low: int = 10,
    level_high: int = 90,
    window: int = CALIBRATION_WINDOW,
    min_months: int = MIN_MONTHS,
) -> dict[str, Calibration]:
    """Per meter name, its calibration from the most recent months of ``pairs`` (columns
    ``month`` and ``name`` beside those :func:`calibrate` reads), pooled with the site's other
    meters on the same months (see :func:`agreed_pooling` for how far the pool counts).

    A range is narrowed only on the evidence of *settled* past budgets (a ``settled`` column,
    :mod:`engine.budget.past_budgets`; without one, every past budget counts as settled): the
    first past budgets of a short history drew their model errors from refits on a few
    months, so their ranges were wider than a budget's made later and held by more, which
    says nothing about today's. A meter the recent months would narrow is calibrated on the
    settled ones alone, and left as simulated when there are fewer than
    :data:`SHORTEST_WINDOW` months of them. On an invented mild campus budgeted one-shot from
    24 months with two to four years of history (``tests/benchmarks/bench_mild_campus.py``),
    the ranges of the first year were narrowed by 0.84–0.88 on the past budgets of the year
    before, made from refits on one to twelve months, and held 61 % of months; with this
    rule 72 %, and the two years 76 % instead of 71 %.
    """
    levels = (level_low, level_high)
    made = _pooled_calibrations(pairs, levels, window, min_months)
    narrowed = [name for name, calibration in made.items() if calibration.scale < 1]
    if not narrowed or "settled" not in pairs.columns or pairs["settled"].all():
        return made
    settled = pairs[pairs["settled"].astype(bool)]
    enough = settled["month"].nunique() >= SHORTEST_WINDOW
    again = _pooled_calibrations(settled, levels, window, min_months) if enough else {}
    for name in narrowed:
        own = settled.loc[settled["name"] == name, "month"]
        made[name] = again.get(name) or _not_narrowed(made[name], own.min() if len(own) else None)
    return made


def _not_narrowed(calibration: Calibration, first_settled: str | None) -> Calibration:
    """``calibration`` left as simulated: too few settled past budgets to narrow by."""
    periods = calibration.periods
    which = f"those before {first_settled}" if first_settled else f"all the past {periods}"
    reason = (
        f"not corrected: the past {periods} would narrow the range, but {which} drew their "
        "model errors from models fitted on less than a year of readings, which miss by more "
        f"than this budget's; fewer than {SHORTEST_WINDOW} {periods} were budgeted with "
        "models fitted on a year or more"
    )
    return replace(calibration, scale=1.0, method=reason)


def _pooled_calibrations(
    pairs: pd.DataFrame, levels: tuple[int, int], window: int, min_months: int
) -> dict[str, Calibration]:
    """Per meter name, its calibration from the most recent months of ``pairs``, pooled with
    the site's other meters on the same months. The pool counts as far as the meters' scales
    over the last :data:`SHORTEST_WINDOW` months agree (:func:`agreed_pooling`), the months a
    site's scales are taken from when its meters agree; each meter's months are the fewest,
    from :data:`SHORTEST_WINDOW` to ``window``, that give it ``min_months`` of evidence."""
    level_low, level_high = levels
    months = sorted(pairs["month"].unique())
    known = pairs.dropna(subset=_columns(level_low, level_high))
    judged = months[-min(SHORTEST_WINDOW, window) :]
    limits = agreed_pooling(
        {
            name: pair_scores(rows, level_low, level_high)
            for name, rows in known[known["month"].isin(judged)].groupby("name")
        },
        (level_high - level_low) / 100.0,
    )
    # However many meters pool, they share their months' weather: a site's few months are a
    # few draws of it, so the pool counts from SHORTEST_WINDOW months on.
    few = known["month"].nunique() < SHORTEST_WINDOW
    made = {}
    for name in pairs["name"].unique():
        most = 0.0 if few else limits.get(name, float(POOLED_MONTHS))
        for span in range(min(SHORTEST_WINDOW, window), window + 1):
            recent = known[known["month"].isin(months[-span:])]
            own = recent[recent["name"] == name]
            if len(own) + min(most, len(recent) - len(own)) >= min_months - 1e-9:
                break
        others = recent[recent["name"] != name]
        made[name] = calibrate(
            pairs[(pairs["name"] == name) & pairs["month"].isin(months[-span:])],
            level_low=level_low,
            level_high=level_high,
            min_months=min_months,
            pooled=pair_scores(others, level_low, level_high) if len(others) else None,
            pooled_months=most,
        )
    return made


def rolling_calibration(
    pairs: pd.DataFrame,
    *,
    level_low: int = 10,
    level_high: int = 90,
    first: int = MIN_MONTHS,
    window: int = CALIBRATION_WINDOW,
    min_months: int = MIN_MONTHS,
) -> pd.DataFrame:
    """Each month's range corrected by the calibration of the ``window`` months before it.

    Parameters
    ----------
    pairs : pandas.DataFrame
        Past budgets of one meter, or of a site's meters (a ``name`` column; each meter is
        then pooled with the others, as :func:`site_calibrations`), with a ``month`` column.
    first : int, default 12
        Months left out at the start (with ``first=0`` every month comes back as the tool
        would have issued it: raw while there is too little evidence before it).
    min_months : int, default 12
        As in :func:`calibrate`.

    Returns
    -------
    pandas.DataFrame
        Per corrected month and meter: ``month``, ``name``, ``scale``, the corrected
        ``P{level_low}`` and ``P{level_high}`` (named with ``corrected``), and whether the
        range ``held`` before and after.
    """
    low, high = f"P{level_low}", f"P{level_high}"
    frame = pairs if "name" in pairs.columns else pairs.assign(name="meter")
    months = sorted(frame["month"].unique())
    rows = []
    for position in range(first, len(months)):
        before = frame[frame["month"].isin(months[max(0, position - window) : position])]
        made = site_calibrations(
            before, level_low=level_low, level_high=level_high, window=window,
            min_months=min_months,
        ) if len(before) else {}  # fmt: skip
        for month in frame[frame["month"] == months[position]].to_dict("records"):
            scale = made[month["name"]].scale if month["name"] in made else 1.0
            middle = month["mean kWh"]
            lower = middle - scale * (middle - month[low])
            upper = middle + scale * (month[high] - middle)
            actual = month["actual kWh"]
            rows.append(
                {
                    "month": month["month"],
                    "name": month["name"],
                    "scale": scale,
                    f"corrected {low}": lower,
                    f"corrected {high}": upper,
                    "held": bool(month[low] <= actual <= month[high]),
                    "held corrected": bool(lower <= actual <= upper),
                }
            )
    return pd.DataFrame(rows)
