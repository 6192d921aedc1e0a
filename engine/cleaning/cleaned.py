"""A meter's series after cleaning: values with the marks that say which ones to trust."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar


@dataclass(frozen=True)
class CleanedSeries:
    """Readings on the full interval grid after replaying cleaning steps.

    ``values`` are kWh per interval (NaN where still missing); ``estimated`` marks values a step
    filled or changed; ``excluded`` marks readings kept for totals but left out of model fitting.
    ``calendar`` is the site's campus calendar the steps were replayed with (fills compare like
    days with like), None without one.
    """

    values: pd.Series
    estimated: pd.Series
    excluded: pd.Series
    interval: pd.Timedelta
    calendar: CampusCalendar | None = None

    @classmethod
    def start(
        cls, grid: pd.Series, interval: pd.Timedelta, calendar: CampusCalendar | None = None
    ) -> CleanedSeries:
        """The state before any step: the readings as recorded, nothing marked."""
        return cls.from_arrays(
            grid.index,
            grid.to_numpy(dtype="float64", copy=True),
            np.zeros(len(grid), dtype=bool),
            np.zeros(len(grid), dtype=bool),
            interval,
            calendar,
        )

    @classmethod
    def from_arrays(
        cls,
        index: pd.DatetimeIndex,
        values: np.ndarray,
        estimated: np.ndarray,
        excluded: np.ndarray,
        interval: pd.Timedelta,
        calendar: CampusCalendar | None = None,
    ) -> CleanedSeries:
        return cls(
            values=pd.Series(values, index=index, name="kwh"),
            estimated=pd.Series(estimated, index=index, name="estimated"),
            excluded=pd.Series(excluded, index=index, name="excluded"),
            interval=interval,
            calendar=calendar,
        )

    def arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Writable copies of values, estimated and excluded, for a fix to change."""
        return (
            self.values.to_numpy(dtype="float64", copy=True),
            self.estimated.to_numpy(dtype=bool, copy=True),
            self.excluded.to_numpy(dtype=bool, copy=True),
        )

    def replaced(
        self, values: np.ndarray, estimated: np.ndarray, excluded: np.ndarray
    ) -> CleanedSeries:
        """The same grid with new arrays."""
        return CleanedSeries.from_arrays(
            self.values.index, values, estimated, excluded, self.interval, self.calendar
        )
