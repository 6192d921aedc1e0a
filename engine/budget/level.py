"""A level that keeps up: where a meter's budget is centred, and the level error carried on.

A budget's paths add drawn days of the model's out-of-sample errors to its forecast
(:mod:`engine.budget.residuals`); those errors are there for the spread, so they are drawn
centred (their mean share of the forecast over the error window, ``b``, is taken out:
:func:`centred`), and where the centre lies is decided here, on the month-ahead backtest.

A model fitted on years of readings forecasts the level those years average; a meter whose
load drifts (a building filling up, equipment added or retired) runs above or below it, and a
"same month last year" budget carries the newer level where the model does not. Three
centres are compared on every past month ``k`` of the model's out-of-sample errors (each from
the refit made before its month, under the weather that happened: :mod:`engine.budget.refits`),
with ``r_k`` the month's relative error (actual / forecast − 1):

* the model's forecast as it is (``none``);
* the forecast times ``1 + b_k``, the mean error of the error window before the month
  (``year``: what drawing uncentred errors did);
* the forecast times ``1 + w × L_k``, ``L_k`` the relative error of the :data:`RECENT_DAYS`
  days before the month (``recent``), with ``w`` the share of such a gap past months carried
  into the next: the least-squares slope through the origin of ``r`` on ``L`` over the months
  before ``k``, kept within 0 and 1 (the lag-one autoregression coefficient of the monthly
  level error, the plainest error-correction term; common practice, no single source).

A correction is used only where the backtest shows it helps: corrected with what was known
before each month, its month totals must miss by at least :data:`MIN_GAIN` less on average
than the forecast as it is over at least :data:`MIN_CHECKED` months, and the gain must be more
than luck: the Diebold–Mariano statistic of the months' absolute-error differences (their mean
over its standard error; Diebold & Mariano 1995, "Comparing predictive accuracy", from memory)
must reach :data:`MIN_STATISTIC`, a one-sided test at 5 %. Of the two, the one that missed
less is used. Without the test, a correction that merely bettered more months than it worsened
was taken on the sample campus by meters whose models have no level error to speak of (the
noise of a dozen months passes that often) and moved their past budgets by up to 1 %: given
the weather that happened, Science Labs' past month totals lay 0.38 % from the noise-free load
on average so corrected, 0.24 % with the test. Levels beyond :data:`MAX_GAP` are faults or odd
months, not a drifting level: they are neither learned from nor carried. A budget month
``h`` months after the as-of date carries ``w**h`` of today's recent gap (a level error decays
as the past months showed it to; a steady drift has ``w`` near 1 and keeps it), or all of the
year's mean error.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from engine.budget.periods import BudgetWindow, first_open_month

#: Days before a month (or the as-of cut) whose errors give the recent level: four whole
#: weeks, so every weekday counts alike.
RECENT_DAYS = 28
#: Fewest past months the share is learned from before it corrects a month in the check.
MIN_LEARNED = 4
#: Fewest corrected past months the check needs to decide.
MIN_CHECKED = 6
#: Relative improvement of the month-total error the correction must show to be used.
MIN_GAIN = 0.05
#: Diebold–Mariano statistic the improvement must reach: the one-sided 5 % point of the
#: normal distribution.
MIN_STATISTIC = 1.645
#: Largest relative gap taken as a level error: beyond it a month is an outlier or a fault,
#: not a level that drifted, and is neither learned from nor carried.
MAX_GAP = 0.15


#: The centres compared, in words.
CENTRES = {
    "none": "the model's forecast as it is",
    "year": "the forecast shifted by the mean error of the error window",
    "recent": f"the forecast shifted by a share of the last {RECENT_DAYS} days' error",
}


@dataclass(frozen=True)
class LevelCorrection:
    """Where one meter's budget is centred, and the evidence for it.

    ``centre`` is ``"none"``, ``"year"`` or ``"recent"`` (see :data:`CENTRES`); ``gap`` the
    relative level error it carries (0.02: the readings ran 2 % above the model), ``share``
    the part of it carried into the first month (``share**lead`` later; 1 for ``"year"``);
    ``checked`` past months were corrected in the check, with mean absolute month-total errors
    ``mape_without`` (the forecast as it is) and ``mape_with`` (the centre used). ``reason``
    says why no correction was used, when none was.
    """

    centre: str
    gap: float
    share: float
    checked: int
    mape_without: float
    mape_with: float
    reason: str = ""

    @classmethod
    def not_used(
        cls, reason: str, checked: int = 0, without: float = np.nan, with_: float = np.nan
    ) -> LevelCorrection:
        return cls("none", 0.0, 0.0, checked, without, with_, reason)

    @property
    def used(self) -> bool:
        return self.centre != "none"

    def change(self, lead: int) -> float:
        """The relative change of the forecast ``lead`` months after the as-of date."""
        if self.centre == "recent":
            return self.share**lead * self.gap
        return self.gap if self.centre == "year" else 0.0

    def day_factors(self, window: BudgetWindow, as_of: date) -> np.ndarray:
        """The factor on each budget day's forecast: ``1 + change(lead)``."""
        first = pd.Period(first_open_month(as_of), freq="M")
        leads = [max((pd.Period(month, freq="M") - first).n + 1, 1) for month in window.months]
        factors = np.array([1.0 + self.change(lead) for lead in leads])
        return factors[window.month_of_day()]

    def sentence(self) -> str:
        """The correction in words, with its evidence."""
        if not self.used:
            return f"not used, the budget is centred on the model's forecast: {self.reason}"
        way = "raised" if self.gap > 0 else "lowered"
        if self.centre == "year":
            what = (
                f"the model ran {abs(self.gap):.1%} {'below' if self.gap > 0 else 'above'} the "
                f"readings over its error window, so every budget month is {way} by that"
            )
        else:
            what = (
                f"over the last {RECENT_DAYS} days the model ran {abs(self.gap):.1%} "
                f"{'below' if self.gap > 0 else 'above'} the readings; past months carried "
                f"{self.share:.0%} of such a gap into the next month, so the first budget month "
                f"is {way} by {abs(self.change(1)):.1%} (each later month by {self.share:.0%} "
                "of the month before's change)"
            )
        return (
            f"used: {what}; on {self.checked} past months it cut the month-total error from "
            f"{self.mape_without:.1f} % to {self.mape_with:.1f} %"
        )


