"""Public holidays in a filled range: term weekdays nearby, scaled as the meter's own holidays ran.

A holiday is too rare for nearby weeks to hold another, so the typical week fills it like the
days of its class around it: a holiday at the end of a break like a break day, one in term like
a term weekday. How a building runs on a holiday is its own habit (an office closes, a residence
hall carries on), and the readings show it. Each past or later holiday within
:data:`HOLIDAY_REACH` of the range with readings is set against the term weekdays of the weeks
around it (as many as the typical week takes), hour by hour of the local day; the median ratio
at each hour, times the term weekdays around the range, is the holiday's typical value. Ratios,
not the readings themselves, are pooled, so a holiday in July does not lend its cooling to one
in January and a meter whose level changed between holidays is not misled.

Where the meter has fewer than :data:`MIN_HOLIDAYS` holidays with readings, or no term weekdays
near the range, the holiday keeps the typical value of its class.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.cleaning.like_days import ORDINARY, CalendarDays
from engine.cleaning.pattern import day_places, week_places, weekly_pattern

#: How far either side of a range the meter's own holidays are looked for: half a year, so a
#: year of holidays, each of the calendar's once, around the range (and half the work of more).
HOLIDAY_REACH = pd.Timedelta(days=183)
#: Fewest holidays with readings behind the ratios.
MIN_HOLIDAYS = 2


def holiday_reach(index: pd.DatetimeIndex, first: int, stop: int) -> slice:
    """The grid positions within :data:`HOLIDAY_REACH` of positions ``[first, stop)``."""
    low = int(index.searchsorted(index[first] - HOLIDAY_REACH, side="left"))
    high = int(index.searchsorted(index[stop - 1] + HOLIDAY_REACH, side="right"))
    return slice(low, high)


def holiday_typical(
    grid: pd.Series,
    days: CalendarDays,
    interval: pd.Timedelta,
    first: int,
    stop: int,
    timezone: str,
    weeks: int,
) -> np.ndarray:
    """Typical values for positions ``[first, stop)`` of ``grid``: NaN except at holidays it
    can fill.

    ``grid`` holds the meter's usable readings on UTC interval starts (NaN elsewhere) over the
    :func:`holiday_reach` of the range, ``days`` their calendar labels; readings outside the
    range count, and term weekdays within ``weeks`` weeks either side of a day are its
    yardstick, as for the typical week.
    """
    filled = np.full(stop - first, np.nan)
    nearby = grid.index
    readings = grid.to_numpy(dtype=np.float64, copy=True)
    readings[first:stop] = np.nan
    weekday = week_places(nearby, timezone, interval).slot < 5 * 24
    term_weekday = weekday & ~days.holiday & (days.day_class == ORDINARY)
    hours = day_places(nearby, timezone, interval)
    yardstick = weekly_pattern(
        np.where(term_weekday, readings, np.nan), hours, 2 * weeks + 1, min_samples=1
    ).typical
    seen = days.holiday & np.isfinite(readings) & (yardstick > 0)
    if _days_among(nearby[seen], timezone) < MIN_HOLIDAYS:
        return filled
    ratio = pd.Series(readings[seen] / yardstick[seen]).groupby(hours.slot[seen]).median()
    inside = slice(first, stop)
    scaled = yardstick[inside] * ratio.reindex(hours.slot[inside]).to_numpy()
    wanted = days.holiday[inside]
    filled[wanted] = scaled[wanted]
    return filled


def _days_among(starts: pd.DatetimeIndex, timezone: str) -> int:
    """How many local days the interval starts fall on."""
    return len(starts.tz_convert(timezone).normalize().unique())
