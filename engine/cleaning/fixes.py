"""The fixes a cleaning step applies: pure functions from a cleaned state and params to a new one.

Each fix acts on the range ``[start, end)`` in its params (see :mod:`engine.cleaning.steps`),
never changes its input, and marks every value it fills or changes as estimated.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.holiday_fill import holiday_reach, holiday_typical
from engine.cleaning.like_days import CalendarDays, LikeDays
from engine.cleaning.pattern import week_places, weekly_pattern
from engine.cleaning.steps import step_range
from engine.errors import InputError
from engine.zone_names import require_zone

Fix = Callable[[CleanedSeries, Mapping[str, Any]], CleanedSeries]

#: Weeks either side of a range whose readings define the typical week for filling it.
NEARBY_WEEKS = 4
#: How much of the readings either side of a fill sets its level, and how far that level may
#: move the typical week (three days either side, long enough that one unusual evening does not
#: swing it, short enough to follow a cold spell; at most halving or doubling the typical week).
LEVEL_CONTEXT = pd.Timedelta(days=3)
LEVEL_LIMITS = (0.5, 2.0)


def interpolate(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Replace the range by a straight line between the readings just before and after it."""
    values, estimated, excluded = state.arrays()
    first, stop = step_range(state.values.index, params)
    known = np.flatnonzero(np.isfinite(values))
    before = np.searchsorted(known, first) - 1
    after = np.searchsorted(known, stop)
    if before < 0 or after >= known.size:
        raise InputError(
            "a straight line needs a reading on each side of the range, and one side has none.",
            hint="Use a fill from the typical week ('profile_fill') at the ends of the record.",
        )
    anchors = known[[before, after]]
    values[first:stop] = np.interp(np.arange(first, stop), anchors, values[anchors])
    estimated[first:stop] = True
    return state.replaced(values, estimated, excluded)


