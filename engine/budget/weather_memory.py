"""Weather that remembers: the anomaly a site is in at the as-of date, decaying into the budget.

A warm spell under way on the as-of date tends to go on for a while. The past-years weather
paths (:mod:`engine.budget.weather_paths`) draw departures from the typical year that know
nothing of it; this module adds the expected part of the coming departures, given the recent
ones, with the persistence the site's own history shows.

The model: the daily mean departure from the typical year is the sum of a slow part (weeks to
months) and a fast part (days), each an AR(1) process (the first-order autoregression of Box &
Jenkins; two of them summed, as a weather anomaly with a short and a long memory, common
practice). Estimated from the history, through the origin, since departures from the typical
year have zero mean by construction:

* ``φ``, the lag-one-day autocorrelation of the daily mean departures (pairs of consecutive
  whole days);
* ``ρ``, the lag-one-month autocorrelation of the calendar months' mean departures (pairs of
  consecutive months with at least :data:`WHOLE_DAYS` whole days each).

At the cut the anomaly is read as ``M``, the mean departure of the :data:`RECENT_DAYS` days
before it (the slow part), and ``d − M``, the last day's excess over it (the fast part). The
expected departure ``k`` days after the as-of date is

    shift(k) = φ^k · (d − M) + θ^k · M

where ``θ`` is the per-day decay of the slow part that makes the next :data:`RECENT_DAYS` days'
mean shift ``ρ · M``, the month-to-month persistence measured: the mean of ``θ^k`` over
``k = 1 … 30`` equals ``ρ`` (solved on a grid). The spread of the drawn departures is left as
it is (the calibration of the range measures the rest).

Whether it helps is checked on the site's own history before it is used: from the first day of
each past month with enough history before it, the month's mean departure is forecast with
``φ`` and ``ρ`` estimated from the days before that month only, beside the no-memory forecast
(zero, the typical year). The memory is used only when its mean absolute error over at least
:data:`MIN_TESTED` such months is lower; otherwise the paths start from the typical year as
before, and the budget's assumptions say so. A weather-driven meter's month total moves with
the month's mean temperature through its model, so a better month-ahead temperature is what
the memory can give a budget; the past month-ahead budgets, made with the same weather
assumption, then show what it gave the meters.
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

    ``daily`` is φ, ``monthly`` ρ, ``slow_daily`` θ (see the module notes); ``last_day`` the
    departure of the as-of date itself and ``recent`` the mean of the days before the cut
    (0 when unknown); ``tested`` past months were forecast with a mean absolute error of
    ``error_with`` °C against ``error_without`` for the typical year; ``used`` says whether
    the budget applies it.
    """

    daily: float
    monthly: float
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
        expected = self.daily**steps * (self.last_day - self.recent)
        expected += self.slow_daily**steps * self.recent
        return np.where(after & self.used, expected, 0.0)

    def sentence(self) -> str:
        """What the memory found and whether the budget used it, in words."""
        found = (
            f"the site's daily mean temperature departures from the typical year persist with "
            f"a lag-one-day autocorrelation of {self.daily:.2f} and its monthly mean departures "
            f"with a lag-one-month autocorrelation of {self.monthly:.2f} (AR(1) fits on the "
            "weather history)"
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
            f"{self.last_day:+.1f} °C, the {RECENT_DAYS} days before {self.recent:+.1f} °C), "
            f"the day's excess decaying by {self.daily:.2f} a day and the month's anomaly by "
            f"{self.slow_daily:.2f} a day"
        )


def slow_decay(monthly: np.ndarray | float) -> np.ndarray:
    """θ per ρ: the per-day decay whose mean over the next 30 days is ρ (0 for ρ ≤ 0)."""
    wanted = np.clip(np.asarray(monthly, dtype=np.float64), 0.0, _MONTH_MEAN_OF_DECAY[-1])
    return np.interp(wanted, _MONTH_MEAN_OF_DECAY, _GRID)


