"""Like with like: the campus calendar sorts days into classes that are compared only in-class.

A break or a closure is not a fault, yet next to term days its readings look like one long dip.
With the campus calendar each local day gets the class of its campus period, and an interval's
typical value comes from days of that class only:

* ``ordinary``: term days, and days outside every listed period or in one of kind "other";
* ``summer``: summer-session days;
* ``break`` and ``closure``: days of those periods.

Ordinary and summer days are compared by local hour of the week over nearby weeks, as without a
calendar. Breaks and closures are too short for that (a nine-day spring break holds one Monday),
so their days are pooled by local hour of the day, whatever their weekday. Where a class has
too few readings nearby, the typical week of all days stands in.

Only the typical value comes from like days. The robust spread, the yardstick for a reading's
distance from typical, is the larger of the like days' spread and all days' spread at that hour:
the calendar sharpens what a reading is compared with without narrowing the yardstick, so no day
is judged more strictly than without a calendar. (A class rests on fewer days than the whole
window; and ordinary days judged by their own, narrower spread would turn many hot evenings into
spikes, which the detectors, having no temperatures, cannot tell from faults.)
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.cleaning.pattern import (
    MIN_SAMPLES,
    Pattern,
    WeekPlaces,
    day_places,
    week_places,
    weekly_pattern,
)

DAY_CLASSES: tuple[str, ...] = ("ordinary", "summer", "break", "closure")
ORDINARY, SUMMER, BREAK, CLOSURE = range(len(DAY_CLASSES))
#: The campus period kind behind each class other than ``ordinary``.
_CLASS_OF_KIND = {"summer": SUMMER, "break": BREAK, "closure": CLOSURE}


@dataclass(frozen=True)
class CalendarDays:
    """Per interval: the class of its local day (a position in :data:`DAY_CLASSES`) and whether
    that day is a public holiday."""

    day_class: np.ndarray
    holiday: np.ndarray

    @classmethod
    def label(
        cls, index: pd.DatetimeIndex, timezone: str, calendar: CampusCalendar
    ) -> CalendarDays:
        """Label UTC interval starts on the site's clock."""
        labels = label_intervals(index, timezone, calendar)
        kind = labels["period_kind"].astype(object)
        day_class = kind.map(_CLASS_OF_KIND).fillna(ORDINARY).to_numpy(dtype=np.int8)
        holiday = (labels["day_type"] == "holiday").to_numpy(dtype=bool)
        return cls(day_class=day_class, holiday=holiday)

    def within(self, span: slice) -> CalendarDays:
        """The labels of the intervals in ``span``."""
        return CalendarDays(day_class=self.day_class[span], holiday=self.holiday[span])

    @property
    def quiet(self) -> np.ndarray:
        """Intervals on days the campus is expected to be quiet: holidays, breaks, closures."""
        return self.holiday | (self.day_class == BREAK) | (self.day_class == CLOSURE)


@dataclass(frozen=True)
class LikeDays:
    """A meter's grid placed on the local week (and day), compared like with like.

    It gives the typical value and robust spread of any series on the grid (:meth:`pattern`):
    the readings, or the readings less the weather's effect, each from days of its own class.
    The grid is placed once, on first use.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        The grid's UTC interval starts.
    timezone : str
        The site's zone, which places intervals on the local week.
    interval : pandas.Timedelta
        The meter's interval.
    weeks : int
        Weeks in the rolling window (``CleaningSettings.pattern_weeks``).
    days : CalendarDays or None
        The grid's calendar labels; ``None`` (no calendar) compares every day with all days by
        hour of the week.
    """

    index: pd.DatetimeIndex
    timezone: str
    interval: pd.Timedelta
    weeks: int
    days: CalendarDays | None

    @cached_property
    def by_week(self) -> WeekPlaces:
        """Each interval's place on the local week (:func:`week_places`)."""
        return week_places(self.index, self.timezone, self.interval)

    @cached_property
    def by_day(self) -> WeekPlaces:
        """Each interval's place by local hour of the day (:func:`day_places`)."""
        return day_places(self.index, self.timezone, self.interval)

    def pattern(self, values: np.ndarray, min_samples: int = MIN_SAMPLES) -> Pattern:
        """Typical value and robust spread of each interval from days of its own class.

        ``values`` are on the grid, NaN where missing. A typical value needs ``min_samples``
        readings; where its class has fewer, all days' pattern stands in.
        """
        every_day = weekly_pattern(values, self.by_week, self.weeks, min_samples)
        days = self.days
        if days is None:
            return every_day
        typical, spread = every_day.typical.copy(), every_day.spread.copy()
        places = {ORDINARY: self.by_week, SUMMER: self.by_week, BREAK: self.by_day}
        places[CLOSURE] = self.by_day
        for day_class, where in places.items():
            members = days.day_class == day_class
            if not members.any():
                continue
            own = weekly_pattern(
                np.where(members & ~days.holiday, values, np.nan), where, self.weeks, min_samples
            )
            known = members & np.isfinite(own.typical)
            typical[known] = own.typical[known]
            spread[known] = np.fmax(own.spread[known], every_day.spread[known])
        return Pattern(typical=typical, spread=spread)
