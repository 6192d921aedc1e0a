"""Base of the families that model day totals and spread them over each day's intervals.

Daily change-point regression, daily ETS, monthly SARIMA and the daily form of MSTL-ETS all
predict energy per local day. This base gathers the fit inputs into days, learns the typical
day shape per day group (:class:`~engine.models._shapes.DayShapes`) and turns predicted day
totals into energy per interval of the inputs given to ``predict``.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models._days import DailyView, daily_view, day_group_codes
from engine.models._family import ModelFamily, timedelta_from, timedelta_seconds
from engine.models._inputs import (
    energy_values,
    labels_of,
    local_clock,
    prediction,
    require_same_step,
    step_of,
)
from engine.models._shapes import DayShapes
from engine.models.base import ModelInputs


class DayTotalsModel(ModelFamily):
    """A family that predicts energy per local day; see the module docstring."""

    interval_: pd.Timedelta
    day_shapes_: DayShapes

    def _fit_view(self, inputs: ModelInputs, temperature: np.ndarray | None = None) -> DailyView:
        """The fit inputs by local day; also learns the interval and the day shapes."""
        step = step_of(inputs)
        energy = energy_values(inputs)
        local = local_clock(inputs)
        view = daily_view(
            local, step, inputs.timezone, day_group_codes(labels_of(inputs)), energy, temperature
        )
        if not np.isfinite(view.energy).any():
            raise InputError(
                f"the {self.label} needs whole days of readings, and no day is complete.",
                hint="Fill the gaps in the cleaning step or choose a longer fit window.",
            )
        self.interval_ = step
        self.day_shapes_ = DayShapes.learn(local, step, view, energy)
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
