"""Each local day fitted as a whole to its typical values: Tukey's resistant line.

An unlisted holiday, a closure, an event or a heat wave moves a whole day: its readings keep
the typical daily shape, only at another level. Each local day is therefore fitted to its
typical values by Tukey's resistant line (J. W. Tukey, Exploratory Data Analysis, 1977; from
memory): readings ≈ offset + slope × typical, the slope through the medians of the lowest and
highest thirds of the day's intervals ordered by typical value, the offset the median
remainder. A line covers both common day-level changes: an occupied load scaled down over an
unchanged base load (a holiday: slope below 1, offset above 0) and a load added all day long
(weather: offset, slope near 1). The line rests on medians of about eight hours each, so a
short fault (a spike, a dip or gap of an hour or two) cannot move it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

#: A day gets a line only with at least this many readings that have a typical value, and at
#: least half of its intervals; coarser meters (daily readings) are left to the typical week.
MIN_DAY_READINGS = 12
_THIRDS = 3


@dataclass(frozen=True)
class DayLines:
    """Each local day's resistant line, readings ≈ offset + slope × typical.

    ``day`` numbers each interval's local day from the first (0, 1, …); ``expected`` is the
    line at each interval's typical value, NaN where its day has no line. ``slope`` and
    ``offset`` are per day, NaN for days without a line.
    """

    day: np.ndarray
    expected: np.ndarray
    slope: np.ndarray
    offset: np.ndarray


def fit_day_lines(
    local_day: np.ndarray, values: np.ndarray, typical: np.ndarray, spread: np.ndarray
) -> DayLines:
    """Tukey's resistant line of readings on typical values for every local day.

    ``local_day`` numbers each interval's local calendar day (non-decreasing); ``values``,
    ``typical`` and ``spread`` are the meter's readings and typical week on its grid.

    Where the typical values of a day barely vary (the outer thirds' medians lie within the
    day's robust spread of each other) the slope cannot be told apart from the offset, and the
    line is a plain shift (slope 1). A slope below zero would turn the day's shape upside down,
    which no day-level change does, so it is held at zero.
    """
    day = local_day - local_day[0]
    n_days = int(day[-1]) + 1
    usable = np.isfinite(values) & np.isfinite(typical)
    frame = pd.DataFrame(
        {
            "day": day[usable],
            "typical": typical[usable],
            "value": values[usable],
            "spread": spread[usable],
        }
    )
    by_day = frame.groupby("day")
    order = by_day["typical"].rank(method="first").to_numpy() - 1
    count = by_day["typical"].transform("size").to_numpy()
    frame["third"] = (_THIRDS * order // count).astype(int)
    outer = frame[frame["third"] != 1].groupby(["day", "third"])[["typical", "value"]].median()
    # days of one or two readings (daily meters) have no upper third: their line stays NaN
    thirds = pd.MultiIndex.from_product([["typical", "value"], range(_THIRDS)])
    outer = outer.unstack("third").reindex(columns=thirds)
    rise = outer[("typical", _THIRDS - 1)] - outer[("typical", 0)]
    slope_of_day = (outer[("value", _THIRDS - 1)] - outer[("value", 0)]) / rise
    flat = rise <= by_day["spread"].median().reindex(rise.index)
    slope_of_day = slope_of_day.where(~flat, 1.0).clip(lower=0.0)

    slope = np.full(n_days, np.nan)
    slope[slope_of_day.index.to_numpy()] = slope_of_day.to_numpy()
    remainder = pd.Series(values[usable] - slope[day[usable]] * typical[usable])
    offset_of_day = remainder.groupby(day[usable]).median()
    offset = np.full(n_days, np.nan)
    offset[offset_of_day.index.to_numpy()] = offset_of_day.to_numpy()

    readings = np.bincount(day[usable], minlength=n_days)
    enough = (readings >= MIN_DAY_READINGS) & (2 * readings >= np.bincount(day, minlength=n_days))
    slope[~enough] = np.nan
    offset[~enough] = np.nan
    expected = offset[day] + slope[day] * typical
    return DayLines(day=day, expected=expected, slope=slope, offset=offset)
