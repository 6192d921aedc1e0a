"""Multi-seasonal calendar regression with weather: the main explainable interval model.

Energy per interval is a sum of parts, each with a plain meaning (see
:mod:`engine.models._calendar_design` for the columns):

* a base load;
* Fourier terms (sines and cosines of the cycle's phase) for the daily (24 h), weekly (168 h)
  and annual (8766 h) cycles on the local clock;
* calendar terms: weekends and public holidays each get their own level and daily shape, as
  does each campus period kind (term, break, closure, summer …) other than the most common one;
* heating and cooling degree-hours ``(B − T)⁺`` and ``(T − B)⁺`` of the (optionally
  exponentially smoothed) outdoor temperature, so their coefficients are kWh per °C-hour;
* a trend: a straight line plus a few hinges ``(t − kᵢ)⁺`` at equally spaced times, whose
  slope changes are shrunk towards zero (ridge penalty), so the trend bends only where the
  data insist.

Balance points, unless set, start from :func:`engine.degree_days.balance_point` on daily data
and are then refined on the interval fit itself (a grid of ±4 °C in 0.25 °C steps, searched
for heating and cooling in turn, twice): daily-mean degree-days place the change point a
little off where hourly temperatures act.

The fit is penalised least squares through the normal equations: the ridge weight on each
hinge is ``σ² / (s·ȳ)²``, the Gaussian-prior reading of ridge regression, with ``σ²`` the
residual variance of the unpenalised fit, ``ȳ`` the mean energy per interval and ``s`` the
setting ``trend_change_scale`` (a typical slope change as a share of mean use per year).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd

from engine.degree_days import balance_point
from engine.errors import InputError
from engine.models._calendar_design import (
    COMPONENTS,
    HOURS_PER_YEAR,
    SHAPE_DAY_TYPES,
    CalendarFeatures,
    Design,
    DesignLayout,
    build_design,
    calendar_features,
    cooling_column,
    degree_hour_products,
    heating_column,
    smoothed_temperature,
)
from engine.models._calendar_explain import FittedTerms, statements
from engine.models._days import daily_view
from engine.models._family import (
    ModelFamily,
    float_array,
    float_list,
    timedelta_from,
    timedelta_seconds,
)
from engine.models._inputs import (
    HOUR,
    energy_values,
    local_clock,
    prediction,
    require_interval_data,
    require_same_step,
    require_temperature,
    step_of,
    temperature_values,
)
from engine.models._normal_equations import NormalEquations
from engine.models.base import ModelInputs, scenario_rows

#: Which weather terms to include: found from the data ("auto"), fixed, or none.
WEATHER_TERMS: tuple[str, ...] = ("auto", "heating", "cooling", "both", "none")
#: A day type or period kind gets its own terms only with at least this many days of data.
MIN_GROUP_DAYS = 3
#: Balance-point refinement: search half-width and step (°C), and passes over both terms.
_SEARCH_HALF_WIDTH, _SEARCH_STEP, _SEARCH_PASSES = 4.0, 0.25, 2
#: The annual cycle needs a year of data, the trend's hinges two.
_DAYS_FOR_ANNUAL, _DAYS_FOR_TREND_CHANGES = 365, 730


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
    trend_changes : int, default 3
        Hinges of the trend, equally spaced over the fit window (only with two years).
    trend_change_scale : float, default 0.05
        Typical size of a trend slope change, as a share of mean use per year.

    Attributes
    ----------
    layout_ : DesignLayout
        The columns' make-up (orders used, groups with own terms, balance points, trend).
    coefficients_ : numpy.ndarray
        One per column of :attr:`column_names_`, in kWh per interval per unit of the column.
    column_names_ : tuple of str
    mean_energy_ : float
        Mean kWh per interval in the fit window.
    n_parameters_ : int
        Number of columns.
    """

    family = "calendar_regression"
    label = "calendar regression"
    explainable = True

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
        trend_changes: int = 3,
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
            {"trend_changes": 0},
        ]

    # -- fitting -----------------------------------------------------------------------------

    def fit(self, inputs: ModelInputs) -> CalendarRegressionModel:
        """Choose the columns, find the balance points and solve the penalised least squares."""
        if self.weather_terms not in WEATHER_TERMS:
            raise ValueError(f"weather_terms must be one of {WEATHER_TERMS}")
        step = step_of(inputs)
        require_interval_data(step, self.label)
        energy = energy_values(inputs)
        temperature = None if self.weather_terms == "none" else temperature_values(inputs)
        features = calendar_features(inputs, step, temperature, self.temperature_smoothing_hours)
        usable = np.isfinite(energy)
        if features.temperature is not None:
            usable &= np.isfinite(features.temperature)
        fit_features, y = features.rows(usable), energy[usable]
        if len(y) < 7 * 24 / fit_features.interval_hours:
            raise InputError(
                f"only {len(y)} intervals have energy"
                + (" and temperature" if features.temperature is not None else "")
                + "; the calendar regression needs at least a week of them.",
                hint="Choose a longer fit window or fill gaps in the readings and weather.",
            )
        self.interval_ = step
        self.mean_energy_ = float(y.mean())
        layout = self._calendar_layout(fit_features)
        if features.temperature is not None:
            start = self._starting_bases(inputs, step, energy, temperature)
            layout = replace(layout, heating_base=start[0], cooling_base=start[1])
            # Least squares ignores the order of rows; in temperature order the balance-point
            # search needs each candidate column only where temperatures fall in its grid.
            order = np.argsort(fit_features.temperature, kind="stable")
            fit_features, y = fit_features.rows(order), y[order]
        design = build_design(fit_features, layout)
        equations = NormalEquations(design.matrix, y)
        layout = self._refined_bases(fit_features, layout, design, equations)
        self.coefficients_ = equations.solve(
            self._hinge_penalty(design, equations.residual_variance())
        )
        self.layout_ = layout
        self.column_names_ = design.names
        # "auto" may find no weather effect: then forecasts need no temperature either.
        self.uses_temperature_ = layout.heating_base is not None or layout.cooling_base is not None
        self.n_parameters_ = len(design.names)
        return self

    def _calendar_layout(self, features: CalendarFeatures) -> DesignLayout:
        """Orders, groups with their own terms and the trend, from the fit window's extent."""
        per_day = 24 / features.interval_hours
        enough = MIN_GROUP_DAYS * per_day
        day_types = tuple(
            name for name in SHAPE_DAY_TYPES[1:] if (features.day_type == name).sum() >= enough
        )
        kinds, counts = np.unique(features.period_kind, return_counts=True)
        reference = str(kinds[np.argmax(counts)])
        period_kinds = tuple(
            str(kind)
            for kind, count in zip(kinds, counts, strict=True)
            if kind != reference and count >= enough
        )
        span_days = (features.years.max() - features.years.min()) * HOURS_PER_YEAR / 24
        with_trend = self.trend and span_days >= _DAYS_FOR_ANNUAL
        changes = self.trend_changes if span_days >= _DAYS_FOR_TREND_CHANGES else 0
        span_years = span_days * 24 / HOURS_PER_YEAR
        return DesignLayout(
            daily_order=self.daily_order,
            weekly_order=self.weekly_order,
            annual_order=self.annual_order if span_days >= _DAYS_FOR_ANNUAL else 0,
            period_order=min(self.period_order, self.daily_order),
            day_types=day_types,
            period_kinds=period_kinds,
            reference_kind=reference,
            period_days_off=True,
            trend_origin=float(features.years.min()) if with_trend else None,
            trend_knots=tuple(float(span_years * j / (changes + 1)) for j in range(1, changes + 1))
            if with_trend
            else (),
        )

    def _starting_bases(
        self,
        inputs: ModelInputs,
        step: pd.Timedelta,
        energy: np.ndarray,
        temperature: np.ndarray,
    ) -> tuple[float | None, float | None]:
        """Balance points as set, else from daily energy against daily mean temperature.

        "auto" tries heating and cooling together, then each alone, and goes without weather
        terms when daily energy rises with neither.
        """
        heating, cooling = self.heating_base, self.cooling_base
        if heating is not None and cooling is not None:
            return heating, cooling
        view = daily_view(
            local_clock(inputs),
            step,
            inputs.timezone,
            np.zeros(len(energy), dtype=np.int64),
            energy,
            temperature,
        )
        daily_energy = pd.Series(view.energy, index=view.days)
        daily_temps = pd.Series(view.temperature, index=view.days)
        kinds = ("both", "heating", "cooling") if self.weather_terms == "auto" else None
        for kind in kinds or (self.weather_terms,):
            try:
                found = balance_point(daily_energy, daily_temps, kind)
            except InputError:
                if kinds is None:
                    raise
                continue
            heating = found.heating_base if heating is None else heating
            cooling = found.cooling_base if cooling is None else cooling
            break
        return heating, cooling

    def _hinge_penalty(self, design: Design, sigma2: float) -> np.ndarray:
        hinge = np.array([name.startswith("trend change") for name in design.names])
        return np.where(hinge, sigma2 / (self.trend_change_scale * self.mean_energy_) ** 2, 0.0)

    def _refined_bases(
        self,
        features: CalendarFeatures,
        layout: DesignLayout,
        design: Design,
        equations: NormalEquations,
    ) -> DesignLayout:
        """Refine found balance points on the interval fit (set ones stay as set).

        Each pass moves the heating, then the cooling, balance point to the best of a grid
        around it (heating never above cooling); ``equations`` end up holding the final columns.
        ``features`` and the rows of ``equations`` are in ascending temperature order.
        """
        searched = [
            term
            for term, setting in (("heating", self.heating_base), ("cooling", self.cooling_base))
            if setting is None and getattr(layout, f"{term}_base") is not None
        ]
        if not searched:
            return layout
        penalty = self._hinge_penalty(design, equations.residual_variance())
        offsets = np.arange(
            -_SEARCH_HALF_WIDTH, _SEARCH_HALF_WIDTH + _SEARCH_STEP / 2, _SEARCH_STEP
        )
        for _ in range(_SEARCH_PASSES):
            for term in searched:
                grid = getattr(layout, f"{term}_base") + offsets
                if term == "heating" and layout.cooling_base is not None:
                    grid = grid[grid <= layout.cooling_base]
                if term == "cooling" and layout.heating_base is not None:
                    grid = grid[grid >= layout.heating_base]
                column = int(np.flatnonzero(design.component_mask(term))[0])
                make = heating_column if term == "heating" else cooling_column
                products, norms = degree_hour_products(equations.data, features, grid, term)
                best = equations.best_replacement(column, products, norms, penalty)
                if best is not None:
                    layout = replace(layout, **{f"{term}_base": float(grid[best])})
                    equations.replace(column, make(features, grid[best]))
        return layout

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
        return build_design(features, self.layout_)

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """Energy per interval (kWh); NaN where a needed temperature is missing."""
        return prediction(self._design_for(inputs).matrix @ self.coefficients_, inputs)

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """:meth:`predict` under each row of ``temperatures`` (scenarios × intervals).

        The calendar columns are built and weighted once; each scenario adds only its
        degree-hours. ``inputs.temperature`` is ignored.
        """
        rows = scenario_rows(inputs, temperatures)
        step = self._step_for(inputs)
        features = calendar_features(inputs, step, None, None)
        layout = replace(self.layout_, heating_base=None, cooling_base=None)
        calendar = build_design(features, layout)
        at = [self.column_names_.index(name) for name in calendar.names]
        predicted = np.empty(rows.shape)
        predicted[:] = calendar.matrix @ self.coefficients_[at]
        if not self.uses_temperature_:
            return predicted
        terms = [
            (base, make, self.coefficients_[self.column_names_.index(f"{term} degree-hours")])
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
            for base, make, coefficient in terms:
                scenario += make(weather, base) * coefficient
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

    def coefficients_table(self) -> pd.DataFrame:
        """The fit in physical units and plain words.

        Returns
        -------
        pandas.DataFrame
            One row per statement, columns ``term``, ``value``, ``unit`` and ``meaning``
            (e.g. "heating adds 3.05 kWh per °C-hour below 14.0 °C", "holidays change
            daytime use (08:00–18:00) by -37 %", "trend: +1.5 % per year at the end of the fit
            window"); see :mod:`engine.models._calendar_explain`.
        """
        return statements(self._terms())

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
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self.interval_ = timedelta_from(state["interval_seconds"])
        self.uses_temperature_ = bool(state["uses_temperature"])
        self.layout_ = DesignLayout.from_dict(state["layout"])
        self.column_names_ = tuple(state["column_names"])
        self.coefficients_ = float_array(state["coefficients"])
        self.mean_energy_ = float(state["mean_energy"])
        self.n_parameters_ = int(state["n_parameters"])
