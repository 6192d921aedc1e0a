"""Spreading daily energy over the day's intervals by the meter's own typical day.

Models that predict day (or month) totals need interval values for hourly budgets and
backtests. :class:`DayShapes` learns, per day group, the share of a day's energy that falls
in each interval slot of the local day (from whole days only) and spreads predicted day
totals by it. On daylight-saving days the slots present are re-weighted so a day's intervals
still add up to the day's total.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.models._days import DAY_GROUPS, DailyView
from engine.models._family import timedelta_from, timedelta_seconds
from engine.models._inputs import DAY
from engine.timestamps import local_midnights_utc


def slot_of_day(local: pd.DatetimeIndex, step: pd.Timedelta) -> np.ndarray:
    """Position of each local interval start within its day (0 = the one at midnight)."""
    return np.asarray((local - local.normalize()) // step, dtype=np.int64)


@dataclass(frozen=True)
class DayShapes:
    """Share of a day's energy in each interval slot of the local day, per day group.

    ``shares`` has one row per :data:`DAY_GROUPS` entry and one column per slot; each row
    adds up to 1. Daily inputs have a single slot.
    """

    step: pd.Timedelta
    shares: np.ndarray

    @property
    def n_parameters(self) -> int:
        """Free shares: each group's slots less one, since a row adds up to 1."""
        return int(self.shares.shape[0] * (self.shares.shape[1] - 1))

    @staticmethod
    def slot_keys(
        local: pd.DatetimeIndex, step: pd.Timedelta, view: DailyView
    ) -> tuple[np.ndarray, np.ndarray]:
        """Each interval's (day group, slot of the day) as one key, and whether its day is
        whole (``view.energy`` must be set): the intervals :meth:`from_sums` learns from."""
        slots = max(int(DAY // step), 1)
        key = view.group[view.position] * slots + slot_of_day(local, step)
        return key, np.isfinite(view.energy)[view.position]

    @classmethod
    def from_sums(cls, step: pd.Timedelta, by_key: np.ndarray) -> DayShapes:
        """Shares from the energy of whole days summed per :meth:`slot_keys` key."""
        slots = max(int(DAY // step), 1)
        if slots == 1:
            return cls(step, np.ones((len(DAY_GROUPS), 1)))
        by_slot = np.array(by_key, dtype=float).reshape(len(DAY_GROUPS), slots)
        totals = by_slot.sum(axis=1)
        learned = totals > 0
        if not learned.any():
            by_slot, learned = np.ones_like(by_slot), np.ones(len(DAY_GROUPS), dtype=bool)
        # A group without whole days (e.g. no weekend in a short window) borrows the other's.
        fallback = by_slot[learned].sum(axis=0)
        by_slot[~learned] = fallback
        return cls(step, by_slot / by_slot.sum(axis=1, keepdims=True))

    def spread(
        self,
        day_energy: np.ndarray,
        view: DailyView,
        local: pd.DatetimeIndex,
        timezone: str,
    ) -> np.ndarray:
        """Energy per interval from energy per day of ``view`` (the last axis: rows of scenarios
        give rows of interval values)."""
        per_day = day_energy[..., view.position]
        if self.shares.shape[1] == 1:
            return per_day
        weight = self.shares[view.group[view.position], slot_of_day(local, self.step)]
        # Sum of the shares over every interval each local day really has (23, 24 or 25 h).
        start = local_midnights_utc(view.days[:1], timezone)[0]
        stop = local_midnights_utc(view.days[-1:] + DAY, timezone)[0]
        grid = pd.date_range(start, stop, freq=self.step, inclusive="left")
        grid_local = grid.tz_convert(timezone).tz_localize(None)
        at = view.days.get_indexer(grid_local.normalize())
        kept = at >= 0
        full_day = np.bincount(
            at[kept],
            weights=self.shares[view.group[at[kept]], slot_of_day(grid_local[kept], self.step)],
            minlength=len(view.days),
        )
        return per_day * weight / full_day[view.position]

    def to_dict(self) -> dict[str, Any]:
        return {
            "step_seconds": timedelta_seconds(self.step),
            "shares": self.shares.tolist(),
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> DayShapes:
        return cls(timedelta_from(data["step_seconds"]), np.asarray(data["shares"], dtype=float))
