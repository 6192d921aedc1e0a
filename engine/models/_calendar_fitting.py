"""How the calendar regression is fitted: on a whole history, or on many windows of one.

A backtest or a budget refits the model before each of many monthly cuts of one history. The
windows differ only in which rows they hold, so everything that does not depend on the cut is
done once in :class:`FitHistory`: the drivers of every usable row, their temperature order
(for the balance-point search), the daily totals (for the starting balance points) and the
calendar columns. The windows' normal equations are then the history's with 0/1 row weights,
and the ``XᵀX`` block of the calendar columns is summed month block by month block once for
all windows (:func:`~engine.models._normal_equations.prefix_grams`). What each window still
decides for itself, exactly as a fit on that window alone: which day types and period kinds
get terms, the annual cycle and trend knots, the balance points and the ridge weight. A test
checks the results equal fits from scratch.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from engine.degree_days import balance_point
from engine.errors import InputError
from engine.models._calendar_design import (
    HOURS_PER_YEAR,
    SHAPE_DAY_TYPES,
    CalendarFeatures,
    Design,
    DesignLayout,
    calendar_design,
    calendar_features,
    cooling_column,
    degree_hour_products,
    heating_column,
    weather_and_trend_design,
)
from engine.models._days import daily_view
from engine.models._inputs import (
    energy_values,
    local_clock,
    require_interval_data,
    step_of,
    temperature_values,
)
from engine.models._normal_equations import NormalEquations, prefix_grams
from engine.models.base import ModelInputs

if TYPE_CHECKING:
    from engine.models.calendar_regression import CalendarRegressionModel

#: A day type or period kind gets its own terms only with at least this many days of data.
MIN_GROUP_DAYS = 3
#: Balance-point refinement: search half-width and step (°C), and passes over both terms.
_SEARCH_HALF_WIDTH, _SEARCH_STEP, _SEARCH_PASSES = 4.0, 0.25, 2
#: The annual cycle needs a year of data, the trend's hinges two.
_DAYS_FOR_ANNUAL, _DAYS_FOR_TREND_CHANGES = 365, 730


@dataclass(frozen=True)
class Solution:
    """What one fit learned: the model's fitted attributes."""

    interval: pd.Timedelta
    layout: DesignLayout
    names: tuple[str, ...]
    coefficients: np.ndarray
    mean_energy: float
    #: With a proportional trend: the coefficients of the fit without the trend, whose
    #: prediction the trend's columns are multiplied by (0 on the trend's columns).
    level_coefficients: np.ndarray | None = None

    def falling_weather_terms(self) -> list[str]:
        """The weather terms whose energy falls as they grow (a negative slope): heating that
        saves energy the colder it gets, or cooling the warmer, which no building does;
        such a term stands in for something else the calendar or the season did."""
        return [
            term
            for term in ("heating", "cooling")
            if f"{term} degree-hours" in self.names
            and self.coefficients[self.names.index(f"{term} degree-hours")] < 0
        ]


