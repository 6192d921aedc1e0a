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
(group means), so the fit is a small dense solve whatever the length of the history.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models._family import (
    ModelFamily,
    Statement,
    float_array,
    float_list,
    statement_table,
    timedelta_from,
    timedelta_seconds,
)
from engine.models._inputs import (
    energy_values,
    labels_of,
    local_clock,
    prediction,
    require_interval_data,
    require_same_step,
    require_temperature,
    step_of,
    temperature_values,
)
from engine.models.base import ModelInputs, scenario_rows

WEEK = pd.Timedelta(weeks=1)
#: How occupancy is decided: from the inputs' labels when given ("auto"), always from the
#: labels, or always from the data.
OCCUPANCY_SOURCES: tuple[str, ...] = ("auto", "labels", "data")
_UNOCCUPIED, _OCCUPIED = 0, 1


def slot_of_week(local: pd.DatetimeIndex, step: pd.Timedelta) -> np.ndarray:
    """Time-of-week slot of each local interval start (0 = Monday 00:00)."""
    since_monday = (local - local.normalize()) + pd.to_timedelta(local.day_of_week, unit="D")
    return np.asarray(since_monday // step, dtype=np.int64)


def temperature_segments(temps: np.ndarray, knots: np.ndarray) -> np.ndarray:
    """The piecewise-linear temperature components (one column more than knots); rows add to T."""
    lower = np.concatenate(([-np.inf], knots))
    upper = np.concatenate((knots, [np.inf]))
    segments = np.clip(np.asarray(temps, dtype=float)[:, None], lower, upper)
    segments[:, 1:] -= knots
    return segments


def _group_means(groups: np.ndarray, values: np.ndarray, size: int) -> np.ndarray:
    """Mean of ``values`` (rows) per group; NaN for empty groups."""
    count = np.bincount(groups, minlength=size).astype(float)
    columns = values.reshape(len(groups), -1)
    sums = np.column_stack(
        [np.bincount(groups, weights=column, minlength=size) for column in columns.T]
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        return (sums / count[:, None]).reshape((size, *values.shape[1:]))


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
        if self.occupancy not in OCCUPANCY_SOURCES:
            raise ValueError(f"occupancy must be one of {OCCUPANCY_SOURCES}")
        step = step_of(inputs)
        require_interval_data(step, self.label)
        slots = int(WEEK // step)
        energy = energy_values(inputs, minimum=slots)
        temperature = temperature_values(inputs)
        slot = slot_of_week(local_clock(inputs), step)
        usable = np.isfinite(energy)
        if temperature is not None:
            usable &= np.isfinite(temperature)
        seen = np.bincount(slot[usable], minlength=slots) > 0
        if not seen.all():
            raise InputError(
                f"{int((~seen).sum())} of the {slots} times of the week have no readings"
                + (" with temperatures" if temperature is not None else "")
                + "; time-of-week regression needs each at least once.",
                hint="Fit on at least a few whole weeks of readings.",
            )
        y, slot = energy[usable], slot[usable]
        temps = None if temperature is None else temperature[usable]
        self.knots_ = self._knots(temps)
        segments = None if temps is None else temperature_segments(temps, self.knots_)

        source = self.occupancy
        if source == "auto":
            source = "labels" if inputs.labels is not None else "data"
        if source == "labels":
            self.occupied_slots_ = None
            mode = labels_of(inputs)["occupied"].to_numpy(dtype=bool)[usable].astype(np.int64)
        else:
            self.occupied_slots_ = self._occupied_by_residuals(y, slot, temps, slots)
            mode = self.occupied_slots_[slot].astype(np.int64)

        groups = mode * slots + slot
        columns = 0 if segments is None else segments.shape[1]
        design = np.zeros((len(y), 2 * columns))
        rank = 0
        if segments is not None:
            design[:, :columns] = segments * (mode == _UNOCCUPIED)[:, None]
            design[:, columns:] = segments * (mode == _OCCUPIED)[:, None]
            swept_design = design - _group_means(groups, design, 2 * slots)[groups]
            swept_y = y - _group_means(groups, y, 2 * slots)[groups]
            beta, _, rank, _ = np.linalg.lstsq(swept_design, swept_y, rcond=None)
        else:
            beta = np.zeros(0)
        offsets = _group_means(groups, y - design @ beta, 2 * slots)
        self.interval_ = step
        self.uses_temperature_ = temperature is not None
        self.occupancy_source_ = source
        self.slot_coefficients_ = offsets.reshape(2, slots)
        self.temperature_coefficients_ = beta.reshape(2, columns)
        self.n_parameters_ = int(np.isfinite(offsets).sum() + rank)
        return self

    def _knots(self, temps: np.ndarray | None) -> np.ndarray:
        if temps is None:
            return np.zeros(0)
        low, high = np.quantile(temps, self.knot_quantiles)
        if not high > low:
            raise InputError(
                f"the fit window's temperatures hardly vary ({low:.1f} to {high:.1f} °C), "
                "so no temperature knots can be placed.",
                hint="Fit on a longer window with a range of weather, or without temperature.",
            )
        return np.linspace(low, high, self.knots)

    def _occupied_by_residuals(
        self, y: np.ndarray, slot: np.ndarray, temps: np.ndarray | None, slots: int
    ) -> np.ndarray:
        """The data rule: slots whose residual from a plain temperature line is mostly positive."""
        if temps is None:
            residual = y - y.mean()
        else:
            line = np.column_stack([np.ones_like(temps), temps])
            residual = y - line @ np.linalg.lstsq(line, y, rcond=None)[0]
        positive = np.bincount(slot, weights=residual > 0, minlength=slots)
        return positive / np.bincount(slot, minlength=slots) > self.occupied_share

    def coefficients_table(self) -> pd.DataFrame:
        """The fit in physical units and plain words, per occupancy mode: the average load at
        0 °C over the times of the week, and the slope below the lowest and above the highest
        temperature knot (kWh per hour per °C), e.g. "occupied: below 2.1 °C each °C colder
        adds 3.4 kWh per hour"."""
        self._require_fitted()
        hours = self.interval_ / pd.Timedelta(hours=1)
        rows: list[Statement] = []
        for mode, words in ((_OCCUPIED, "occupied"), (_UNOCCUPIED, "unoccupied")):
            slots = self.slot_coefficients_[mode]
            if not np.isfinite(slots).any():
                continue
            level = float(np.nanmean(slots)) / hours
            rows.append((f"{words}: load at 0 °C", level, "kWh per hour",
                         f"{words} times of the week use {level:,.1f} kWh per hour on average "
                         "before the temperature's effect"))  # fmt: skip
            if not self.uses_temperature_:
                continue
            slopes = self.temperature_coefficients_[mode] / hours
            cold, warm = -slopes[0], slopes[-1]
            rows.append((f"{words}: colder", cold, "kWh per hour per °C",
                         f"{words}, below {self.knots_[0]:.1f} °C each °C colder changes use by "
                         f"{cold:+,.2f} kWh per hour"))  # fmt: skip
            rows.append((f"{words}: warmer", warm, "kWh per hour per °C",
                         f"{words}, above {self.knots_[-1]:.1f} °C each °C warmer changes use by "
                         f"{warm:+,.2f} kWh per hour"))  # fmt: skip
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
        mode = _OCCUPIED if occupied else _UNOCCUPIED
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
