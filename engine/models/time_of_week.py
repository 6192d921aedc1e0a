"""Time-of-week-and-temperature regression (TOWT; Mathieu et al. 2011).

After J. L. Mathieu, P. N. Price, S. Kiliccote and M. A. Piette, "Quantifying changes in
building electricity use, with application to demand response", IEEE Transactions on Smart
Grid 2(3), 2011 (method recalled from memory). Energy per interval is one coefficient per
time-of-week slot (168 for hourly readings, 672 for 15-minute ones) plus a piecewise-linear
function of outdoor temperature, fitted separately for occupied and unoccupied intervals.

* Temperature segments: with knots ``B1 < … < Bk`` the temperature ``T`` is split into
  ``min(T, B1)``, ``clip(T, B(i-1), Bi) − B(i-1)`` and ``max(T − Bk, 0)``, which add up to ``T``;
  each segment gets its own slope, so the model bends at the knots. Knots are equally spaced
  between two quantiles of the fit window's temperatures.
* Occupancy: from the calendar labels, or from the data by the paper's rule (from memory): a
  time-of-week slot is occupied when a plain regression of energy on temperature leaves a
  positive residual in more than 65 % of that slot's intervals.
* The paper (from memory) gives unoccupied intervals a single temperature slope; here both
  modes get the segments, since campus heating and cooling run around the clock.

Both modes are solved together by least squares with the slot coefficients swept out
(group means), so the fit is a small dense solve whatever the length of the history. Its
normal equations are built from counts and sums per slot and temperature bin rather than
from a design matrix, and fits before many cuts of one history find the slots, labels and
usable rows once; each window then only places its own knots, decides its occupancy (data
rule) and sums its rows (:mod:`engine.models._time_of_week_fitting`).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models._family import (
    Degrees,
    ModelFamily,
    Statement,
    float_array,
    float_list,
    statement_table,
    timedelta_from,
    timedelta_seconds,
)
from engine.models._inputs import (
    labels_of,
    local_clock,
    prediction,
    require_same_step,
    require_temperature,
    step_of,
)
from engine.models._time_of_week_fitting import (
    OCCUPIED,
    UNOCCUPIED,
    WeekFit,
    WeekHistory,
    slot_of_week,
    temperature_segments,
)
from engine.models.base import ModelInputs, scenario_rows

#: How occupancy is decided: from the inputs' labels when given ("auto"), always from the
#: labels, or always from the data.
OCCUPANCY_SOURCES: tuple[str, ...] = ("auto", "labels", "data")


class TimeOfWeekTemperatureModel(ModelFamily):
    """Time-of-week-and-temperature regression (Mathieu et al. 2011).

    Parameters
    ----------
    knots : int, default 6
        Temperature knots, equally spaced between ``knot_quantiles`` of the fit temperatures.
    knot_quantiles : (float, float), default (0.05, 0.95)
    occupancy : {"auto", "labels", "data"}, default "auto"
        "labels" uses the calendar's occupied flag of each interval (holidays and closures
        unoccupied); "data" classifies time-of-week slots by the residual rule; "auto" uses
        the labels when the inputs carry them and the data otherwise.
    occupied_share : float, default 0.65
        Share of positive residuals above which a slot is occupied (data rule).

    Attributes
    ----------
    knots_ : numpy.ndarray
        Temperature knots (°C); empty when fitted without temperature.
    slot_coefficients_ : numpy.ndarray
        kWh per interval of each time-of-week slot, rows unoccupied and occupied; NaN where a
        slot never occurred in that mode (prediction then uses the other mode).
    temperature_coefficients_ : numpy.ndarray
        kWh per interval per °C of each temperature segment, rows unoccupied and occupied.
    occupied_slots_ : numpy.ndarray or None
        Data-rule occupancy per slot, or None when the labels decide.
    n_parameters_ : int
        Identified slot coefficients plus the rank of the temperature part.
    """

    family = "time_of_week_temperature"
    label = "time-of-week-and-temperature regression"
    explainable = True

    def how_it_forecasts(self) -> str:
        return (
            "gives each hour of the week its own level and adds a bent line of outdoor "
            "temperature, separately for occupied and unoccupied times"
        )

    def __init__(
        self,
        knots: int = 6,
        *,
        knot_quantiles: tuple[float, float] = (0.05, 0.95),
        occupancy: str = "auto",
        occupied_share: float = 0.65,
    ) -> None:
        self.knots = knots
        self.knot_quantiles = knot_quantiles
        self.occupancy = occupancy
        self.occupied_share = occupied_share

    @classmethod
    def candidate_settings(cls) -> list[dict[str, Any]]:
        return [{"knots": 4}, {"knots": 6}, {"knots": 8}]

    def fit(self, inputs: ModelInputs) -> TimeOfWeekTemperatureModel:
        """Fit slot coefficients and temperature slopes for both occupancy modes."""
        self._check_settings()
        return self._take(WeekHistory(self, inputs).solve(None))

    def fit_before_each(
        self, inputs: ModelInputs, cuts: Sequence[pd.Timestamp]
    ) -> list[TimeOfWeekTemperatureModel | Exception]:
        """:meth:`fit` on the inputs before each cut, finding slots, labels and usable rows
        once (see :mod:`engine.models._time_of_week_fitting`); the same results."""
        self._check_settings()
        return self._fits_sharing(
            lambda: WeekHistory(self, inputs),
            lambda model, history, cut: model._take(history.solve(cut)),
            cuts,
        )

    def _check_settings(self) -> None:
        if self.occupancy not in OCCUPANCY_SOURCES:
            raise ValueError(f"occupancy must be one of {OCCUPANCY_SOURCES}")

    def _take(self, fit: WeekFit) -> TimeOfWeekTemperatureModel:
        """Set the fitted attributes from what a fit learned."""
        self.interval_ = fit.interval
        self.uses_temperature_ = fit.uses_temperature
        self.occupancy_source_ = fit.occupancy_source
        self.knots_ = fit.knots
        self.occupied_slots_ = fit.occupied_slots
        self.slot_coefficients_ = fit.slot_coefficients
        self.temperature_coefficients_ = fit.temperature_coefficients
        self.n_parameters_ = fit.n_parameters
        return self

    def coefficients_table(self, temperature_unit: str = "°C") -> pd.DataFrame:
        """The fit in physical units and plain words, per occupancy mode: the average load at
        0 °C over the times of the week, and the slope below the lowest and above the highest
        temperature knot (kWh per hour per °C), e.g. "occupied: below 2.1 °C each °C colder
        adds 3.4 kWh per hour"."""
        self._require_fitted()
        hours = self.interval_ / pd.Timedelta(hours=1)
        degrees = Degrees(temperature_unit)
        per = f"kWh per hour per {degrees.unit}"
        rows: list[Statement] = []
        for mode, words in ((OCCUPIED, "occupied"), (UNOCCUPIED, "unoccupied")):
            slots = self.slot_coefficients_[mode]
            if not np.isfinite(slots).any():
                continue
            level = float(np.nanmean(slots)) / hours
            rows.append((f"{words}: load at {degrees.text(0.0, digits=0)}", level, "kWh per hour",
                         f"{words} times of the week use {level:,.1f} kWh per hour on average "
                         "before the temperature's effect"))  # fmt: skip
            if not self.uses_temperature_:
                continue
            slopes = self.temperature_coefficients_[mode] / hours
            cold, warm = degrees.per_degree(-slopes[0]), degrees.per_degree(slopes[-1])
            rows.append((f"{words}: colder", cold, per,
                         f"{words}, below {degrees.text(self.knots_[0])} each {degrees.unit} "
                         f"colder changes use by {cold:+,.2f} kWh per hour"))  # fmt: skip
            rows.append((f"{words}: warmer", warm, per,
                         f"{words}, above {degrees.text(self.knots_[-1])} each {degrees.unit} "
                         f"warmer changes use by {warm:+,.2f} kWh per hour"))  # fmt: skip
        return statement_table(rows)

    def temperature_response(self, temps: Any, occupied: bool = True) -> np.ndarray:
        """The temperature part of the prediction (kWh per interval) at ``temps`` °C.

        Relative to 0 °C (the segments add up to ``T``); differences between temperatures are
        the model's weather effect, e.g. for drawing energy against temperature.
        """
        self._require_fitted()
        if not self.uses_temperature_:
            raise InputError(
                f"the {self.label} was fitted without temperature.",
                hint="Fit it with outdoor temperatures to see a temperature response.",
            )
        mode = OCCUPIED if occupied else UNOCCUPIED
        segments = temperature_segments(np.atleast_1d(temps), self.knots_)
        return segments @ self.temperature_coefficients_[mode]

    def _slot_part(self, inputs: ModelInputs) -> tuple[np.ndarray, np.ndarray]:
        """Each interval's occupancy mode and slot coefficient (the prediction at 0 °C)."""
        self._require_fitted()
        step = step_of(inputs)
        require_same_step(self.interval_, step)
        slot = slot_of_week(local_clock(inputs), step)
        if self.occupied_slots_ is None:
            mode = labels_of(inputs)["occupied"].to_numpy(dtype=bool).astype(np.int64)
        else:
            mode = self.occupied_slots_[slot].astype(np.int64)
        mode = np.where(np.isnan(self.slot_coefficients_[mode, slot]), 1 - mode, mode)
        return mode, self.slot_coefficients_[mode, slot]

    def _temperature_part(self, temperature: np.ndarray, mode: np.ndarray) -> np.ndarray:
        segments = temperature_segments(temperature, self.knots_)
        return np.einsum("ij,ij->i", segments, self.temperature_coefficients_[mode])

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """Energy per interval from its time-of-week slot, occupancy and temperature."""
        mode, values = self._slot_part(inputs)
        if self.uses_temperature_:
            temperature = require_temperature(inputs, self.label)
            values = values + self._temperature_part(temperature, mode)
        return prediction(values, inputs)

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """:meth:`predict` under each row of ``temperatures`` (scenarios × intervals).

        Slots and occupancy are looked up once; ``inputs.temperature`` is ignored.
        """
        rows = scenario_rows(inputs, temperatures)
        mode, values = self._slot_part(inputs)
        if not self.uses_temperature_:
            return np.tile(values, (len(rows), 1))
        return np.array([values + self._temperature_part(row, mode) for row in rows]).reshape(
            rows.shape
        )

    def _fitted_state(self) -> dict[str, Any]:
        return {
            "interval_seconds": timedelta_seconds(self.interval_),
            "uses_temperature": self.uses_temperature_,
            "occupancy_source": self.occupancy_source_,
            "knots": float_list(self.knots_),
            "slot_coefficients": [float_list(row) for row in self.slot_coefficients_],
            "temperature_coefficients": [float_list(r) for r in self.temperature_coefficients_],
            "occupied_slots": (
                None if self.occupied_slots_ is None else self.occupied_slots_.tolist()
            ),
            "n_parameters": self.n_parameters_,
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self.interval_ = timedelta_from(state["interval_seconds"])
        self.uses_temperature_ = bool(state["uses_temperature"])
        self.occupancy_source_ = str(state["occupancy_source"])
        self.knots_ = float_array(state["knots"])
        self.slot_coefficients_ = np.array([float_array(r) for r in state["slot_coefficients"]])
        coefficients = [float_array(r) for r in state["temperature_coefficients"]]
        self.temperature_coefficients_ = np.array(coefficients).reshape(2, -1)
        stored_slots = state["occupied_slots"]
        self.occupied_slots_ = None if stored_slots is None else np.array(stored_slots, dtype=bool)
        self.n_parameters_ = int(state["n_parameters"])
