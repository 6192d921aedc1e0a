"""A meter's own typical week: median and robust spread per local hour of the week.

"Typical" always means typical for *this* meter at *this* hour of the week on the site's clock,
taken over a window of nearby weeks so that seasons do not mislead. Statistics are medians and
median absolute deviations (MAD), which a few bad readings cannot drag; the MAD is scaled by
1.4826 so that it matches a standard deviation for normally distributed noise.

Days that are rare in any window of weeks (holidays, breaks) can instead be pooled by local hour
of the *day* (:func:`day_places`): all days of a week then share one slot per hour.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from numpy.lib.stride_tricks import sliding_window_view

HOURS_PER_WEEK = 168
HOURS_PER_DAY = 24
#: 1 / Φ⁻¹(3/4): scales a MAD to a standard deviation under normal noise.
MAD_TO_SD = 1.482602218505602
#: Fewest readings behind a typical value before detectors trust it.
MIN_SAMPLES = 5
#: Cap on the numbers sorted at once, to keep memory flat for long or fine-grained meters.
_CHUNK_ELEMENTS = 4_000_000
_NS_PER_HOUR = 3_600 * 10**9


@dataclass(frozen=True)
class WeekPlaces:
    """Where each interval sits on the site's local week.

    ``week`` counts local weeks (Monday to Sunday) from the first; ``slot`` is the local hour of
    the week (0 = Monday 00:00–01:00), or of the day when ``n_slots`` is 24; ``rank`` numbers the
    intervals sharing a week and slot (0 … per_slot − 1, more in the hour the clocks go back).
    """

    week: np.ndarray
    slot: np.ndarray
    rank: np.ndarray
    per_slot: int
    n_slots: int = HOURS_PER_WEEK

    @property
    def n_weeks(self) -> int:
        return int(self.week.max()) + 1 if self.week.size else 0


@dataclass(frozen=True)
class Pattern:
    """Per interval: the typical reading for its hour of the week and the robust spread."""

    typical: np.ndarray
    spread: np.ndarray


def week_places(index: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta) -> WeekPlaces:
    """Locate UTC interval starts on the site's local week (daylight saving respected)."""
    return _places(index, timezone, interval, HOURS_PER_WEEK)


def day_places(index: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta) -> WeekPlaces:
    """Like :func:`week_places`, but the slot is the local hour of the day.

    The seven days of a week share each slot, so a window of weeks pools every day in it: the
    typical value of rare days (a holiday has one hour of the week in nine weeks) from all such
    days nearby, whatever their weekday.
    """
    return _places(index, timezone, interval, HOURS_PER_DAY)


def _places(
    index: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta, n_slots: int
) -> WeekPlaces:
    wall = index.tz_convert(timezone).tz_localize(None).as_unit("ns").asi8
    hours = wall // _NS_PER_HOUR
    days = hours // 24
    # 1970-01-01 was a Thursday: shifting by three days makes weeks start on Monday.
    week_absolute = (days + 3) // 7
    slot = (((days + 3) % 7) * 24 + hours % 24) % n_slots
    week = week_absolute - (week_absolute.min() if week_absolute.size else 0)
    key = week * n_slots + slot
    order = np.argsort(key, kind="stable")
    ordered = key[order]
    positions = np.arange(key.size)
    opens_group = np.concatenate(([True], ordered[1:] != ordered[:-1]))
    group_start = np.maximum.accumulate(np.where(opens_group, positions, 0))
    rank = np.empty_like(positions)
    rank[order] = positions - group_start
    per_hour = max(1, int(np.ceil(pd.Timedelta(hours=1) / interval)))
    per_slot = per_hour * (HOURS_PER_WEEK // n_slots)
    return WeekPlaces(week=week, slot=slot, rank=rank, per_slot=per_slot, n_slots=n_slots)


def weekly_pattern(
    values: np.ndarray, places: WeekPlaces, weeks: int, min_samples: int = MIN_SAMPLES
) -> Pattern:
    """Median and 1.4826·MAD of each interval's slot (local hour) over ``weeks`` nearby weeks.

    The window is centred on the interval's own week and slides inward at the ends of the record
    so that every window holds the same number of weeks. Missing readings (NaN) are ignored;
    where fewer than ``min_samples`` readings remain, both results are NaN.
    """
    n_weeks = places.n_weeks
    if n_weeks == 0:
        return Pattern(typical=np.array([]), spread=np.array([]))
    span = min(weeks, n_weeks)
    n_windows = n_weeks - span + 1
    per_slot, n_slots = places.per_slot, places.n_slots
    table = np.full((n_weeks, n_slots, per_slot), np.nan)
    usable = (places.rank < per_slot) & np.isfinite(values)
    table[places.week[usable], places.slot[usable], places.rank[usable]] = values[usable]

    median = np.empty((n_windows, n_slots))
    mad = np.empty((n_windows, n_slots))
    count = np.empty((n_windows, n_slots), dtype=np.int64)
    chunk = max(1, _CHUNK_ELEMENTS // (n_slots * per_slot * span))
    for low in range(0, n_windows, chunk):
        high = min(n_windows, low + chunk)
        windows = sliding_window_view(table[low : high + span - 1], span, axis=0)
        samples = windows.reshape(high - low, n_slots, per_slot * span)
        median[low:high], mad[low:high], count[low:high] = _median_and_mad(samples)

    window = np.clip(places.week - span // 2, 0, n_windows - 1)
    typical = median[window, places.slot]
    spread = MAD_TO_SD * mad[window, places.slot]
    thin = count[window, places.slot] < min_samples
    typical[thin] = np.nan
    spread[thin] = np.nan
    return Pattern(typical=typical, spread=spread)


def _median_and_mad(samples: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Median, MAD and count of the finite numbers along the last axis (NaN where none)."""
    count = np.isfinite(samples).sum(axis=-1)
    median = _sorted_median(np.sort(samples, axis=-1), count)
    deviations = np.abs(samples - median[..., None])
    mad = _sorted_median(np.sort(deviations, axis=-1), count)
    return median, mad, count


def _sorted_median(ordered: np.ndarray, count: np.ndarray) -> np.ndarray:
    """Median of rows sorted with NaN last, given how many finite numbers each row has."""
    low = np.take_along_axis(ordered, np.maximum((count - 1) // 2, 0)[..., None], axis=-1)
    high = np.take_along_axis(ordered, np.minimum(count // 2, ordered.shape[-1] - 1)[..., None], -1)
    median = 0.5 * (low[..., 0] + high[..., 0])
    median[count == 0] = np.nan
    return median
