"""Interval inputs gathered into local calendar days, with each day's group.

Daily models (change-point regression, daily ETS, monthly SARIMA) fit day totals; a day's
energy counts only when every interval of the day has a reading, so partial days are never
taken as whole. Day groups split working days from the rest: campus loads differ most
between them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.models._inputs import DAY
from engine.timestamps import day_lengths

#: Day groups: ordinary working days, and weekends, public holidays and campus closures.
DAY_GROUPS: tuple[str, ...] = ("weekday", "weekend_or_holiday")
#: Share of a day's readings that must have a temperature for the day's mean to count.
MIN_TEMPERATURE_COVERAGE = 0.75


def day_group_codes(labels: pd.DataFrame) -> np.ndarray:
    """0 for working weekdays, 1 for Saturdays, Sundays, public holidays and closure days."""
    weekday = labels["day_type"].to_numpy() == "weekday"
    closed = labels["period_kind"].to_numpy() == "closure"
    return np.where(weekday & ~closed, 0, 1)


@dataclass(frozen=True)
class DailyView:
    """The local days an index touches.

    Attributes
    ----------
    days : pandas.DatetimeIndex
        Naive local dates, sorted and unique.
    position : numpy.ndarray
        For each interval of the inputs, the position of its day in ``days``.
    group : numpy.ndarray
        Day group code (see :data:`DAY_GROUPS`) of each day, from its first interval.
    energy : numpy.ndarray or None
        kWh of each day with a reading in every interval, NaN otherwise.
    temperature : numpy.ndarray or None
        Mean °C of each day with enough temperatures (see :data:`MIN_TEMPERATURE_COVERAGE`).
    """

    days: pd.DatetimeIndex
    position: np.ndarray
    group: np.ndarray
    energy: np.ndarray | None
    temperature: np.ndarray | None


def daily_view(
    local: pd.DatetimeIndex,
    step: pd.Timedelta,
    timezone: str,
    groups: np.ndarray,
    energy: np.ndarray | None = None,
    temperature: np.ndarray | None = None,
) -> DailyView:
    """Gather interval values by local day.

    ``local`` is the naive local clock of the intervals, ``groups`` their day-group codes.
    """
    day_of_interval = local.normalize()
    days, first, position = np.unique(
        day_of_interval.to_numpy(), return_index=True, return_inverse=True
    )
    days = pd.DatetimeIndex(days)
    expected = np.ones(len(days)) if step >= DAY else np.asarray(day_lengths(days, timezone) / step)
    count = np.bincount(position, minlength=len(days))

    day_energy = None
    if energy is not None:
        known = np.isfinite(energy)
        sums = np.bincount(position, weights=np.where(known, energy, 0.0), minlength=len(days))
        complete = (np.bincount(position, weights=known, minlength=len(days)) == expected) & (
            count == expected
        )
        day_energy = np.where(complete, sums, np.nan)

    day_temperature = None
    if temperature is not None:
        day_temperature = day_mean_temperatures(position, len(days), temperature)
    return DailyView(
        days=days,
        position=position,
        group=groups[first],
        energy=day_energy,
        temperature=day_temperature,
    )


def day_mean_temperatures(position: np.ndarray, days: int, temperature: np.ndarray) -> np.ndarray:
    """Mean °C of each day from interval temperatures, for one series or rows of scenarios.

    ``position`` gives each interval's day (as in :class:`DailyView`); the last axis of
    ``temperature`` runs over the intervals and that of the result over the ``days``. A day
    with too few temperatures (see :data:`MIN_TEMPERATURE_COVERAGE`) is NaN.
    """
    rows = np.atleast_2d(temperature)
    shape = (len(rows), days)
    # One bincount over all rows: row r's intervals fall in bins r·days … (r + 1)·days − 1.
    key = (np.arange(len(rows))[:, None] * days + position[None, :]).ravel()
    known = np.isfinite(rows).ravel()
    weights = np.where(known, rows.ravel(), 0.0)
    sums = np.bincount(key, weights=weights, minlength=shape[0] * days).reshape(shape)
    present = np.bincount(key, weights=known, minlength=shape[0] * days).reshape(shape)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = sums / present
    count = np.bincount(position, minlength=days)
    means = np.where(present >= MIN_TEMPERATURE_COVERAGE * count, mean, np.nan)
    return means if temperature.ndim > 1 else means[0]
