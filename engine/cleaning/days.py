"""Whole local days of a meter's grid: the daily sums the day-level detectors compare.

A local day counts when it is a whole day on the site's clock (23 hours or more, so the days
the clocks change count too) and at least :data:`DAY_COVERAGE` of its intervals have a
reading; a day with a few missing intervals is scaled up to its full count. With a campus
calendar the days it makes quiet (holidays, breaks, closures) do not count, so that term days
are compared with term days.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

#: A local day counts when at least this share of its intervals has a reading.
DAY_COVERAGE = 0.9


@dataclass(frozen=True)
class WholeDays:
    """Per interval its local day (0, 1, … from the first); per day whether it counts, the
    factor that scales its readings up to a full day, and its first grid position."""

    day: np.ndarray
    counted: np.ndarray
    scale: np.ndarray
    first: np.ndarray
    first_weekday: int

    @classmethod
    def of(
        cls,
        values: np.ndarray,
        local_day: np.ndarray,
        interval: pd.Timedelta,
        quiet: np.ndarray | None = None,
    ) -> WholeDays:
        """The days of a grid: ``local_day`` numbers each interval's local calendar day (days
        since 1970-01-01 on the site's clock); ``quiet`` flags intervals on quiet days."""
        day = local_day - local_day[0]
        n_days = int(day[-1]) + 1
        present = np.isfinite(values)
        slots = np.bincount(day, minlength=n_days)
        readings = np.bincount(day, weights=present, minlength=n_days)
        whole_day = slots * interval >= pd.Timedelta(hours=23)
        counted = whole_day & (readings >= DAY_COVERAGE * slots)
        if quiet is not None:
            counted &= np.bincount(day, weights=quiet, minlength=n_days) == 0
        with np.errstate(invalid="ignore", divide="ignore"):
            scale = np.where(counted, slots / readings, np.nan)
        # 1970-01-01 was a Thursday.
        first_weekday = int((local_day[0] + 3) % 7)
        return cls(day, counted, scale, np.searchsorted(day, np.arange(n_days)), first_weekday)

    @property
    def weekday(self) -> np.ndarray:
        """Each day's weekday (Monday = 0)."""
        return (np.arange(self.counted.size) + self.first_weekday) % 7

    def energy(self, values: np.ndarray) -> np.ndarray:
        """Each counted day's energy, scaled up for missing readings; NaN for other days."""
        present = np.isfinite(values)
        total = np.bincount(
            self.day, weights=np.where(present, values, 0.0), minlength=self.counted.size
        )
        return total * self.scale

    def total(self, per_interval: np.ndarray) -> np.ndarray:
        """Each counted day's sum of a quantity every interval has (NaN when one lacks it)."""
        total = np.bincount(self.day, weights=per_interval, minlength=self.counted.size)
        return np.where(self.counted, total, np.nan)

    def mean(self, per_interval: np.ndarray) -> np.ndarray:
        """Each counted day's mean of a quantity every interval has (NaN when one lacks it)."""
        return self.total(per_interval) / np.bincount(self.day, minlength=self.counted.size)
