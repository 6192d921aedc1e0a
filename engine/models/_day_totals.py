"""Base of the families that model day totals and spread them over each day's intervals.

Daily change-point regression, daily ETS, monthly SARIMA and the daily form of MSTL-ETS all
predict energy per local day. This base gathers the fit inputs into days, learns the typical
day shape per day group (:class:`~engine.models._shapes.DayShapes`) and turns predicted day
totals into energy per interval of the inputs given to ``predict``.

Gathering into days is done once per history (:class:`DayHistory`), so fits before many cuts
of one history share it: the local clock, the calendar's day groups, each day's total and
mean temperature. A window ending at a cut holds the first days of the history, those whose
every interval lies before the cut (a day the cut splits is incomplete in the window, so it
would never count), and its day shapes come from the energy of its whole days summed per
slot, block by block between the cuts. A fit on the whole inputs is the history's one window.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models._days import DAY_GROUPS, DailyView, daily_view, day_group_codes
from engine.models._family import ModelFamily, timedelta_from, timedelta_seconds
from engine.models._inputs import (
    DAY,
    energy_values,
    labels_of,
    local_clock,
    prediction,
    require_intervals,
    require_known_energy,
    require_same_step,
    step_of,
)
from engine.models._normal_equations import prefix_bincounts
from engine.models._shapes import DayShapes
from engine.models.base import ModelInputs


class DayHistory:
    """One history's local days, shared by the fits of its windows (see the module docstring).

    ``temperature`` is the inputs' temperature per interval (None: days without one); ``cuts``
    are the ends of the windows to be fitted (None: the whole history).
    """

    def __init__(
        self,
        inputs: ModelInputs,
        temperature: np.ndarray | None = None,
        cuts: Sequence[pd.Timestamp | None] = (None,),
    ) -> None:
        self.step = step_of(inputs)
        energy = energy_values(inputs)
        self.uses_temperature = temperature is not None
        local = local_clock(inputs)
        groups = day_group_codes(labels_of(inputs))
        self.view = daily_view(local, self.step, inputs.timezone, groups, energy, temperature)
        self.index = inputs.index
        self._known = np.concatenate([[0], np.cumsum(np.isfinite(energy))])
        #: The first interval of each day, and one past the last interval.
        self._first_rows = np.searchsorted(self.view.position, np.arange(len(self.view.days) + 1))
        self._last_starts = self.index[self._first_rows[1:] - 1]
        self._days = {cut: self._days_before(cut) for cut in cuts}
        key, whole = DayShapes.slot_keys(local, self.step, self.view)
        size = len(DAY_GROUPS) * max(int(DAY // self.step), 1)
        ends = [int(self._first_rows[days]) for days in self._days.values()]
        self._slot_sums = prefix_bincounts(key, np.where(whole, energy, 0.0), size, ends)

    def _days_before(self, cut: pd.Timestamp | None) -> int:
        """How many days have every interval before ``cut`` (UTC; None for all of them)."""
        return len(self.view.days) if cut is None else int(self._last_starts.searchsorted(cut))

    def window(self, cut: pd.Timestamp | None) -> tuple[DailyView, DayShapes]:
        """The days before ``cut`` (one of the history's cuts) and the day shapes they teach."""
        if cut is not None:
            rows = int(self.index.searchsorted(cut))
            require_intervals(rows)
            require_known_energy(int(self._known[rows]), 2)
        days = self._days[cut]
        end = int(self._first_rows[days])
        view = self.view
        window = DailyView(
            days=view.days[:days],
            position=view.position[:end],
            group=view.group[:days],
            energy=view.energy[:days],
            temperature=None if view.temperature is None else view.temperature[:days],
        )
        return window, DayShapes.from_sums(self.step, self._slot_sums[end])


class DayTotalsModel(ModelFamily):
    """A family that predicts energy per local day; see the module docstring."""

    interval_: pd.Timedelta
    day_shapes_: DayShapes

    def _fit_view(self, inputs: ModelInputs, temperature: np.ndarray | None = None) -> DailyView:
        """The fit inputs by local day; also learns the interval and the day shapes."""
        return self._take_days(DayHistory(inputs, temperature), None)

    def _take_days(self, history: DayHistory, cut: pd.Timestamp | None) -> DailyView:
        """The days of ``history`` before ``cut``; learns the interval and the day shapes."""
        view, shapes = history.window(cut)
        if not np.isfinite(view.energy).any():
            raise InputError(
                f"the {self.label} needs whole days of readings, and no day is complete.",
                hint="Fill the gaps in the cleaning step or choose a longer fit window.",
            )
        self.interval_ = history.step
        self.day_shapes_ = shapes
        return view

    def _day_energy(self, view: DailyView) -> np.ndarray:
        """Predicted kWh of each day of ``view``."""
        raise NotImplementedError

    def _prediction_temperature(self, inputs: ModelInputs) -> np.ndarray | None:
        """Temperatures the day predictions need (None for calendar- or history-only models)."""
        return None

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """Energy per interval: each day's predicted total spread by the learned day shape."""
        self._require_fitted()
        step = step_of(inputs)
        require_same_step(self.interval_, step)
        local = local_clock(inputs)
        view = daily_view(
            local,
            step,
            inputs.timezone,
            day_group_codes(labels_of(inputs)),
            None,
            self._prediction_temperature(inputs),
        )
        values = self.day_shapes_.spread(self._day_energy(view), view, local, inputs.timezone)
        return prediction(values, inputs)

    def _day_state(self) -> dict[str, Any]:
        return {
            "interval_seconds": timedelta_seconds(self.interval_),
            "day_shapes": self.day_shapes_.to_dict(),
        }

    def _restore_days(self, state: dict[str, Any]) -> None:
        self.interval_ = timedelta_from(state["interval_seconds"])
        self.day_shapes_ = DayShapes.from_dict(state["day_shapes"])
