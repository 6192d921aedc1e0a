"""Multi-seasonal calendar regression with weather: the main explainable interval model.

Energy per interval is a sum of parts, each with a plain meaning (see
:mod:`engine.models._calendar_design` for the columns):

* a base load;
* Fourier terms (sines and cosines of the cycle's phase) for the daily (24 h), weekly (168 h)
  and annual (8766 h) cycles on the local clock;
* calendar terms: weekends and public holidays each get their own level and daily shape, as
  does each campus period kind (term, break, closure, summer …) other than the most common one;
* heating and cooling degree-hours ``(B − T)⁺`` and ``(T − B)⁺`` of the (optionally
  exponentially smoothed) outdoor temperature, so their coefficients are kWh per °C-hour; a
  term whose fitted slope is negative (heating that saves energy the colder it gets) is left
  out and the rest fitted again: it stood in for something the calendar or the season did,
  and on the sample campus's cooling-only Athletics Center it put winter months 1–2 % high;
* a trend: a share of the rest of the load per year, so growth grows a summer afternoon's
  cooling more than a winter night's base (a trend of the same kWh in every interval,
  estimated mostly from the large summer loads, overstated winter growth several times
  over on a chilled-water meter). It is a straight line unless ``trend_changes`` adds hinges
  ``(t − kᵢ)⁺`` at equally spaced times, whose slope changes are shrunk towards zero (ridge
  penalty), so the trend bends only where the data insist.

Balance points, unless set, start from :func:`engine.degree_days.balance_point` on daily data,
each kind of day in each campus period kind with its own level (a low summer session must not
read as energy falling with heat), and are then refined on the interval fit itself (a grid of
±4 °C in 0.25 °C steps, searched for heating and cooling in turn, twice): daily-mean
degree-days place the change point a little off where hourly temperatures act.

The fit is penalised least squares through the normal equations: the ridge weight on each
hinge is ``σ² / (s·ȳ)²``, the Gaussian-prior reading of ridge regression, with ``σ²`` the
residual variance of the unpenalised fit, ``ȳ`` the mean energy per interval and ``s`` the
setting ``trend_change_scale`` (a typical slope change as a share of mean use per year).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from engine.models._calendar_design import (
    COMPONENTS,
    Design,
    DesignLayout,
    build_design,
    calendar_features,
    cooling_column,
    heating_column,
    smoothed_temperature,
    with_proportional_trend,
)
from engine.models._calendar_explain import FittedTerms, statements
from engine.models._calendar_fitting import FitHistory, Solution
from engine.models._family import (
    Degrees,
    ModelFamily,
    float_array,
    float_list,
    timedelta_from,
    timedelta_seconds,
)
from engine.models._inputs import (
    HOUR,
    prediction,
    require_same_step,
    require_temperature,
    step_of,
)
from engine.models.base import ModelInputs, scenario_rows

#: Which weather terms to include: found from the data ("auto"), fixed, or none.
WEATHER_TERMS: tuple[str, ...] = ("auto", "heating", "cooling", "both", "none")


class CalendarRegressionModel(ModelFamily):
    """Fourier calendar regression with degree-hours and a penalised piecewise trend.

    Parameters
    ----------
    daily_order, weekly_order, annual_order : int, default 6, 3, 3
        Fourier orders of the daily, weekly and annual cycles (the annual one only with a
        year of data).
    period_order : int, default 2
        Fourier order of each campus period kind's own daily shape.
    weather_terms : {"auto", "heating", "cooling", "both", "none"}, default "auto"
        "auto" tries heating and cooling, then either, then none, on the daily data.
    heating_base, cooling_base : float or None, default None
        Balance points in °C; None finds them from the data.
    temperature_smoothing_hours : float or None, default None
        Time constant of exponential smoothing of the temperature (building thermal lag).
    trend : bool, default True
        Fit a trend (only with a year of data).
    trend_changes : int, default 0
        Hinges of the trend, equally spaced over the fit window (only with two years). None
        by default, nor among the settings the wizard tries: on month-ahead forecasts of the
        sample campus's meters three hinges added error on every meter, and the wizard's
        short tuning backtest (hourly CV(RMSE)) still chose them for one of them.
    trend_change_scale : float, default 0.05
        Typical size of a trend slope change, as a share of mean use per year.

    Attributes
    ----------
    layout_ : DesignLayout
        The columns' make-up (orders used, groups with own terms, balance points, trend).
    coefficients_ : numpy.ndarray
        One per column of :attr:`column_names_`, in kWh per interval per unit of the column
        (the trend's: shares of the load per year, with :attr:`level_coefficients_`).
    level_coefficients_ : numpy.ndarray or None
        The fit without the trend (0 on the trend's columns), whose prediction the trend's
        columns are multiplied by; None for models stored before the trend was proportional.
    column_names_ : tuple of str
    mean_energy_ : float
        Mean kWh per interval in the fit window.
    n_parameters_ : int
        Number of columns.
    """

    family = "calendar_regression"
    label = "calendar regression"
    explainable = True

    def how_it_forecasts(self) -> str:
        return (
            "adds up a base load, daily, weekly and annual cycles, weekends, holidays and campus "
            "periods, and heating and cooling per degree-hour of outdoor temperature"
        )

    def __init__(
        self,
        daily_order: int = 6,
        weekly_order: int = 3,
        annual_order: int = 3,
        *,
        period_order: int = 2,
        weather_terms: str = "auto",
        heating_base: float | None = None,
        cooling_base: float | None = None,
        temperature_smoothing_hours: float | None = None,
        trend: bool = True,
        trend_changes: int = 0,
        trend_change_scale: float = 0.05,
    ) -> None:
        self.daily_order = daily_order
        self.weekly_order = weekly_order
        self.annual_order = annual_order
        self.period_order = period_order
        self.weather_terms = weather_terms
        self.heating_base = heating_base
        self.cooling_base = cooling_base
        self.temperature_smoothing_hours = temperature_smoothing_hours
        self.trend = trend
        self.trend_changes = trend_changes
        self.trend_change_scale = trend_change_scale

    @classmethod
    def candidate_settings(cls) -> list[dict[str, Any]]:
        return [
            {"daily_order": 4, "weekly_order": 2, "annual_order": 2},
            {"daily_order": 6, "weekly_order": 3, "annual_order": 3},
            {"daily_order": 8, "weekly_order": 4, "annual_order": 3},
            {"temperature_smoothing_hours": 24.0},
        ]

    # -- fitting -----------------------------------------------------------------------------

    def fit(self, inputs: ModelInputs) -> CalendarRegressionModel:
        """Choose the columns, find the balance points and solve the penalised least squares."""
        self._check_settings()
        return self._take(FitHistory(self, inputs).solve(None))

    def fit_before_each(
        self, inputs: ModelInputs, cuts: Sequence[pd.Timestamp]
    ) -> list[CalendarRegressionModel | Exception]:
        """:meth:`fit` on the inputs before each cut, sharing the work that does not depend
        on the cut (see :mod:`engine.models._calendar_fitting`); the same results."""
        self._check_settings()
        return self._fits_sharing(
            lambda: FitHistory(self, inputs, cuts),
            lambda model, history, cut: model._take(history.solve(cut)),
            cuts,
        )

    def _check_settings(self) -> None:
        if self.weather_terms not in WEATHER_TERMS:
            raise ValueError(f"weather_terms must be one of {WEATHER_TERMS}")

    def _take(self, solution: Solution) -> CalendarRegressionModel:
        """Set the fitted attributes from what a fit learned."""
        layout = solution.layout
        self.interval_ = solution.interval
        self.mean_energy_ = solution.mean_energy
        self.layout_ = layout
        self.column_names_ = solution.names
        self.coefficients_ = solution.coefficients
        self.level_coefficients_ = solution.level_coefficients
        # "auto" may find no weather effect: then forecasts need no temperature either.
        self.uses_temperature_ = layout.heating_base is not None or layout.cooling_base is not None
        self.n_parameters_ = len(solution.names)
        return self

    # -- using the fit -----------------------------------------------------------------------

    def _step_for(self, inputs: ModelInputs) -> pd.Timedelta:
        """The inputs' interval, checked against the fit's."""
        self._require_fitted()
        step = step_of(inputs)
        require_same_step(self.interval_, step)
        return step

    def _design_for(self, inputs: ModelInputs) -> Design:
        step = self._step_for(inputs)
        temperature = require_temperature(inputs, self.label) if self.uses_temperature_ else None
        features = calendar_features(inputs, step, temperature, self.temperature_smoothing_hours)
        design = build_design(features, self.layout_)
        if self.level_coefficients_ is None:
            return design
        return with_proportional_trend(design, design.matrix @ self.level_coefficients_)

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """Energy per interval (kWh); NaN where a needed temperature is missing."""
        return prediction(self._design_for(inputs).matrix @ self.coefficients_, inputs)

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """:meth:`predict` under each row of ``temperatures`` (scenarios × intervals).

        The calendar columns are built and weighted once; each scenario adds only its
        degree-hours (and, with a proportional trend, their share of the growth).
        ``inputs.temperature`` is ignored.
        """
        rows = scenario_rows(inputs, temperatures)
        step = self._step_for(inputs)
        features = calendar_features(inputs, step, None, None)
        layout = replace(self.layout_, heating_base=None, cooling_base=None)
        calendar = build_design(features, layout)
        at = [self.column_names_.index(name) for name in calendar.names]
        level = self.level_coefficients_
        growth = np.zeros(len(features))  # the trend's share of the load per interval
        if level is not None:
            trend = calendar.component_mask("trend")
            growth = calendar.matrix[:, trend] @ self.coefficients_[at][trend]
            calendar = with_proportional_trend(calendar, calendar.matrix @ level[at])
        predicted = np.empty(rows.shape)
        predicted[:] = calendar.matrix @ self.coefficients_[at]
        if not self.uses_temperature_:
            return predicted
        terms = [
            (base, make, self.column_names_.index(f"{term} degree-hours"))
            for term, base, make in (
                ("heating", self.layout_.heating_base, heating_column),
                ("cooling", self.layout_.cooling_base, cooling_column),
            )
            if base is not None
        ]
        for scenario, row in zip(predicted, rows, strict=True):
            if self.temperature_smoothing_hours:
                row = smoothed_temperature(row, step, self.temperature_smoothing_hours)
            weather = replace(features, temperature=row)
            for base, make, column in terms:
                hours = make(weather, base)
                scenario += hours * self.coefficients_[column]
                if level is not None:
                    scenario += growth * hours * level[column]
        return predicted

    def components(self, inputs: ModelInputs) -> pd.DataFrame:
        """Each component's contribution (kWh per interval); the columns add up to the prediction.

        Columns are :data:`~engine.models._calendar_design.COMPONENTS`: base, daily, weekly,
        annual, calendar (day types and campus periods), heating, cooling and trend.
        """
        design = self._design_for(inputs)
        parts = {}
        for component in COMPONENTS:
            mask = design.component_mask(component)
            parts[component] = design.matrix[:, mask] @ self.coefficients_[mask]
        return pd.DataFrame(parts, index=inputs.index)

    def _terms(self) -> FittedTerms:
        self._require_fitted()
        return FittedTerms(
            layout=self.layout_,
            names=self.column_names_,
            coefficients=self.coefficients_,
            mean_energy=self.mean_energy_,
            interval_hours=self.interval_ / HOUR,
        )

    @property
    def heating_slope_(self) -> float | None:
        """kWh per °C-hour below the heating balance point, or None without a heating term."""
        terms = self._terms()
        if terms.layout.heating_base is None:
            return None
        return terms.coefficient("heating degree-hours")

    @property
    def cooling_slope_(self) -> float | None:
        """kWh per °C-hour above the cooling balance point, or None without a cooling term."""
        terms = self._terms()
        if terms.layout.cooling_base is None:
            return None
        return terms.coefficient("cooling degree-hours")

    def coefficients_table(self, temperature_unit: str = "°C") -> pd.DataFrame:
        """The fit in physical units and plain words.

        Returns
        -------
        pandas.DataFrame
            One row per statement, columns ``term``, ``value``, ``unit`` and ``meaning``
            (e.g. "heating adds 3.05 kWh per °C-hour below 14.0 °C", "holidays change
            daytime use (08:00–18:00) by -37 %", "trend: +1.5 % per year at the end of the fit
            window"); see :mod:`engine.models._calendar_explain`.
        """
        return statements(self._terms(), Degrees(temperature_unit))

    # -- storage -----------------------------------------------------------------------------

    def _fitted_state(self) -> dict[str, Any]:
        return {
            "interval_seconds": timedelta_seconds(self.interval_),
            "uses_temperature": self.uses_temperature_,
            "layout": self.layout_.to_dict(),
            "column_names": list(self.column_names_),
            "coefficients": float_list(self.coefficients_),
            "mean_energy": self.mean_energy_,
            "n_parameters": self.n_parameters_,
        } | (
            {}
            if self.level_coefficients_ is None
            else {"level_coefficients": float_list(self.level_coefficients_)}
        )

    def _restore(self, state: dict[str, Any]) -> None:
        self.interval_ = timedelta_from(state["interval_seconds"])
        self.uses_temperature_ = bool(state["uses_temperature"])
        self.layout_ = DesignLayout.from_dict(state["layout"])
        self.column_names_ = tuple(state["column_names"])
        self.coefficients_ = float_array(state["coefficients"])
        self.mean_energy_ = float(state["mean_energy"])
        self.n_parameters_ = int(state["n_parameters"])
        level = state.get("level_coefficients")  # absent for models without a proportional trend
        self.level_coefficients_ = None if level is None else float_array(level)
