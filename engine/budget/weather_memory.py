"""Weather that remembers: the anomaly a site is in at the as-of date, decaying into the budget.

A warm spell under way on the as-of date tends to go on for a while. The past-years weather
paths (:mod:`engine.budget.weather_paths`) draw departures from the typical year that know
nothing of it; this module adds the expected part of the coming departures, given the recent
ones, with the persistence the site's own history shows.

The model, estimated from the history through the origin (departures from the typical year
have zero mean by construction):

* the fast part: an AR(1) on the daily mean departures (the first-order autoregression of Box
  & Jenkins), ``φ`` the lag-one-day autocorrelation over pairs of consecutive whole days, so
  the as-of day's departure ``d`` is expected to fade as ``φ^k · d`` over the next ``k`` days;
* the slow part: what a month's anomaly carries beyond that. At the first of every past month,
  the month's mean departure ``y`` is set beside ``d`` (the day before) and ``M``, the mean
  departure of the :data:`RECENT_DAYS` days before it; ``β`` is the least-squares coefficient
  of ``M`` once the fast part's share of the month, ``g(φ) · d`` with ``g`` the mean of ``φ^k``
  over 30 days, is taken off: ``β = Σ (y − g(φ) d) M / Σ M²`` (0 when negative). For
  information the lag-one autocorrelation ``ρ = Σ y M / Σ M²`` is reported beside it.

The expected departure ``k`` days after the as-of date is

    shift(k) = φ^k · d + θ^k · M

where ``θ`` is the daily decay whose mean over 30 days is ``β`` (solved on a grid), so the next
month's expected mean departure is the regression's ``g(φ) · d + β · M``. Weather with only a
short memory (ρ near 0) gets ``β`` near 0 and the plain AR(1) forecast. The spread of the drawn
departures is left as it is (the calibration of the range measures the rest).

Whether it helps is checked on the site's own history before it is used: from the first day of
each past month with enough history before it, the month's mean departure is forecast with
``φ`` and ``β`` estimated from the days and months before that month only, beside the
no-memory forecast (zero, the typical year). The memory is used only when its mean absolute
error over at least :data:`MIN_TESTED` such months is lower; otherwise the paths start from the
typical year as before, and the budget's assumptions say so. A weather-driven meter's month
total moves with the month's mean temperature through its model, so a better month-ahead
temperature is what the memory can give a budget; the past month-ahead budgets, made with the
same weather assumption, then show what it gave the meters.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

#: Days before the cut whose mean departure is the slow part of the anomaly (about a month).
RECENT_DAYS = 30
#: Whole days a calendar month (or the recent days) needs for its mean departure to count.
WHOLE_DAYS = 20
#: Fewest past months the memory is tested on before it may be used.
MIN_TESTED = 12
#: Fewest pairs of consecutive months and days a persistence is estimated from.
MIN_MONTH_PAIRS = 12
MIN_DAY_PAIRS = 60
#: Largest persistence taken (a value of 1 would never decay).
MAX_PERSISTENCE = 0.98
_GRID = np.linspace(0.0, MAX_PERSISTENCE, 981)
_STEPS = np.arange(1, RECENT_DAYS + 1)
#: The mean of θ^k over the next RECENT_DAYS days, per θ on the grid (increasing in θ).
_MONTH_MEAN_OF_DECAY = (_GRID[:, np.newaxis] ** _STEPS).mean(axis=1)


@dataclass(frozen=True)
class AnomalyMemory:
    """The persistence of the site's weather anomalies and the anomaly at the cut (°C).

    ``daily`` is φ, ``monthly`` ρ, ``carried`` β and ``slow_daily`` θ (see the module notes);
    ``last_day`` is the departure of the as-of date itself and ``recent`` the mean of the days
    before the cut (0 when unknown); ``tested`` past months were forecast with a mean absolute
    error of ``error_with`` °C against ``error_without`` for the typical year; ``used`` says
    whether the budget applies it.
    """

    daily: float
    monthly: float
    carried: float
    slow_daily: float
    last_day: float
    recent: float
    tested: int
    error_with: float
    error_without: float
    used: bool

    def shift(self, days_ahead: np.ndarray) -> np.ndarray:
        """The expected departure (°C) ``days_ahead`` days after the as-of date (0 before)."""
        ahead = np.asarray(days_ahead, dtype=np.float64)
        after = ahead >= 1
        steps = np.where(after, ahead, 1.0)
        expected = self.daily**steps * self.last_day + self.slow_daily**steps * self.recent
        return np.where(after & self.used, expected, 0.0)

    def sentence(self) -> str:
        """What the memory found and whether the budget used it, in words."""
        found = (
            f"the site's daily mean temperature departures from the typical year persist with "
            f"a lag-one-day autocorrelation of {self.daily:.2f}, and a month's mean departure "
            f"follows that of the {RECENT_DAYS} days before it with a coefficient of "
            f"{self.monthly:.2f} "
            f"({self.carried:.2f} beyond the days' own persistence; AR(1) and least-squares "
            "fits on the weather history)"
        )
        if self.tested:
            found += (
                f"; forecast from the first of each of {self.tested} past months with "
                f"persistences from the days before it, the month's mean departure missed by "
                f"{self.error_with:.2f} °C on average with this memory and "
                f"{self.error_without:.2f} °C without"
            )
        if not self.used:
            return (
                found + "; no skill shown, so the weather paths start from the typical year "
                "without the recent anomaly"
            )
        return (
            found + f"; the paths start from the anomaly the site was in (as-of day "
            f"{self.last_day:+.1f} °C, decaying by {self.daily:.2f} a day; the {RECENT_DAYS} "
            f"days before {self.recent:+.1f} °C, decaying by {self.slow_daily:.2f} a day)"
        )


def slow_decay(carried: np.ndarray | float) -> np.ndarray:
    """θ per β: the daily decay whose mean over the next 30 days is β (0 for β ≤ 0)."""
    wanted = np.clip(np.asarray(carried, dtype=np.float64), 0.0, _MONTH_MEAN_OF_DECAY[-1])
    return np.interp(wanted, _MONTH_MEAN_OF_DECAY, _GRID)


def _ratio(products: np.ndarray, squares: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        fitted = np.where(squares > 0, products / squares, 0.0)
    return np.clip(fitted, 0.0, MAX_PERSISTENCE)


def _mean_decay(rate: np.ndarray | float, count: np.ndarray | int) -> np.ndarray:
    """The mean of ``rate^k`` over ``k = 1 … count`` (a geometric sum)."""
    safe = np.where(np.asarray(rate) < 1.0, rate, 0.0)
    return safe * (1.0 - safe**count) / (count * (1.0 - safe))


@dataclass(frozen=True)
class _Evidence:
    """Running sums (index ``i``: over the first ``i`` items) of the day pairs' products and
    squares, and of the month pairs' ``y·M``, ``d·M`` and ``M²``."""

    day_products: np.ndarray
    day_squares: np.ndarray
    month_ym: np.ndarray
    month_dm: np.ndarray
    month_mm: np.ndarray
    month_pairs: np.ndarray

    def persistence(self, days: np.ndarray, months: np.ndarray) -> tuple[np.ndarray, ...]:
        """φ, ρ and β from the first ``days`` day pairs and ``months`` month pairs."""
        daily = _ratio(self.day_products[days], self.day_squares[days])
        ym, dm, mm = self.month_ym[months], self.month_dm[months], self.month_mm[months]
        monthly = _ratio(ym, mm)
        carried = _ratio(ym - _mean_decay(daily, RECENT_DAYS) * dm, mm)
        return daily, monthly, carried


