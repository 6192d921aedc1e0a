"""Billing periods laid over days, and each period's energy shared among its days.

Bills cover periods of 27 to 35 days that start on any day; budgets and finance count calendar
(or fiscal) months. A period's energy is shared among its days in two parts:

* the **base** part (the change-point model's energy per day at the change point, times the
  days) by days: every day the same;
* the **weather-driven** part (heating and cooling, each on its own) by the day's degree-days at
  the model's change point: ``(c_h − T)⁺`` for heating, ``(T − c_c)⁺`` for cooling, ``T`` the
  day's mean temperature (the mean-temperature method of CIBSE TM41; see
  :func:`engine.degree_days.mean_temperature_degree_days`).

A period whose heating part is positive always has a day below the change point (the mean of
the days is below it), so its heating degree-days are positive; the same holds for cooling.
A straight-line (2P) fit has no change point: its whole energy is shared by days.

Forecast periods continue the account's billing cycle: from the day after a bill's end, periods
of the account's usual length (the median of its bills' days) follow one another until the next
known bill or the budget's end.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def period_starts(period_of_day: np.ndarray) -> np.ndarray:
    """Positions where a new period begins in a day-by-day array of period numbers."""
    return np.flatnonzero(np.r_[True, period_of_day[1:] != period_of_day[:-1]])


def share_by_degree_days(
    base_per_day: float,
    heating_kwh: np.ndarray,
    cooling_kwh: np.ndarray,
    heating_dd: np.ndarray,
    cooling_dd: np.ndarray,
    period_of_day: np.ndarray,
) -> np.ndarray:
    """Energy per day: the base by days, each weather-driven part by its degree-days.

    ``heating_kwh``/``cooling_kwh`` are ``(scenarios, periods)``; ``heating_dd``/``cooling_dd``
    ``(scenarios, days)``; ``period_of_day`` the period (0, 1, …; contiguous runs) of each day.
    Returns ``(scenarios, days)``.
    """
    starts = period_starts(period_of_day)
    runs = np.cumsum(np.r_[0, (np.diff(period_of_day) != 0).astype(np.int64)])
    shares = base_per_day + np.zeros_like(heating_dd)
    for part, dd in ((heating_kwh, heating_dd), (cooling_kwh, cooling_dd)):
        total = np.add.reduceat(dd, starts, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            per_dd = np.where(total > 0, part / total, 0.0)
        shares = shares + per_dd[:, runs] * dd
    return shares


def cycle_periods(days: pd.DatetimeIndex, billed_until: np.ndarray, cycle_days: int) -> np.ndarray:
    """Forecast period numbers for unbilled days, following the billing cycle.

    ``days`` are consecutive local days; ``billed_until`` gives, for each day, the last day of
    the newest known bill ending before it (``datetime64[D]``), from which the cycle runs:
    the day after it starts a period, and a new one starts every ``cycle_days``. Returns a
    number per day, equal within a period and different between periods.
    """
    day = days.to_numpy().astype("datetime64[D]")
    offset = (day - billed_until).astype(np.int64) - 1
    return billed_until.astype(np.int64) * 1000 + offset // cycle_days