def _lag_one(values: np.ndarray, follows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per position, the products with the next value and the squares, where the next one
    follows it (running sums of these give the lag-one fits of any earlier stretch)."""
    nxt = np.r_[values[1:], 0.0]
    pair = np.r_[follows[1:], False]
    return np.where(pair, values * nxt, 0.0), np.where(pair, values**2, 0.0)


def _ratio(products: np.ndarray, squares: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        fitted = np.where(squares > 0, products / squares, 0.0)
    return np.clip(fitted, 0.0, MAX_PERSISTENCE)


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
    products, squares = _lag_one(values, np.r_[False, np.diff(number) == 1])
    months = _month_means(departures)
    month_follows = np.r_[False, np.diff(_month_number(months)) == 1]
    month_products, month_squares = _lag_one(months.to_numpy(), month_follows)

    daily = float(_ratio(products.sum(), squares.sum())) if len(values) > MIN_DAY_PAIRS else 0.0
    enough = np.count_nonzero(month_squares) >= MIN_MONTH_PAIRS
    monthly = float(_ratio(month_products.sum(), month_squares.sum())) if enough else 0.0
    tested, error_with, error_without = _backtest(
        days, values, products, squares, months, month_products, month_squares
    )
    last_day, recent = _state(days, values, cut_day)
    return AnomalyMemory(
        daily=daily,
        monthly=monthly,
        slow_daily=float(slow_decay(monthly)),
        last_day=last_day,
        recent=recent,
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


def _month_number(months: pd.Series) -> np.ndarray:
    periods = pd.PeriodIndex(months.index)
    return periods.year.to_numpy() * 12 + periods.month.to_numpy()


def _states(
    days: pd.DatetimeIndex, values: np.ndarray, starts: pd.DatetimeIndex
) -> tuple[np.ndarray, np.ndarray]:
    """Per start day: the departure of the day before it and the mean of the RECENT_DAYS
    before it (the mean 0 with fewer than WHOLE_DAYS whole days; the day the mean when it is
    missing)."""
    running = np.r_[0.0, np.cumsum(values)]
    upto = np.searchsorted(days, starts)
    since = np.searchsorted(days, starts - pd.Timedelta(days=RECENT_DAYS))
    count = upto - since
    with np.errstate(divide="ignore", invalid="ignore"):
        recent = np.where(count >= WHOLE_DAYS, (running[upto] - running[since]) / count, 0.0)
    previous = np.maximum(upto - 1, 0)
    known = (upto > 0) & (days[previous] == starts - pd.Timedelta(days=1))
    return np.where(known, values[previous], recent), recent


def _state(
    days: pd.DatetimeIndex, values: np.ndarray, cut_day: pd.Timestamp
) -> tuple[float, float]:
    """:func:`_states` for the one day that starts at the cut."""
    last_day, recent = _states(days, values, pd.DatetimeIndex([cut_day]))
    return float(last_day[0]), float(recent[0])


def _mean_decay(rate: np.ndarray, count: np.ndarray) -> np.ndarray:
    """The mean of ``rate^k`` over ``k = 1 … count`` (a geometric sum)."""
    safe = np.where(rate < 1.0, rate, 0.0)
    return safe * (1.0 - safe**count) / (count * (1.0 - safe))


def _backtest(
    days: pd.DatetimeIndex,
    values: np.ndarray,
    products: np.ndarray,
    squares: np.ndarray,
    months: pd.Series,
    month_products: np.ndarray,
    month_squares: np.ndarray,
) -> tuple[int, float, float]:
    """Past months' mean departures forecast from their first day, with and without memory.

    Persistences come from the days and months before each forecast month only (running
    sums); a month is tested once enough pairs lie before it. The forecast is the mean of the
    expected departures over the month's calendar days.
    """
    starts = months.index.to_timestamp()
    position = np.arange(len(months))
    # pairs wholly before each month: day pairs ending before it, month pairs before it
    seen = np.searchsorted(days, starts) - 1
    month_seen = np.maximum(position - 1, 0)
    month_pairs = np.r_[0, np.cumsum(month_squares != 0)][month_seen]
    tested = (position >= 1) & (month_pairs >= MIN_MONTH_PAIRS) & (seen >= MIN_DAY_PAIRS)
    if not tested.any():
        return 0, float("nan"), float("nan")
    seen, month_seen, starts = seen[tested], month_seen[tested], starts[tested]
    daily = _ratio(np.cumsum(np.r_[0.0, products])[seen], np.cumsum(np.r_[0.0, squares])[seen])
    monthly = _ratio(
        np.cumsum(np.r_[0.0, month_products])[month_seen],
        np.cumsum(np.r_[0.0, month_squares])[month_seen],
    )
    last_day, recent = _states(days, values, starts)
    length = starts.days_in_month.to_numpy()
    forecast = _mean_decay(daily, length) * (last_day - recent)
    forecast += _mean_decay(slow_decay(monthly), length) * recent
    actual = months.to_numpy()[tested]
    return (
        int(tested.sum()),
        float(np.mean(np.abs(forecast - actual))),
        float(np.mean(np.abs(actual))),
    )