def _running(values: np.ndarray) -> np.ndarray:
    return np.r_[0.0, np.cumsum(values)]


def anomaly_memory(departures: pd.Series, cut_day: pd.Timestamp) -> AnomalyMemory:
    """Estimate the memory from daily mean departures (°C) of whole local days before the cut.

    Parameters
    ----------
    departures : pandas.Series
        One value per whole local day (naive dates, sorted; days with gaps left out).
    cut_day : pandas.Timestamp
        The first local day of the budget after the as-of date (naive).
    """
    days = pd.DatetimeIndex(departures.index).normalize()
    values = departures.to_numpy(dtype=np.float64)
    number = days.to_numpy(dtype="datetime64[D]").astype(np.int64)
    follows = np.diff(number) == 1
    months = _month_means(departures)
    starts = months.index.to_timestamp()
    last_day, recent, known = _states(days, values, starts)
    target = months.to_numpy()
    evidence = _Evidence(
        _running(np.where(follows, values[:-1] * values[1:], 0.0)),
        _running(np.where(follows, values[:-1] ** 2, 0.0)),
        _running(np.where(known, target * recent, 0.0)),
        _running(np.where(known, last_day * recent, 0.0)),
        _running(np.where(known, recent**2, 0.0)),
        _running(known.astype(np.float64)),
    )
    enough = len(values) > MIN_DAY_PAIRS and evidence.month_pairs[-1] >= MIN_MONTH_PAIRS
    daily, monthly, carried = (
        float(value) if enough else 0.0
        for value in evidence.persistence(np.array(len(values) - 1), np.array(len(months)))
    )
    tested, error_with, error_without = _backtest(
        days, starts, target, (last_day, recent, known), evidence
    )
    now_day, now_recent, _ = _states(days, values, pd.DatetimeIndex([cut_day]))
    return AnomalyMemory(
        daily=daily,
        monthly=monthly,
        carried=carried,
        slow_daily=float(slow_decay(carried)),
        last_day=float(now_day[0]),
        recent=float(now_recent[0]),
        tested=tested,
        error_with=error_with,
        error_without=error_without,
        used=tested >= MIN_TESTED and error_with < error_without,
    )


