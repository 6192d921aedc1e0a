"""A level that keeps up: the recent, persistent level error of a meter's model, carried on.

A model fitted on years of readings forecasts the level those years average; a meter whose
load drifts (a building filling up, equipment added or retired) runs above or below it, and a
"same month last year" budget carries the newer level where the model does not. The budget's
paths already carry the model's mean error of the year they draw errors from
(:mod:`engine.budget.residuals`), so what is left is the gap between the last weeks' level
and that year's: if the model ran 3 % low over the last four weeks but only 1 % low over the
year, the first budget month may run 2 % low too.

How much of such a gap carries into the next month is measured, not assumed. Every past month
``k`` of the model's out-of-sample errors (each from the refit made before its month, under
the weather that happened: :mod:`engine.budget.refits`) gives the gap known before it,
``g_k = L_k − b_k`` (``L_k``: the relative error of the :data:`RECENT_DAYS` days before the
month, ``b_k``: that of the error window before it), and the month's own miss beyond the
year's, ``m_k = r_k − b_k`` (``r_k``: the month's relative error). The share carried is the
least-squares slope through the origin of ``m`` on ``g``, kept within 0 and 1: the lag-one
autoregression coefficient of the monthly level error (an AR(1) in the model's errors, the
plainest error-correction term; common practice, no single source).

It is used only where the month-ahead backtest shows it helps: each past month is corrected
with the share learned from the months before it, and the corrected month totals must miss
by at least :data:`MIN_GAIN` less on average than the uncorrected ones, and in more months
better than worse, over at least :data:`MIN_CHECKED` months. Gaps beyond :data:`MAX_GAP`
are faults or odd months, not a drifting level: they are not learned from or carried. A
budget month ``h`` months after the as-of date carries ``share**h`` of today's gap (a level
error decays as the past months showed it to; a steady drift has a share near 1 and keeps it).
"""

from __future__ import annotations

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
#: Largest relative gap taken as a level error: beyond it a month is an outlier or a fault,
#: not a level that drifted, and is neither learned from nor carried.
MAX_GAP = 0.15


@dataclass(frozen=True)
class LevelCorrection:
    """The level correction of one meter's budget, and the evidence for it.

    ``gap`` is today's relative gap ``L − b`` (0.02: the last weeks ran 2 % higher against
    the model than the error year did), ``share`` the part of a gap past months carried into
    the next month, ``used`` whether the backtest supports correcting; ``checked`` past
    months were corrected in the check, with mean absolute month-total errors ``mape_without``
    and ``mape_with`` (percent). ``reason`` says why it was not used, when it was not.
    """

    used: bool
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
        return cls(False, 0.0, 0.0, checked, without, with_, reason)

    def change(self, lead: int) -> float:
        """The relative change of the forecast ``lead`` months after the as-of date (0 when
        not used)."""
        return self.share**lead * self.gap if self.used else 0.0

    def day_factors(self, window: BudgetWindow, as_of: date) -> np.ndarray:
        """The factor on each budget day's forecast: ``1 + share**lead × gap``."""
        first = pd.Period(first_open_month(as_of), freq="M")
        leads = [max((pd.Period(month, freq="M") - first).n + 1, 1) for month in window.months]
        factors = np.array([1.0 + self.change(lead) for lead in leads])
        return factors[window.month_of_day()]

    def sentence(self) -> str:
        """The correction in words, with its evidence."""
        if not self.used:
            return f"not used: {self.reason}"
        return (
            f"used: over the last {RECENT_DAYS} days the model ran {abs(self.gap):.1%} "
            f"{'below' if self.gap > 0 else 'above'} the readings beyond its error year's mean "
            f"error; past months carried {self.share:.0%} of such a gap into the next month, so "
            f"the first budget month is {'raised' if self.gap > 0 else 'lowered'} by "
            f"{abs(self.change(1)):.1%} (and each later month by {self.share:.0%} of the month "
            f"before's change); on {self.checked} past months it cut the month-total error "
            f"from {self.mape_without:.1f} % to {self.mape_with:.1f} %"
        )


def day_sums(errors: pd.Series, actual: pd.Series, timezone: str) -> pd.DataFrame:
    """Per local day (naive midnight): the errors' and the forecasts' sums."""
    known = errors.notna() & actual.reindex(errors.index).notna()
    errors = errors[known]
    forecasts = actual.reindex(errors.index) - errors
    days = errors.index.tz_convert(timezone).tz_localize(None).normalize()
    frame = pd.DataFrame({"error": errors.to_numpy(), "forecast": forecasts.to_numpy()})
    return frame.groupby(days).sum()