class FitHistory:
    """One history's rows, drivers and calendar columns, shared by fits of its windows.

    Rows are the intervals with energy (and temperature, when the model uses weather), held
    in search order: ascending temperature (stable, so ties keep time order), or time order
    without weather. ``cuts`` are the ends of the windows to be solved (None: the whole
    history); their calendar Gram matrices are summed together on first use.
    """

    def __init__(
        self,
        model: CalendarRegressionModel,
        inputs: ModelInputs,
        cuts: Sequence[pd.Timestamp | None] = (None,),
    ) -> None:
        self.model = model
        self.step = step_of(inputs)
        require_interval_data(self.step, model.label)
        energy = energy_values(inputs)
        temperature = None if model.weather_terms == "none" else temperature_values(inputs)
        features = calendar_features(
            inputs, self.step, temperature, model.temperature_smoothing_hours
        )
        usable = np.isfinite(energy)
        if features.temperature is not None:
            usable &= np.isfinite(features.temperature)
        self.times = inputs.index[usable]
        self.by_time = features.rows(usable)
        self.order = (
            np.arange(len(self.times))
            if features.temperature is None
            else np.argsort(self.by_time.temperature, kind="stable")
        )
        self.features = self.by_time.rows(self.order)
        self.y_by_time = energy[usable]
        self.y = self.y_by_time[self.order]
        self.ends = {cut: self._rows_before(cut) for cut in cuts}
        self.days = None
        if features.temperature is not None:
            view = daily_view(
                local_clock(inputs),
                self.step,
                inputs.timezone,
                np.zeros(len(energy), dtype=np.int64),
                energy,
                temperature,
            )
            # Each local day's calendar condition (kind of day and campus period kind), the
            # groups whose own levels the starting balance points hold fixed.
            _, condition = inputs.condition_days
            self.days = pd.DataFrame(
                {"energy": view.energy, "temperature": view.temperature, "group": condition},
                index=view.days,
            )
        self.timezone = inputs.timezone
        self._calendar: dict[DesignLayout, tuple[Design, dict[int, np.ndarray]]] = {}

    def _rows_before(self, cut: pd.Timestamp | None) -> int:
        """How many rows fall before ``cut`` (UTC; None for all of them)."""
        return len(self.times) if cut is None else int(self.times.searchsorted(cut))

    def solve(self, cut: pd.Timestamp | None) -> Solution:
        """The fit of the rows before ``cut`` (one of the history's cuts)."""
        model, rows = self.model, self.ends[cut]
        window = self.by_time.rows(slice(0, rows))
        if rows < 7 * 24 / window.interval_hours:
            raise InputError(
                f"only {rows} intervals have energy"
                + (" and temperature" if window.temperature is not None else "")
                + "; the calendar regression needs at least a week of them.",
                hint="Choose a longer fit window or fill gaps in the readings and weather.",
            )
        layout = calendar_layout(model, window)
        if window.temperature is not None:
            start = starting_bases(model, self._days_before(cut))
            layout = replace(layout, heating_base=start[0], cooling_base=start[1])
        solution = self._solve_layout(layout, rows)
        falling = solution.falling_weather_terms()
        if falling:  # physically implausible: fit again without them
            layout = replace(solution.layout, **{f"{term}_base": None for term in falling})
            solution = self._solve_layout(layout, rows)
        return solution

    def _solve_layout(self, layout: DesignLayout, rows: int) -> Solution:
        """The fit of the first ``rows`` rows in time with the columns of ``layout``, its
        balance points refined."""
        model = self.model
        weights = None if rows == len(self.times) else (self.order < rows).astype(float)
        mean_energy = float(self.y_by_time[:rows].mean())
        calendar, grams = self._calendar_columns(layout)
        others = weather_and_trend_design(self.features, layout)
        leading = None if weights is None else grams[rows]
        equations = NormalEquations(
            [calendar.matrix, others.matrix], self.y, weights=weights, leading=leading
        )
        design = Design(  # a view of the equations' columns, which the search updates
            equations.data[:, :-1],
            calendar.components + others.components,
            calendar.names + others.names,
        )
        penalty = hinge_penalty(model, design, equations.residual_variance(), mean_energy)
        layout = refined_bases(model, self.features, layout, design, equations, penalty)
        level = None
        if layout.trend_origin is not None and layout.proportional_trend:
            level = proportional_trend_columns(design, equations, penalty)
        penalty = hinge_penalty(
            model,
            design,
            equations.residual_variance(),
            mean_energy,
            proportional=level is not None,
        )
        return Solution(
            interval=self.step,
            layout=layout,
            names=design.names,
            coefficients=equations.solve(penalty),
            mean_energy=mean_energy,
            level_coefficients=level,
        )

    def _days_before(self, cut: pd.Timestamp | None) -> pd.DataFrame:
        """The whole local days before ``cut``."""
        if cut is None:
            return self.days
        day = cut.tz_convert(self.timezone).tz_localize(None).normalize()
        return self.days[self.days.index < day]

    def _calendar_columns(self, layout: DesignLayout) -> tuple[Design, dict[int, np.ndarray]]:
        """The calendar columns of ``layout`` in search order, and their Gram matrix over the
        first rows in time order for each of :attr:`ends`."""
        key = replace(
            layout, heating_base=None, cooling_base=None, trend_origin=None, trend_knots=()
        )
        if key not in self._calendar:
            design = calendar_design(self.features, key)
            partial = [end for end in self.ends.values() if end < len(self.times)]
            grams = {}
            if partial:
                in_time_order = np.empty_like(design.matrix)
                in_time_order[self.order] = design.matrix
                grams = prefix_grams(in_time_order, partial)
            self._calendar[key] = (design, grams)
        return self._calendar[key]


def calendar_layout(model: CalendarRegressionModel, features: CalendarFeatures) -> DesignLayout:
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
    with_trend = model.trend and span_days >= _DAYS_FOR_ANNUAL
    changes = model.trend_changes if span_days >= _DAYS_FOR_TREND_CHANGES else 0
    span_years = span_days * 24 / HOURS_PER_YEAR
    return DesignLayout(
        daily_order=model.daily_order,
        weekly_order=model.weekly_order,
        annual_order=model.annual_order if span_days >= _DAYS_FOR_ANNUAL else 0,
        period_order=min(model.period_order, model.daily_order),
        day_types=day_types,
        period_kinds=period_kinds,
        reference_kind=reference,
        period_days_off=True,
        period_holidays=True,
        proportional_trend=True,
        trend_origin=float(features.years.min()) if with_trend else None,
        trend_knots=tuple(float(span_years * j / (changes + 1)) for j in range(1, changes + 1))
        if with_trend
        else (),
    )