def _month_means(departures: pd.Series) -> pd.Series:
    """Mean departure per calendar month with at least WHOLE_DAYS whole days (PeriodIndex)."""
    by_month = departures.groupby(pd.DatetimeIndex(departures.index).to_period("M"))
    means = by_month.mean()
    return means[by_month.size() >= WHOLE_DAYS]


def _states(
    days: pd.DatetimeIndex, values: np.ndarray, starts: pd.DatetimeIndex
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per start day: the departure of the day before it, the mean of the RECENT_DAYS before
    it, and whether that mean had WHOLE_DAYS whole days (else it is 0; the day before takes
    the mean when it is missing)."""
    running = _running(values)
    upto = np.searchsorted(days, starts)
    since = np.searchsorted(days, starts - pd.Timedelta(days=RECENT_DAYS))
    count = upto - since
    known = count >= WHOLE_DAYS
    with np.errstate(divide="ignore", invalid="ignore"):
        recent = np.where(known, (running[upto] - running[since]) / count, 0.0)
    previous = np.maximum(upto - 1, 0)
    on_time = (upto > 0) & (days[previous] == starts - pd.Timedelta(days=1))
    return np.where(on_time, values[previous], recent), recent, known


def _backtest(
    days: pd.DatetimeIndex,
    starts: pd.DatetimeIndex,
    target: np.ndarray,
    state: tuple[np.ndarray, np.ndarray, np.ndarray],
    evidence: _Evidence,
) -> tuple[int, float, float]:
    """Past months' mean departures forecast from their first day, with and without memory.

    Persistences come from the days and months before each forecast month only (running
    sums); a month is tested once enough pairs lie before it. The forecast is the mean of the
    expected departures over the month's calendar days.
    """
    last_day, recent, known = state
    seen = np.searchsorted(days, starts) - 1  # day pairs ending before the month
    position = np.arange(len(starts))  # month pairs before it
    tested = known & (evidence.month_pairs[position] >= MIN_MONTH_PAIRS)
    tested &= seen >= MIN_DAY_PAIRS
    if not tested.any():
        return 0, float("nan"), float("nan")
    daily, _, carried = evidence.persistence(seen[tested], position[tested])
    length = starts[tested].days_in_month.to_numpy()
    forecast = _mean_decay(daily, length) * last_day[tested]
    forecast += _mean_decay(slow_decay(carried), length) * recent[tested]
    actual = target[tested]
    return (
        int(tested.sum()),
        float(np.mean(np.abs(forecast - actual))),
        float(np.mean(np.abs(actual))),
    )
