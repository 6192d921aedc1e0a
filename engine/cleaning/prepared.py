"""A meter made ready for the detectors: readings on the grid with its typical week beside them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar
from engine.cleaning.day_lines import DayLines, fit_day_lines
from engine.cleaning.days import WholeDays
from engine.cleaning.findings import Finding
from engine.cleaning.fixes import typical_near
from engine.cleaning.grid import to_grid
from engine.cleaning.holiday_fill import holiday_reach, holiday_typical
from engine.cleaning.like_days import CalendarDays, LikeDays
from engine.cleaning.pattern import Pattern
from engine.cleaning.settings import CleaningSettings
from engine.cleaning.steps import CleaningStep, range_step
from engine.cleaning.weather_response import (
    WeatherResponse,
    interval_temperatures,
    judged_with_weather,
)
from engine.cleaning.wording import duration_text, energy_text, local_text
from engine.errors import InputError
from engine.words import counted

#: The percentile that stands for "about the highest this meter normally reads".
HIGH_PERCENTILE = 99.5
_NS_PER_DAY = 86_400 * 10**9


@dataclass(frozen=True)
class PreparedMeter:
    """Everything the detectors share about one meter.

    ``values`` runs from the first to the last reading present, NaN where missing. ``typical``
    and ``spread`` come from :meth:`engine.cleaning.like_days.LikeDays.pattern` (days of the same
    campus-calendar class when a calendar is given) and, for a weather-driven meter, include its
    response to the temperature (``weather``, see :mod:`engine.cleaning.weather_response`;
    ``None`` for other meters and without temperatures); the spread is never below
    ``spread_floor_share`` of ``level`` (the median positive reading). ``high`` is the meter's
    99.5th-percentile reading. ``local_day`` numbers each interval's local calendar day (days
    since 1970-01-01 on the site's clock) and ``days`` the whole local days that count for
    daily comparisons (:mod:`engine.cleaning.days`); ``day_lines`` fits each local day as a
    whole to its typical values (:mod:`engine.cleaning.day_lines`); ``calendar_days`` holds the
    campus calendar's labels of the grid, or ``None`` without a calendar.
    """

    name: str
    timezone: str
    interval: pd.Timedelta
    index: pd.DatetimeIndex
    values: np.ndarray
    typical: np.ndarray
    spread: np.ndarray
    level: float
    high: float
    settings: CleaningSettings
    local_day: np.ndarray
    days: WholeDays
    day_lines: DayLines
    calendar_days: CalendarDays | None = None
    weather: WeatherResponse | None = None

    @classmethod
    def build(
        cls,
        name: str,
        readings: pd.Series,
        interval: pd.Timedelta,
        timezone: str,
        settings: CleaningSettings,
        calendar: CampusCalendar | None = None,
        temperatures: pd.Series | None = None,
    ) -> PreparedMeter:
        """Put the readings on their grid and learn the typical week (with the weather when
        ``temperatures``, hourly °C on a UTC index, are given and the meter depends on them)."""
        grid = to_grid(readings, interval, name, timezone)
        present = np.flatnonzero(np.isfinite(grid.to_numpy()))
        if present.size == 0:
            raise InputError(
                f"meter '{name}' has no readings.", hint="Import a file with readings."
            )
        grid = grid.iloc[present[0] : present[-1] + 1]
        values = grid.to_numpy(dtype="float64")
        labels = None
        if calendar is not None:
            labels = CalendarDays.label(grid.index, timezone, calendar)
        like = LikeDays(grid.index, timezone, interval, settings.pattern_weeks, labels)
        pattern = like.pattern(values)
        wall = grid.index.tz_convert(timezone).tz_localize(None).as_unit("ns").asi8
        positive = values[values > 0]
        level = float(np.median(positive)) if positive.size else 0.0
        floor = max(settings.spread_floor_share * level, np.finfo(float).tiny)
        pattern = Pattern(pattern.typical, np.maximum(pattern.spread, floor))
        local_day = wall // _NS_PER_DAY
        days = WholeDays.of(values, local_day, interval, None if labels is None else labels.quiet)
        weather = None
        if temperatures is not None and interval <= pd.Timedelta(days=1):
            temperature = interval_temperatures(temperatures, grid.index, interval)
            pattern, weather = judged_with_weather(
                values, like, pattern, days, temperature, settings.spike_z
            )
        typical, spread = pattern.typical, np.maximum(pattern.spread, floor)
        return cls(
            name=name,
            timezone=timezone,
            interval=interval,
            index=grid.index,
            values=values,
            typical=typical,
            spread=spread,
            level=level,
            high=float(np.nanpercentile(values, HIGH_PERCENTILE)),
            settings=settings,
            local_day=local_day,
            days=days,
            day_lines=fit_day_lines(local_day, values, typical, spread),
            calendar_days=labels,
            weather=weather,
        )

    def __len__(self) -> int:
        return self.values.size

    @property
    def like_days(self) -> str:
        """How "typical" was judged, for explanations."""
        if self.calendar_days is None:
            return "for that hour of the week"
        return "for that hour on days of the same kind in the campus calendar"

    def expectation(self, at: int) -> str:
        """What the reading at grid position ``at`` was judged against, in words: "where about
        46.8 kWh is typical for that hour of the week", or for a weather-driven meter "where,
        judged against the weather, about 420 kWh is expected at 31 °C for that hour of the
        week"."""
        typical = energy_text(self.typical[at])
        if not self.judged_by_weather(at):
            return f"where about {typical} is typical {self.like_days}"
        return (
            f"where, judged against the weather, about {typical} is expected at "
            f"{self.weather.temperature[at]:.0f} °C {self.like_days}"
        )

    def judged_by_weather(self, at: int) -> bool:
        """Whether the expectation at grid position ``at`` includes the weather."""
        return self.weather is not None and bool(np.isfinite(self.weather.effect[at]))

    @property
    def usual(self) -> np.ndarray:
        """Per interval, what its own day makes usual: the day's line, else the typical value."""
        line = self.day_lines.expected
        return np.where(np.isfinite(line), line, self.typical)

    def end_of(self, stop: int) -> pd.Timestamp:
        """The end of the interval just before grid position ``stop``."""
        return self.index[stop - 1] + self.interval

    def when(self, first: int, stop: int) -> str:
        """``"for 6 h (24 intervals) from … to …"`` on the site's clock."""
        span = duration_text((stop - first) * self.interval)
        return (
            f"for {span} ({counted(stop - first, 'interval')}) from "
            f"{local_text(self.index[first], self.timezone)} to "
            f"{local_text(self.end_of(stop), self.timezone)} site time"
        )

    def expected_energy(self, first: int, stop: int) -> float:
        """What the typical week expects over ``[first, stop)``; NaN when it is unknown there.

        Public holidays in the range expect what a fill gives them: the meter's own holiday
        habit (:func:`engine.cleaning.holiday_fill.holiday_typical`) where it has one.
        """
        typical = self.typical[first:stop]
        if self.holds_holiday(first, stop):
            reach = holiday_reach(self.index, first, stop)
            own = holiday_typical(
                pd.Series(self.values[reach], index=self.index[reach]),
                self.calendar_days.within(reach), self.interval, first - reach.start,
                stop - reach.start, self.timezone, self.settings.pattern_weeks // 2,
            )  # fmt: skip
            typical = np.where(np.isfinite(own), own, typical)
        if not np.isfinite(typical).any():
            return float("nan")
        return float(np.nanmean(typical) * (stop - first))

    def holds_holiday(self, first: int, stop: int) -> bool:
        """Whether grid positions ``[first, stop)`` include a public holiday of the calendar."""
        days = self.calendar_days
        return days is not None and bool(days.holiday[first:stop].any())

    def step(self, kind: str, first: int, stop: int, note: str, **extra: Any) -> CleaningStep:
        """A step of ``kind`` over grid positions ``[first, stop)``."""
        return range_step(kind, self.name, self.index[first], self.end_of(stop), note, **extra)

    def fill_step(self, first: int, stop: int, note: str) -> CleaningStep:
        """A straight line for short ranges, the typical week for long ones.

        Falls back to the straight line when nearby weeks cannot give a complete typical week,
        and to the typical week at the ends of the record where a line has no second anchor.
        """
        inside = first > 0 and stop < len(self)
        short = (stop - first) * self.interval <= self.settings.short_gap
        if inside and (short or not self._typical_week_complete(first, stop)):
            return self.step("interpolate", first, stop, note)
        return self.step("profile_fill", first, stop, note, timezone=self.timezone)

    def _typical_week_complete(self, first: int, stop: int) -> bool:
        usable = np.ones(len(self), dtype=bool)
        low, typical = typical_near(
            self.index, self.interval, self.values, usable, first, stop, self.timezone
        )
        return bool(np.isfinite(typical[first - low : stop - low]).all())

    def finding(
        self,
        kind: str,
        first: int,
        stop: int,
        severity: str,
        explanation: str,
        fix: CleaningStep | None,
        **measures: float,
    ) -> Finding:
        """A finding over grid positions ``[first, stop)`` with its energy filled in."""
        return Finding(
            meter=self.name,
            kind=kind,
            start=self.index[first],
            end=self.end_of(stop),
            severity=severity,
            explanation=explanation,
            fix=fix,
            intervals=int(stop - first),
            energy_kwh=float(np.nansum(self.values[first:stop])),
            expected_kwh=self.expected_energy(first, stop),
            measures={name: float(value) for name, value in measures.items()},
        )