def starting_bases(
    model: CalendarRegressionModel, days: pd.DataFrame
) -> tuple[float | None, float | None]:
    """Balance points as set, else from daily energy against daily mean temperature, each
    calendar condition of the days (:attr:`ModelInputs.condition_days`: kind of day and campus
    period kind) with its own level.

    "auto" tries heating and cooling together, then each alone, and goes without weather
    terms when daily energy rises with neither. Without the groups' levels, a summer session
    or a winter break that runs low in the year's hottest or coldest weeks makes energy seem
    to fall with the weather: on a sample-campus library with both heating and cooling, the
    search found heating below 16.8 °C and no cooling, and months were then 1–3 % off given
    the weather that happened.
    """
    heating, cooling = model.heating_base, model.cooling_base
    if heating is not None and cooling is not None:
        return heating, cooling
    kinds = ("both", "heating", "cooling") if model.weather_terms == "auto" else None
    for kind in kinds or (model.weather_terms,):
        try:
            found = balance_point(days["energy"], days["temperature"], kind, groups=days["group"])
        except InputError:
            if kinds is None:
                raise
            continue
        heating = found.heating_base if heating is None else heating
        cooling = found.cooling_base if cooling is None else cooling
        break
    return heating, cooling


def hinge_penalty(
    model: CalendarRegressionModel,
    design: Design,
    sigma2: float,
    mean_energy: float,
    *,
    proportional: bool = False,
) -> np.ndarray:
    """The ridge weight of each column: ``σ² / (s·ȳ)²`` on the trend's hinges, else 0.

    ``s·ȳ`` is a typical slope change in kWh per interval per year; once the trend is
    ``proportional`` (:func:`proportional_trend_columns`) the hinges' coefficients are shares
    of the load per year and the typical change is ``s`` itself.
    """
    hinge = np.array([name.startswith("trend change") for name in design.names])
    scale = model.trend_change_scale * (1.0 if proportional else mean_energy)
    return np.where(hinge, sigma2 / scale**2, 0.0)


def proportional_trend_columns(
    design: Design, equations: NormalEquations, penalty: np.ndarray
) -> np.ndarray:
    """Make the trend a share of the load per year; the coefficients of that load.

    The load without the trend is the fit with the trend's columns left out; each trend
    column (time since the origin, or past a knot) is multiplied by it in ``equations``
    (and so in ``design``, a view of them), and the solve that follows estimates the growth
    rate together with every other term: one Gauss–Newton step of ``load × (1 + rate × t)``
    from no growth.
    """
    trend = design.component_mask("trend")
    level = equations.solve_without(trend, penalty)
    load = equations.data[:, :-1] @ level
    for column in np.flatnonzero(trend):
        equations.replace(column, equations.data[:, column] * load)
    return level


def refined_bases(
    model: CalendarRegressionModel,
    features: CalendarFeatures,
    layout: DesignLayout,
    design: Design,
    equations: NormalEquations,
    penalty: np.ndarray,
) -> DesignLayout:
    """Refine found balance points on the interval fit (set ones stay as set).

    Each pass moves the heating, then the cooling, balance point to the best of a grid
    around it (heating never above cooling); ``equations`` end up holding the final columns.
    ``features`` and the rows of ``equations`` are in ascending temperature order.
    """
    searched = [
        term
        for term, setting in (("heating", model.heating_base), ("cooling", model.cooling_base))
        if setting is None and getattr(layout, f"{term}_base") is not None
    ]
    offsets = np.arange(-_SEARCH_HALF_WIDTH, _SEARCH_HALF_WIDTH + _SEARCH_STEP / 2, _SEARCH_STEP)
    for _ in range(_SEARCH_PASSES if searched else 0):
        for term in searched:
            grid = getattr(layout, f"{term}_base") + offsets
            if term == "heating" and layout.cooling_base is not None:
                grid = grid[grid <= layout.cooling_base]
            if term == "cooling" and layout.heating_base is not None:
                grid = grid[grid >= layout.heating_base]
            column = int(np.flatnonzero(design.component_mask(term))[0])
            make = heating_column if term == "heating" else cooling_column
            products, norms = degree_hour_products(
                equations.data, features, grid, term, equations.weights
            )
            best = equations.best_replacement(column, products, norms, penalty)
            if best is not None:
                layout = replace(layout, **{f"{term}_base": float(grid[best])})
                equations.replace(column, make(features, grid[best]))
    return layout