def _relative(days: pd.DataFrame) -> float:
    forecast = float(days["forecast"].sum())
    return float(days["error"].sum()) / forecast if forecast > 0 else np.nan


def _gap(days: pd.DataFrame, start: pd.Timestamp, error_days: int) -> tuple[float, float]:
    """(recent level L, error year's level b) of the days before ``start`` (naive local)."""
    recent = days[(days.index >= start - pd.Timedelta(days=RECENT_DAYS)) & (days.index < start)]
    year = days[(days.index >= start - pd.Timedelta(days=error_days)) & (days.index < start)]
    if len(recent) < RECENT_DAYS // 2:
        return np.nan, np.nan
    return _relative(recent), _relative(year)


def past_months(days: pd.DataFrame, error_days: int) -> pd.DataFrame:
    """Per past month with errors and a recent level before it: ``gap`` (L − b) and
    ``miss`` (r − b, the month's relative error beyond the error year's), with ``r`` and
    ``b``, oldest first."""
    rows = []
    for month, inside in days.groupby(days.index.to_period("M")):
        recent, year = _gap(days, month.start_time, error_days)
        relative = _relative(inside)
        if np.isfinite([recent, year, relative]).all() and abs(recent - year) <= MAX_GAP:
            rows.append((str(month), recent - year, relative - year, relative, year))
    return pd.DataFrame(rows, columns=["month", "gap", "miss", "r", "b"])


def carried_share(gaps: np.ndarray, misses: np.ndarray) -> float:
    """The least-squares slope through the origin of the misses on the gaps, within [0, 1]."""
    spread = float(np.sum(gaps**2))
    return float(np.clip(np.sum(gaps * misses) / spread, 0.0, 1.0)) if spread > 0 else 0.0


def check(months: pd.DataFrame) -> tuple[int, float, float, bool]:
    """Past months corrected with the share learned before each: (months checked, mean
    absolute month-total error % without the correction, with it, and whether it made more
    of those months better than worse)."""
    gaps, misses = months["gap"].to_numpy(), months["miss"].to_numpy()
    actual = 1.0 + months["r"].to_numpy()  # actual / forecast
    without, with_ = [], []
    for k in range(MIN_LEARNED, len(months)):
        share = carried_share(gaps[:k], misses[:k])
        without.append(abs(misses[k]) / actual[k])
        with_.append(abs(misses[k] - share * gaps[k]) / actual[k])
    if not without:
        return 0, np.nan, np.nan, False
    change = np.sign(np.subtract(without, with_))
    mostly = bool(np.sum(change > 0) > np.sum(change < 0))
    return len(without), 100 * float(np.mean(without)), 100 * float(np.mean(with_)), mostly


def level_correction(
    errors: pd.Series | None,
    actual: pd.Series,
    timezone: str,
    cut: pd.Timestamp,
    error_days: int,
) -> LevelCorrection:
    """The meter's level correction as of ``cut`` from its out-of-sample ``errors`` (actual −
    forecast per interval, the months before the cut) and its metered ``actual`` energy."""
    if errors is None or errors.empty:
        return LevelCorrection.not_used("the model has no out-of-sample errors to measure from")
    days = day_sums(errors[errors.index < cut], actual, timezone)
    months = past_months(days, error_days)
    checked, without, with_, mostly = check(months)
    if checked < MIN_CHECKED:
        return LevelCorrection.not_used(
            f"{checked} past months could be checked, fewer than the {MIN_CHECKED} needed",
            checked, without, with_,
        )  # fmt: skip
    if not (with_ <= (1 - MIN_GAIN) * without and mostly):
        return LevelCorrection.not_used(
            f"on {checked} past months it did not cut the month-total error by "
            f"{MIN_GAIN:.0%} ({without:.1f} % without it, {with_:.1f} % with it) while "
            "bettering more months than it worsened",
            checked, without, with_,
        )  # fmt: skip
    local_cut = cut.tz_convert(timezone).tz_localize(None)
    recent, year = _gap(days, local_cut, error_days)
    if not np.isfinite([recent, year]).all():
        return LevelCorrection.not_used(
            f"the errors do not reach the last {RECENT_DAYS} days before the as-of date",
            checked, without, with_,
        )  # fmt: skip
    if abs(recent - year) > MAX_GAP:
        return LevelCorrection.not_used(
            f"the last {RECENT_DAYS} days' gap ({recent - year:+.1%}) is beyond the "
            f"{MAX_GAP:.0%} a drifting level explains (a fault or an unusual month)",
            checked, without, with_,
        )  # fmt: skip
    share = carried_share(months["gap"].to_numpy(), months["miss"].to_numpy())
    return LevelCorrection(True, recent - year, share, checked, without, with_)