def profile_fill(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Replace the range by the meter's typical week from nearby weeks, scaled to the level around.

    The typical value of each interval is the median of the meter's own readings at the same
    local hour of the week in the ``weeks`` (default :data:`NEARBY_WEEKS`) weeks either side,
    leaving out the range itself and values that are estimates; with a campus calendar, of days
    of the same kind (:func:`typical_near`). It is then scaled by the ratio of
    actual to typical energy over :data:`LEVEL_CONTEXT` either side, limited to
    :data:`LEVEL_LIMITS`, so a fill in a cold snap or a quiet week follows its surroundings.
    Public holidays there are left out: their quiet readings are not a quiet week.
    """
    values, estimated, excluded = state.arrays()
    index = state.values.index
    first, stop = step_range(index, params)
    low, typical = _typical_for_step(state, values, estimated, first, stop, params)
    shape = typical[first - low : stop - low]
    if not np.isfinite(shape).all():
        raise InputError(
            f"there are no readings at some hours of the week within {_weeks(params)} weeks of "
            "the range, so its typical week is incomplete.",
            hint="Fill this range by a straight line ('interpolate') or give more 'weeks'.",
        )
    usable = np.isfinite(values) & ~estimated
    context = max(1, int(LEVEL_CONTEXT / state.interval))
    around = np.r_[max(low, first - context) : first, stop : min(len(values), stop + context)]
    around = around[usable[around] & np.isfinite(typical[around - low])]
    around = around[~_on_holidays(state, index[around], params)]
    factor = 1.0
    expected = typical[around - low].sum()
    if around.size >= context // 2 and expected > 0:
        factor = float(np.clip(values[around].sum() / expected, *LEVEL_LIMITS))
    values[first:stop] = shape * factor
    estimated[first:stop] = True
    return state.replaced(values, estimated, excluded)


def spread(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Share the energy recorded in the range over all its intervals, keeping the total.

    Made for a catch-up: a gap whose energy the meter delivered in the interval after it. The
    energy follows the meter's typical week over the range (as in :func:`profile_fill`, unscaled)
    or, where that is unknown, is shared equally.
    """
    values, estimated, excluded = state.arrays()
    first, stop = step_range(state.values.index, params)
    if not np.isfinite(values[first:stop]).any():
        raise InputError(
            "the range holds no reading, so there is no recorded energy to share.",
            hint="Include the catch-up reading in the range, or fill the range instead.",
        )
    total = np.nansum(values[first:stop])
    low, typical = _typical_for_step(state, values, estimated, first, stop, params)
    weights = np.clip(typical[first - low : stop - low], 0.0, None)
    if not (np.isfinite(weights).all() and weights.sum() > 0):
        weights = np.ones(stop - first)
    values[first:stop] = total * (weights / weights.sum())
    estimated[first:stop] = True
    return state.replaced(values, estimated, excluded)


def remove(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Drop the readings in the range: they become missing (and are no longer estimates)."""
    values, estimated, excluded = state.arrays()
    first, stop = step_range(state.values.index, params)
    values[first:stop] = np.nan
    estimated[first:stop] = False
    return state.replaced(values, estimated, excluded)


def cap(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Limit readings in the range to ``low`` and/or ``high``; changed readings are estimates."""
    values, estimated, excluded = state.arrays()
    first, stop = step_range(state.values.index, params)
    if params.get("low") is None and params.get("high") is None:
        raise InputError("a cap needs a 'low' or a 'high' limit.", hint="Give at least one.")
    floor = _limit(params, "low", -np.inf)
    ceiling = _limit(params, "high", np.inf)
    if floor > ceiling:
        raise InputError(
            f"the cap's low limit {floor} is above its high limit {ceiling}.",
            hint="Swap the limits.",
        )
    segment = values[first:stop]
    limited = np.clip(segment, floor, ceiling)
    estimated[first:stop] |= np.isfinite(segment) & (limited != segment)
    values[first:stop] = limited
    return state.replaced(values, estimated, excluded)


def exclude(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Mark the range as excluded from model fitting; the readings stay as they are."""
    values, estimated, excluded = state.arrays()
    first, stop = step_range(state.values.index, params)
    excluded[first:stop] = True
    return state.replaced(values, estimated, excluded)


def rescale(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Multiply the readings in the range by ``factor``: a meter multiplier (a current
    transformer's ratio) or unit that changed and the export kept the old one. The readings
    are corrected measurements, not estimates, so they stay unmarked; the log says what was
    done."""
    values, estimated, excluded = state.arrays()
    first, stop = step_range(state.values.index, params)
    factor = params.get("factor")
    if isinstance(factor, bool) or not isinstance(factor, int | float):
        raise InputError(f"the rescale factor must be a number, not {factor!r}.")
    if not (np.isfinite(factor) and factor > 0):
        raise InputError(
            f"the rescale factor must be a positive number, not {factor}.",
            hint="Take it from the meter's records, e.g. 2 for a multiplier that halved.",
        )
    values[first:stop] *= float(factor)
    return state.replaced(values, estimated, excluded)


def accept(state: CleanedSeries, params: Mapping[str, Any]) -> CleanedSeries:
    """Change nothing: the finding named in ``params`` is expected, and reviews leave it out
    (:func:`engine.steps.cleaning.review_meter`). The range must still lie on the grid."""
    step_range(state.values.index, params)
    return state


#: The fix for each step kind (keys match :data:`engine.cleaning.steps.STEP_KINDS`).
FIXES: dict[str, Fix] = {
    "interpolate": interpolate,
    "profile_fill": profile_fill,
    "spread": spread,
    "remove": remove,
    "cap": cap,
    "exclude": exclude,
    "rescale": rescale,
    "accept": accept,
}


def typical_near(
    index: pd.DatetimeIndex,
    interval: pd.Timedelta,
    values: np.ndarray,
    usable: np.ndarray,
    first: int,
    stop: int,
    timezone: str,
    weeks: int = NEARBY_WEEKS,
    calendar: CampusCalendar | None = None,
) -> tuple[int, np.ndarray]:
    """Typical values around grid positions ``[first, stop)`` from nearby weeks.

    Returns ``(offset, typical)`` where ``typical`` covers grid positions from ``offset`` to
    ``weeks`` weeks past the range. Only ``usable`` readings outside the range count; a position
    whose hour of the week has no such reading is NaN. With the campus ``calendar`` a
    position's typical value comes from nearby days of its own kind where they have readings
    (:class:`engine.cleaning.like_days.LikeDays`): the first days of a term are filled like
    term days, not like the break before them; and public holidays in the range as the meter's
    own holidays ran (:func:`engine.cleaning.holiday_fill.holiday_typical`).
    """
    reach = pd.Timedelta(weeks=weeks)
    low = int(index.searchsorted(index[first] - reach, side="left"))
    high = int(index.searchsorted(index[stop - 1] + reach, side="right"))
    sample = np.where(usable[low:high], values[low:high], np.nan)
    sample[first - low : stop - low] = np.nan
    nearby = index[low:high]
    places = week_places(nearby, timezone, interval)
    if calendar is None:
        return low, weekly_pattern(sample, places, weeks=places.n_weeks, min_samples=1).typical
    days = CalendarDays.label(nearby, timezone, calendar)
    like = LikeDays(nearby, timezone, interval, places.n_weeks, days)
    typical = like.pattern(sample, min_samples=1).typical
    if days.holiday[first - low : stop - low].any():
        reach = holiday_reach(index, first, stop)
        readings = pd.Series(np.where(usable[reach], values[reach], np.nan), index=index[reach])
        labels = CalendarDays.label(index[reach], timezone, calendar)
        own = holiday_typical(
            readings, labels, interval, first - reach.start, stop - reach.start, timezone, weeks
        )
        inside = typical[first - low : stop - low]
        inside[np.isfinite(own)] = own[np.isfinite(own)]
    return low, typical


def _typical_for_step(
    state: CleanedSeries,
    values: np.ndarray,
    estimated: np.ndarray,
    first: int,
    stop: int,
    params: Mapping[str, Any],
) -> tuple[int, np.ndarray]:
    """:func:`typical_near` with the step's zone and weeks, leaving estimated values out."""
    return typical_near(
        state.values.index,
        state.interval,
        values,
        ~estimated,
        first,
        stop,
        _timezone(params),
        _weeks(params),
        state.calendar,
    )


def _on_holidays(
    state: CleanedSeries, starts: pd.DatetimeIndex, params: Mapping[str, Any]
) -> np.ndarray:
    """Which interval ``starts`` fall on a public holiday of the state's calendar."""
    if state.calendar is None:
        return np.zeros(len(starts), dtype=bool)
    return CalendarDays.label(starts, _timezone(params), state.calendar).holiday


def _limit(params: Mapping[str, Any], name: str, absent: float) -> float:
    value = params.get(name)
    if value is None:
        return absent
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(f"the cap's '{name}' limit must be a number, not {value!r}.")
    return float(value)


def _weeks(params: Mapping[str, Any]) -> int:
    weeks = params.get("weeks", NEARBY_WEEKS)
    if not isinstance(weeks, int) or isinstance(weeks, bool) or weeks < 1:
        raise InputError(f"'weeks' must be a whole number of at least 1, not {weeks!r}.")
    return weeks


def _timezone(params: Mapping[str, Any]) -> str:
    return require_zone(params.get("timezone"), "the step's site time zone")
