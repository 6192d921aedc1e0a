"""Change-point regression of daily energy on daily mean temperature, per day group.

The shapes (2P … 5P) are those of ASHRAE research project RP-1050 (Kissock, Haberl & Claridge
2003), fitted by :mod:`engine.changepoint`. Campus weekdays and weekends/holidays differ in
level and often in heating, so by default each day group gets its own fit. The model predicts
day totals; for hourly (or shorter) inputs it spreads each predicted day over its intervals by
the meter's typical share of the day in each interval for that day group, learned from whole
days in the fit window (:class:`engine.models._shapes.DayShapes`). Without temperature it
predicts each day group's mean daily energy.

Backtests and budgets fit the model before many monthly cuts of one history: the days are
gathered once (:class:`~engine.models._day_totals.DayHistory`) and each window is the
history's first days, so a window only does what depends on its own days: the groups'
change-point fits, whose search scores every candidate from running sums over the
temperature-sorted days (:mod:`engine.changepoint`), and its day shapes from sums per slot
added up between the cuts. The results equal fits from scratch (a test checks).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from engine.changepoint import PARAMETER_COUNT, ChangePointFit, select_best
from engine.errors import InputError
from engine.models._day_totals import DayHistory, DayTotalsModel
from engine.models._days import (
    DAY_GROUPS,
    DailyView,
    daily_view,
    day_group_codes,
    day_mean_temperatures,
)
from engine.models._family import Degrees, Statement, statement_table
from engine.models._inputs import (
    labels_of,
    local_clock,
    require_same_step,
    require_temperature,
    step_of,
    temperature_values,
)
from engine.models.base import ModelInputs, scenario_rows

#: Name of the single fit when day groups are not split.
ALL_DAYS = "all_days"
#: Day groups as the statements name them.
_GROUP_WORDS = {"weekday": "weekdays", "weekend_or_holiday": "weekends and holidays",
                ALL_DAYS: "all days"}  # fmt: skip


class DailyChangePointModel(DayTotalsModel):
    """Daily change-point regression (ASHRAE RP-1050 shapes), optionally per day group.

    Parameters
    ----------
    kind : {"2P", "3PH", "3PC", "4P", "5P"} or None, default None
        Shape for every group; None picks per group by :func:`engine.changepoint.select_best`
        (lowest BIC among physically plausible fits).
    split_day_groups : bool, default True
        Fit weekdays and weekends/holidays/closures separately (see
        :data:`engine.models._days.DAY_GROUPS`).
    min_group_days : int, default 21
        Whole days each group needs for a separate fit; with fewer, one fit serves all days.

    Attributes
    ----------
    change_point_models_ : dict of str to ChangePointFit
        The fit of each group (``"weekday"``, ``"weekend_or_holiday"`` or ``"all_days"``);
        empty when fitted without temperature.
    mean_daily_energy_ : dict of str to float
        Mean kWh per day of each group in the fit window.
    day_shapes_ : DayShapes
        Typical share of the day per interval slot, used to spread day totals.
    n_parameters_ : int
        Change-point parameters (or one mean per group without temperature) plus the free
        day-shape shares when the inputs are interval data.
    """

    family = "daily_change_point"
    label = "daily change-point regression"
    explainable = True

    def how_it_forecasts(self) -> str:
        return (
            "fits each day's energy against its mean temperature with heating and cooling "
            "change points (ASHRAE RP-1050 shapes), weekdays apart from other days, and "
            "spreads the day over its hours by the meter's typical day"
        )

    def __init__(
        self, kind: str | None = None, *, split_day_groups: bool = True, min_group_days: int = 21
    ) -> None:
        self.kind = kind
        self.split_day_groups = split_day_groups
        self.min_group_days = min_group_days

    def fit(self, inputs: ModelInputs) -> DailyChangePointModel:
        """Fit the day groups' change-point models and the day shapes."""
        return self._fit_days(DayHistory(inputs, temperature_values(inputs)), None)

    def fit_before_each(
        self, inputs: ModelInputs, cuts: Sequence[pd.Timestamp]
    ) -> list[DailyChangePointModel | Exception]:
        """:meth:`fit` on the inputs before each cut, gathering the days once for all of them
        (see :class:`~engine.models._day_totals.DayHistory`); the same results."""
        return self._fits_sharing(
            lambda: DayHistory(inputs, temperature_values(inputs), cuts),
            lambda model, history, cut: model._fit_days(history, cut),
            cuts,
        )

    def _fit_days(self, history: DayHistory, cut: pd.Timestamp | None) -> DailyChangePointModel:
        """Fit on the days of ``history`` before ``cut``."""
        view = self._take_days(history, cut)
        with_temperature = history.uses_temperature
        usable = np.isfinite(view.energy)
        if with_temperature:
            usable &= np.isfinite(view.temperature)
        if usable.sum() < self.min_group_days:
            raise InputError(
                f"only {int(usable.sum())} whole days have energy"
                + (" and temperature" if with_temperature else "")
                + f"; daily change-point regression needs at least {self.min_group_days}.",
                hint="Choose a longer fit window or fill gaps in the readings and weather.",
            )
        models: dict[str, ChangePointFit] = {}
        means: dict[str, float] = {}
        for name, chosen in self._group_masks(view, usable).items():
            means[name] = float(view.energy[chosen].mean())
            if with_temperature:
                models[name] = self._fit_one(view.temperature[chosen], view.energy[chosen])
        self.uses_temperature_ = with_temperature
        self.change_point_models_ = models
        self.mean_daily_energy_ = means
        per_group = [PARAMETER_COUNT[model.kind] for model in models.values()] or [1] * len(means)
        self.n_parameters_ = int(sum(per_group) + self.day_shapes_.n_parameters)
        return self

    def coefficients_table(self, temperature_unit: str = "°C") -> pd.DataFrame:
        """The fit in physical units and plain words, per day group: the base load, and the
        heating and cooling slopes with their change points (or the mean day without
        temperature), e.g. "weekdays: heating adds 41.2 kWh per day for each °C the day's
        mean is below 12.5 °C"."""
        self._require_fitted()
        degrees = Degrees(temperature_unit)
        per = f"kWh per day per {degrees.unit}"
        rows: list[Statement] = []
        for name, mean in self.mean_daily_energy_.items():
            group = _GROUP_WORDS[name]
            model = self.change_point_models_.get(name)
            if model is None:
                rows.append((f"{group}: mean day", mean, "kWh per day",
                             f"{group} use {mean:,.0f} kWh per day on average"))  # fmt: skip
                continue
            if model.kind == "2P":  # a straight line: no change point, level at 0 °C
                slope = degrees.per_degree(model.cooling_slope_ - model.heating_slope_)
                zero = degrees.text(0.0, digits=0)
                rows += [
                    (f"{group}: use at {zero}", model.intercept_, "kWh per day",
                     f"{group} use {model.intercept_:,.0f} kWh per day at a daily mean of {zero}"),
                    (f"{group}: temperature", slope, per,
                     f"on {group}, each {degrees.unit} warmer changes use by {slope:+,.1f} kWh "
                     "per day"),
                ]  # fmt: skip
                continue
            rows.append(
                (
                    f"{group}: base load",
                    model.intercept_,
                    "kWh per day",
                    f"{group} use {model.intercept_:,.0f} kWh per day at mild temperatures "
                    f"(the {model.kind} shape's level at its change point)",
                )
            )
            for term, slope, point, side in (
                ("heating", model.heating_slope_, model.change_points_[:1], "below"),
                ("cooling", model.cooling_slope_, model.change_points_[-1:], "above"),
            ):
                if slope and point:
                    shown = degrees.per_degree(slope)
                    rows.append(
                        (
                            f"{group}: {term}",
                            shown,
                            per,
                            f"on {group}, {term} adds {shown:,.1f} kWh per day for each "
                            f"{degrees.unit} the day's mean is {side} {degrees.text(point[0])}",
                        )
                    )
        return statement_table(rows)

    def _group_masks(self, view: DailyView, usable: np.ndarray) -> dict[str, np.ndarray]:
        masks = {name: usable & (view.group == code) for code, name in enumerate(DAY_GROUPS)}
        if self.split_day_groups and all(m.sum() >= self.min_group_days for m in masks.values()):
            return masks
        return {ALL_DAYS: usable}

    def _fit_one(self, temps: np.ndarray, energy: np.ndarray) -> ChangePointFit:
        if self.kind is None:
            return select_best(temps, energy)
        return ChangePointFit(self.kind).fit(temps, energy)

    def _day_energy(self, view: DailyView) -> np.ndarray:
        """kWh of each day of ``view``; NaN where its mean temperature is missing."""
        energy = np.full(len(view.days), np.nan)
        for name in self.mean_daily_energy_:
            chosen = (
                np.ones(len(view.days), dtype=bool)
                if name == ALL_DAYS
                else view.group == DAY_GROUPS.index(name)
            )
            if self.uses_temperature_:
                energy[chosen] = self.change_point_models_[name].predict(view.temperature[chosen])
            else:
                energy[chosen] = self.mean_daily_energy_[name]
        return energy

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """``predict`` under each row of ``temperatures`` (scenarios × intervals).

        The local days, their groups and the day shapes' weights are found once; each scenario
        needs only its daily mean temperatures and day totals. ``inputs.temperature`` is
        ignored.
        """
        rows = scenario_rows(inputs, temperatures)
        self._require_fitted()
        step = step_of(inputs)
        require_same_step(self.interval_, step)
        local = local_clock(inputs)
        view = daily_view(local, step, inputs.timezone, day_group_codes(labels_of(inputs)))
        day_temperatures = day_mean_temperatures(view.position, len(view.days), rows)
        day_energy = np.array(
            [self._day_energy(replace(view, temperature=row)) for row in day_temperatures]
        ).reshape(len(rows), len(view.days))
        return self.day_shapes_.spread(day_energy, view, local, inputs.timezone)

    def _prediction_temperature(self, inputs: ModelInputs) -> np.ndarray | None:
        return require_temperature(inputs, self.label) if self.uses_temperature_ else None

    def _fitted_state(self) -> dict[str, Any]:
        return {
            **self._day_state(),
            "uses_temperature": self.uses_temperature_,
            "change_point_models": {
                name: model.to_dict() for name, model in self.change_point_models_.items()
            },
            "mean_daily_energy": dict(self.mean_daily_energy_),
            "n_parameters": self.n_parameters_,
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self._restore_days(state)
        self.uses_temperature_ = bool(state["uses_temperature"])
        self.change_point_models_ = {
            name: ChangePointFit.from_dict(stored)
            for name, stored in state["change_point_models"].items()
        }
        self.mean_daily_energy_ = {k: float(v) for k, v in state["mean_daily_energy"].items()}
        self.n_parameters_ = int(state["n_parameters"])