def centred(errors: pd.Series, forecasts: pd.Series) -> pd.Series:
    """The errors less their mean share of the forecast (``b × forecast``), so drawn errors
    widen a budget without moving its centre."""
    known = errors.notna() & forecasts.notna()
    total = float(forecasts[known].sum())
    bias = float(errors[known].sum()) / total if total > 0 else 0.0
    return errors - bias * forecasts.fillna(0.0)


def day_sums(errors: pd.Series, actual: pd.Series, timezone: str) -> pd.DataFrame:
    """Per local day (naive midnight): the errors' and the forecasts' sums."""
    error = errors.to_numpy(np.float64)
    forecast = actual.reindex(errors.index).to_numpy(np.float64) - error
    known = ~np.isnan(forecast)  # NaN where the error or the actual is unknown
    local = errors.index[known].tz_convert(timezone).tz_localize(None).normalize()
    where, days = pd.factorize(local, sort=True)
    return pd.DataFrame(
        {
            "error": np.bincount(where, weights=error[known], minlength=len(days)),
            "forecast": np.bincount(where, weights=forecast[known], minlength=len(days)),
        },
        index=days,
    )


def _relative(errors: np.ndarray, forecasts: np.ndarray) -> np.ndarray:
    """Errors as a share of the forecasts; NaN where nothing was forecast."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(forecasts > 0, errors / forecasts, np.nan)


def _levels(days: pd.DataFrame, starts: pd.DatetimeIndex, error_days: int) -> np.ndarray:
    """(recent level L, error window's level b) of the days before each of ``starts`` (naive
    local midnights), as two columns; NaN where fewer than half the recent days are known.

    Window sums come from running sums over the sorted days, so every start costs two
    look-ups."""
    index = days.index.to_numpy()
    error = np.concatenate([[0.0], np.cumsum(days["error"].to_numpy(np.float64))])
    forecast = np.concatenate([[0.0], np.cumsum(days["forecast"].to_numpy(np.float64))])
    stop = np.searchsorted(index, starts.to_numpy(), side="left")
    recent, year = (
        np.searchsorted(index, (starts - pd.Timedelta(days=length)).to_numpy(), "left")
        for length in (RECENT_DAYS, error_days)
    )
    found = np.column_stack(
        [
            _relative(error[stop] - error[first], forecast[stop] - forecast[first])
            for first in (recent, year)
        ]
    )
    found[stop - recent < RECENT_DAYS // 2] = np.nan
    return found


def past_months(days: pd.DataFrame, error_days: int) -> pd.DataFrame:
    """Per past month with errors and levels before it: ``r`` (its relative error), ``L``
    (the recent level before it) and ``b`` (the error window's), oldest first."""
    stamps = days.index.to_numpy()
    found, where = np.unique(stamps.astype("datetime64[M]"), return_inverse=True)
    error = np.bincount(where, weights=days["error"].to_numpy(np.float64), minlength=len(found))
    forecast = np.bincount(
        where, weights=days["forecast"].to_numpy(np.float64), minlength=len(found)
    )
    levels = _levels(days, pd.DatetimeIndex(found.astype(stamps.dtype)), error_days)
    relative = _relative(error, forecast)
    finite = np.isfinite(relative) & np.isfinite(levels).all(axis=1)
    kept = finite & (np.abs(levels).max(axis=1, initial=0.0) <= MAX_GAP)
    return pd.DataFrame(
        {
            "month": np.datetime_as_string(found[kept], unit="M"),
            "r": relative[kept],
            "L": levels[kept, 0],
            "b": levels[kept, 1],
        }
    )


def carried_share(levels: np.ndarray, misses: np.ndarray) -> float:
    """The least-squares slope through the origin of the misses on the levels, within [0, 1]."""
    spread = float(np.sum(levels**2))
    return float(np.clip(np.sum(levels * misses) / spread, 0.0, 1.0)) if spread > 0 else 0.0


@dataclass(frozen=True)
class Check:
    """Past months corrected with what was known before each: how many, and per centre the
    mean absolute month-total error (%) and the Diebold–Mariano statistic of its gain over
    the forecast as it is (:func:`gain_statistic`)."""

    months: int
    mape: dict[str, float]
    statistic: dict[str, float]


def check(months: pd.DataFrame) -> Check:
    """Every centre of :data:`CENTRES` on the past months after the first :data:`MIN_LEARNED`."""
    r, recent, year = (months[name].to_numpy() for name in ("r", "L", "b"))
    misses: dict[str, list[float]] = {centre: [] for centre in CENTRES}
    for k in range(MIN_LEARNED, len(months)):
        share = carried_share(recent[:k], r[:k])
        shifts = {"none": 0.0, "year": year[k], "recent": share * recent[k]}
        for centre, shift in shifts.items():
            misses[centre].append(abs(r[k] - shift) / (1.0 + r[k]))
    plain = np.array(misses["none"])
    return Check(
        months=len(plain),
        mape={c: 100 * float(np.mean(m)) if m else np.nan for c, m in misses.items()},
        statistic={c: gain_statistic(plain - np.array(m)) for c, m in misses.items()},
    )


def gain_statistic(gains: np.ndarray) -> float:
    """The mean of the months' gains (absolute miss without − with) over its standard error:
    0 with fewer than two months; infinite, of the mean's sign, when every gain is the same."""
    if len(gains) < 2:
        return 0.0
    mean, spread = float(np.mean(gains)), float(np.std(gains, ddof=1))
    if spread == 0:
        return math.copysign(math.inf, mean) if mean else 0.0
    return mean / spread * math.sqrt(len(gains))


def helping_centres(done: Check) -> list[str]:
    """The corrections whose error is :data:`MIN_GAIN` below the forecast's as it is, by
    more than luck (:data:`MIN_STATISTIC`)."""
    without = done.mape["none"]
    return [
        centre
        for centre in ("recent", "year")
        if done.mape[centre] <= (1 - MIN_GAIN) * without and done.statistic[centre] >= MIN_STATISTIC
    ]


def level_correction(
    errors: pd.Series | None,
    actual: pd.Series,
    timezone: str,
    cut: pd.Timestamp,
    error_days: int,
) -> LevelCorrection:
    """The meter's budget centre as of ``cut`` from its out-of-sample ``errors`` (actual −
    forecast per interval, the months before the cut) and its metered ``actual`` energy."""
    if errors is None or errors.empty:
        return LevelCorrection.not_used("the model has no out-of-sample errors to measure from")
    days = day_sums(errors[errors.index < cut], actual, timezone)
    months = past_months(days, error_days)
    done = check(months)
    without = done.mape["none"]
    if done.months < MIN_CHECKED:
        return LevelCorrection.not_used(
            f"{done.months} past months could be checked, fewer than the {MIN_CHECKED} needed"
        )
    helping = helping_centres(done)
    if not helping:
        return LevelCorrection.not_used(
            f"on {done.months} past months neither correction cut the month-total error by "
            f"{MIN_GAIN:.0%} with a gain beyond luck ({without:.1f} % as it is, "
            f"{done.mape['recent']:.1f} % with the recent level, "
            f"{done.mape['year']:.1f} % with the error window's)",
            done.months, without,
        )  # fmt: skip
    centre = min(helping, key=lambda name: done.mape[name])
    start = pd.DatetimeIndex([cut.tz_convert(timezone).tz_localize(None)])
    recent, year = _levels(days, start, error_days)[0]
    gap = recent if centre == "recent" else year
    if not np.isfinite(gap) or abs(gap) > MAX_GAP:
        return LevelCorrection.not_used(
            f"the level before the as-of date ({gap:+.1%}) is unknown or beyond the "
            f"{MAX_GAP:.0%} a drifting level explains (a fault or an unusual month)",
            done.months, without,
        )  # fmt: skip
    share = carried_share(months["L"].to_numpy(), months["r"].to_numpy())
    return LevelCorrection(
        centre, gap, share if centre == "recent" else 1.0, done.months, without, done.mape[centre]
    )
