"""A meter made ready for the detectors: readings on the grid with its typical week beside them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.cleaning.findings import Finding
from engine.cleaning.fixes import typical_near
from engine.cleaning.grid import to_grid
from engine.cleaning.pattern import week_places, weekly_pattern
from engine.cleaning.settings import CleaningSettings
from engine.cleaning.steps import CleaningStep, range_step
from engine.cleaning.wording import count_text, duration_text, local_text
from engine.errors import InputError

#: The percentile that stands for "about the highest this meter normally reads".
HIGH_PERCENTILE = 99.5


@dataclass(frozen=True)
class PreparedMeter:
    """Everything the detectors share about one meter.

    ``values`` runs from the first to the last reading present, NaN where missing. ``typical``
    and ``spread`` come from :func:`engine.cleaning.pattern.weekly_pattern`; the spread is never
    below ``spread_floor_share`` of ``level`` (the median positive reading). ``high`` is the
    meter's 99.5th-percentile reading.
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

    @classmethod
    def build(
        cls,
        name: str,
        readings: pd.Series,
        interval: pd.Timedelta,
        timezone: str,
        settings: CleaningSettings,
    ) -> PreparedMeter:
        grid = to_grid(readings, interval, name, timezone)
        present = np.flatnonzero(np.isfinite(grid.to_numpy()))
        if present.size == 0:
            raise InputError(
                f"meter '{name}' has no readings.", hint="Import a file with readings."
            )
        grid = grid.iloc[present[0] : present[-1] + 1]
        values = grid.to_numpy(dtype="float64")
        places = week_places(grid.index, timezone, interval)
        pattern = weekly_pattern(values, places, settings.pattern_weeks)
        positive = values[values > 0]
        level = float(np.median(positive)) if positive.size else 0.0
        floor = max(settings.spread_floor_share * level, np.finfo(float).tiny)
        return cls(
            name=name,
            timezone=timezone,
            interval=interval,
            index=grid.index,
            values=values,
            typical=pattern.typical,
            spread=np.maximum(pattern.spread, floor),
            level=level,
            high=float(np.nanpercentile(values, HIGH_PERCENTILE)),
            settings=settings,
        )

    def __len__(self) -> int:
        return self.values.size

    def end_of(self, stop: int) -> pd.Timestamp:
        """The end of the interval just before grid position ``stop``."""
        return self.index[stop - 1] + self.interval

    def when(self, first: int, stop: int) -> str:
        """``"for 6 h (24 intervals) from … to …"`` on the site's clock."""
        span = duration_text((stop - first) * self.interval)
        return (
            f"for {span} ({count_text(stop - first)}) from "
            f"{local_text(self.index[first], self.timezone)} to "
            f"{local_text(self.end_of(stop), self.timezone)} site time"
        )

    def expected_energy(self, first: int, stop: int) -> float:
        """What the typical week expects over ``[first, stop)``; NaN when it is unknown there."""
        typical = self.typical[first:stop]
        if not np.isfinite(typical).any():
            return float("nan")
        return float(np.nanmean(typical) * (stop - first))

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
