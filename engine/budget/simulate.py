"""Simulate budget paths for one or many meters and keep only what the budget reports.

Each path is a possible future of every meter at once:

    energy = model prediction under the path's weather scenario
             + model errors of the path's resampled past days (same days for every meter,
               less their mean share of the forecast: they give the spread, not the centre;
               without the days a refit met a calendar condition for the first time,
               :func:`engine.budget.residuals.first_encounters`)

times the meter's level correction (:mod:`engine.budget.level`, where its backtest supports
one), floored at the lowest reading the meter ever had (zero for meters that never exported), with
the metered energy before the as-of cut put in its place. Paths are made a block at a time and
meter by meter, and of each only its daily totals, monthly totals and monthly cost are kept,
so memory stays at a block of one meter's hourly paths whatever the number of meters.

The weather scenarios are few next to the paths (see :mod:`engine.budget.weather_paths`):
each costs one model prediction per meter, and paths share them out equally. A model whose
forecast does not depend on temperature is predicted once for all of them.

Parameter uncertainty is not simulated on its own: refitting every path is too slow, and
out-of-sample errors (from a backtest that refitted the model at each origin) already carry
it. With fit-period residuals the range is too narrow; the calibration step
(:mod:`engine.budget.calibration`) measures that on past months and widens it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from datetime import date
from typing import Any

import numpy as np
import pandas as pd

from engine.bootstrap import stationary_indices
from engine.budget.level import LevelCorrection, centred, level_correction
from engine.budget.meter_grid import (
    MeterGrid,
    check_predictions,
    known_actuals,
    predictions,
    simulation_step,
)
from engine.budget.periods import BudgetWindow, as_of_cut, as_of_date
from engine.budget.plan import MeterPlan
from engine.budget.residuals import (
    error_block_days,
    error_table,
    first_encounters,
    level_elasticity,
    level_factors,
    model_errors,
    shared_pool,
)
from engine.budget.scenarios import WeatherScenarios
from engine.budget.weather_paths import WeatherAssumption, weather_scenarios
from engine.errors import InputError
from engine.progress import Progress, step
from engine.tariffs import COST_PARTS, cost_paths

#: Cells (paths × intervals) of one meter's block of paths: about 16 MB per float array.
BLOCK_CELLS = 2_000_000
_TOTAL = COST_PARTS.index("total")


@dataclass
class MeterPaths:
    """One meter's per-path totals: ``days`` ``(paths, days)``, ``months`` ``(paths, months)``.

    ``cost`` is ``(paths, months)`` in ``currency`` (None without a price);
    ``actual_to_date`` the metered kWh before the cut in each month (part of every path);
    ``day_floor`` the least kWh each day can hold (the path floor times the day's intervals),
    which a calibration's widening respects; ``error_growth`` the power of the forecast level
    the drawn errors were scaled with (:func:`engine.budget.residuals.level_elasticity`);
    ``level`` the correction of the forecast's level (:mod:`engine.budget.level`).
    """

    plan: MeterPlan
    days: np.ndarray
    months: np.ndarray
    cost: np.ndarray | None
    actual_to_date: np.ndarray
    errors_source: str
    day_floor: np.ndarray | None = None
    error_growth: float = 0.0
    level: LevelCorrection | None = None
    #: Days of the error window whose errors were left out as a refit's first encounter with
    #: a calendar condition (:func:`engine.budget.residuals.first_encounters`).
    first_encounter_days: int = 0


@dataclass
class PathTotals:
    """Everything a simulation kept, path by path, before it is summarised."""

    window: BudgetWindow
    as_of: date
    cut: pd.Timestamp
    weather: WeatherScenarios
    scenario_of_path: np.ndarray
    meters: list[MeterPaths]
    block_days: float
    pool_days: int
    settings: dict[str, Any] = field(default_factory=dict)

    @property
    def paths(self) -> int:
        return len(self.scenario_of_path)

    def meter(self, name: str) -> MeterPaths:
        for meter in self.meters:
            if meter.plan.name == name:
                return meter
        raise KeyError(name)


@dataclass
class _Meter:
    """A meter made ready for the block loop (``errors`` once the shared pool is known)."""

    plan: MeterPlan
    grid: MeterGrid
    predicted: np.ndarray
    known_at: np.ndarray
    known: np.ndarray
    floor: float
    table: pd.DataFrame
    day_forecasts: pd.Series  # the forecast each error day's errors were errors of, kWh
    elasticity: float  # errors grow with the forecast level to this power
    day_predicted: np.ndarray  # the budget's predicted kWh per scenario and budget day
    out: MeterPaths
    errors: np.ndarray | None = None
    drawn_levels: np.ndarray | None = None

    def use_pool(self, pool: np.ndarray) -> None:
        """Keep the errors of the pool's days, flattened day by day for fast gathering."""
        self.errors = self.table.loc[pool].to_numpy(dtype=np.float64).ravel()
        self.drawn_levels = self.day_forecasts.loc[pool].to_numpy(dtype=np.float64)


def _check_plans(meters: Sequence[MeterPlan]) -> str:
    if not meters:
        raise InputError("the budget has no meters.", hint="Choose at least one meter.")
    names = [plan.name for plan in meters]
    repeated = sorted({name for name in names if names.count(name) > 1})
    if repeated:
        raise InputError(
            f"meter name(s) {', '.join(repeated)} appear more than once in the budget.",
            hint="Give every meter in a budget its own name.",
        )
    zones = sorted({plan.timezone for plan in meters})
    if len(zones) > 1:
        raise InputError(
            f"the meters are on different local clocks ({', '.join(zones)}); a budget run "
            "covers one site.",
            hint="Budget each site separately.",
        )
    return zones[0]


def month_starts(window: BudgetWindow) -> np.ndarray:
    """The position of each month's first day among the window's days."""
    month_of_day = window.month_of_day()
    return np.flatnonzero(np.r_[True, month_of_day[1:] != month_of_day[:-1]])


def _generator(rng: np.random.Generator | int | None) -> np.random.Generator:
    return rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)


def _forecasts(
    plan: MeterPlan, grid: MeterGrid, window: BudgetWindow, weather: WeatherScenarios
) -> np.ndarray:
    """The model's predictions per weather scenario, one row when it ignores the weather.

    The model predicts under the first scenario and with every temperature unknown (NaN):
    when the two agree, the forecast does not depend on temperature (benchmarks such as
    ETS) and serves every scenario, saving a prediction per scenario.
    """
    if weather.hourly is None or weather.count == 1 or not plan.uses_temperature:
        return predictions(plan, grid, window, weather)
    unknown = np.full_like(weather.hourly[0], np.nan)
    probe = replace(
        weather, names=(weather.names[0], "unknown"), hourly=np.vstack([weather.hourly[0], unknown])
    )
    first, blind = predictions(plan, grid, window, probe)
    if np.array_equal(first, blind, equal_nan=True):
        return first[np.newaxis, :]
    rest = replace(weather, names=weather.names[1:], hourly=weather.hourly[1:])
    return np.vstack([first, predictions(plan, grid, window, rest)])


def _days_left_out(plan: MeterPlan, first: np.ndarray, cut: pd.Timestamp, error_days: int) -> int:
    """How many local days of the error window lost errors as ``first`` encounters."""
    gone = plan.residuals.index[first]
    gone = gone[gone >= cut - pd.Timedelta(days=error_days)]
    return len(gone.tz_convert(plan.timezone).normalize().unique())


def _level(plan: MeterPlan, cut: pd.Timestamp, error_days: int, wanted: bool) -> LevelCorrection:
    """The meter's level correction from its out-of-sample errors (none unless ``wanted``)."""
    if not wanted:
        return LevelCorrection.not_used("not asked for")
    return level_correction(plan.residuals, plan.history.energy, plan.timezone, cut, error_days)


def _prepare(
    plan: MeterPlan,
    window: BudgetWindow,
    weather: WeatherScenarios,
    as_of: date,
    cut: pd.Timestamp,
    paths: int,
    errors: pd.Series,
    forecasts: pd.Series,
    source: str,
    level: LevelCorrection,
) -> _Meter:
    grid = MeterGrid.on(window, simulation_step(plan))
    known = known_actuals(plan, grid, cut)
    predicted = _forecasts(plan, grid, window, weather)
    check_predictions(plan, grid, predicted, known)
    if level.used:
        predicted = predicted * level.day_factors(window, as_of)[grid.day]
    known_at = np.flatnonzero(np.isfinite(known))
    before = plan.history.energy[plan.history.energy.index < cut]
    lowest = float(np.nanmin(before.to_numpy(dtype=np.float64), initial=0.0))
    month_of_day = window.month_of_day()
    day_known = np.add.reduceat(np.nan_to_num(known), grid.day_starts)
    actual = np.bincount(month_of_day, weights=day_known, minlength=len(window.months))
    priced = plan.tariff is not None or plan.rate is not None
    out = MeterPaths(
        plan=plan,
        days=np.empty((paths, len(window.days))),
        months=np.empty((paths, len(window.months))),
        cost=np.empty((paths, len(window.months))) if priced else None,
        actual_to_date=actual,
        errors_source=source,
        day_floor=lowest * np.diff(np.r_[grid.day_starts, len(grid.index)]),
    )
    table = error_table(errors, plan.timezone, grid.step)
    day_forecasts = error_table(forecasts, plan.timezone, grid.step).reindex(table.index)
    day_forecasts = day_forecasts.sum(axis=1, min_count=1)
    elasticity = level_elasticity(table.sum(axis=1).to_numpy(), day_forecasts.to_numpy())
    out.error_growth = elasticity
    out.level = level
    day_predicted = np.add.reduceat(predicted, grid.day_starts, axis=1)
    return _Meter(plan, grid, predicted, known_at, known[known_at], lowest, table,
                  day_forecasts, elasticity, day_predicted, out)  # fmt: skip


def _fill_block(
    meter: _Meter,
    rows: np.ndarray,
    drawn_days: np.ndarray,
    scenario: np.ndarray,
    month_starts: np.ndarray,
    paths: slice,
) -> None:
    """Simulate one block of paths of one meter and store its totals."""
    energy = meter.errors[rows]
    if meter.elasticity > 0:
        several = len(meter.day_predicted) > 1
        levels = meter.day_predicted[scenario] if several else meter.day_predicted[:1]
        factors = level_factors(levels, meter.drawn_levels[drawn_days], meter.elasticity)
        energy *= factors[:, meter.grid.day]
    energy += meter.predicted[scenario] if len(meter.predicted) > 1 else meter.predicted[0]
    np.maximum(energy, meter.floor, out=energy)
    if meter.known_at.size:
        energy[:, meter.known_at] = meter.known
    daily = np.add.reduceat(energy, meter.grid.day_starts, axis=1)
    monthly = np.add.reduceat(daily, month_starts, axis=1)
    out = meter.out
    out.days[paths] = daily
    out.months[paths] = monthly
    plan = meter.plan
    if plan.tariff is not None:
        priced = cost_paths(energy, meter.grid.index, plan.timezone, plan.tariff, meter.grid.step)
        out.cost[paths] = priced[:, :, _TOTAL]
    elif plan.rate is not None:
        out.cost[paths] = monthly * plan.rate


def simulate_paths(
    meters: Sequence[MeterPlan],
    months: Sequence[str],
    as_of: date | str | pd.Timestamp,
    weather: WeatherAssumption,
    *,
    paths: int = 1000,
    block_days: float | None = None,
    error_days: int = 730,
    rng: np.random.Generator | int | None = None,
    correct_level: bool = True,
    progress: Progress | None = None,
) -> PathTotals:
    """Simulate the budget months of every meter together; keep per-path totals only.

    Parameters
    ----------
    meters : sequence of MeterPlan
        The meters, all on one site's clock.
    months : sequence of str
        Consecutive ``"YYYY-MM"`` months (see :func:`engine.budget.budget_months`).
    as_of : date or ISO text
        The last local day whose readings count; everything after it is ignored.
    weather : WeatherAssumption
        The weather the paths assume (each path takes one scenario, every meter the same).
    paths : int, default 1000
    block_days : float, optional
        Mean length in days of the resampled blocks of model errors; by default chosen from
        the errors' own autocorrelation (:func:`engine.budget.residuals.error_block_days`).
    error_days : int, default 730
        Days before the cut whose model errors are resampled.
    rng : numpy.random.Generator or int, optional
    correct_level : bool, default True
        Centre each meter's budget where its backtest supports it (its recent level error
        or its error window's mean error, :mod:`engine.budget.level`); False centres every
        budget on the model's forecast. The drawn errors are centred either way.
    progress : Progress, optional
        Stepped per meter while preparing and per meter × block of paths.

    Returns
    -------
    PathTotals
    """
    timezone = _check_plans(meters)
    if paths < 1 or (block_days is not None and not block_days >= 1) or error_days < 1:
        raise ValueError("paths, block_days and error_days must be at least 1")
    generator = _generator(rng)
    day = as_of_date(as_of)
    cut = as_of_cut(day, timezone)
    window = BudgetWindow.of(list(months), timezone)
    scenarios = weather_scenarios(weather, window, cut, rng=generator, paths=paths)

    prepared: list[_Meter] = []
    for number, plan in enumerate(meters):
        step(progress, 0.2 * number / len(meters), f"Budget: forecasting {plan.name}")
        left_out = 0
        if plan.residuals is not None:
            first = first_encounters(plan.residuals, plan.history)
            left_out = _days_left_out(plan, first, cut, error_days)
            plan = replace(plan, residuals=plan.residuals[~first])
        errors, forecasts, source = model_errors(plan, cut, error_days)
        errors = centred(errors, forecasts)  # the spread; the centre is the level's to set
        level = _level(plan, cut, error_days, correct_level)
        prepared.append(
            _prepare(plan, window, scenarios, day, cut, paths, errors, forecasts, source, level)
        )
        prepared[-1].out.first_encounter_days = left_out
    pool = shared_pool({meter.plan.name: meter.table for meter in prepared})
    for meter in prepared:
        meter.use_pool(pool)
    if block_days is None:
        block_days = error_block_days([meter.table for meter in prepared], pool)

    scenario_of_path = generator.permutation(np.arange(paths) % scenarios.count)
    starts = month_starts(window)
    widest = max(len(meter.grid.index) for meter in prepared)
    block = max(1, min(paths, BLOCK_CELLS // widest))
    blocks = range(0, paths, block)
    done, total = 0, len(blocks) * len(prepared)
    for first in blocks:
        chosen = slice(first, min(first + block, paths))
        count = chosen.stop - chosen.start
        drawn_days = stationary_indices(len(pool), len(window.days), block_days, count, generator)
        rows_by_step: dict[pd.Timedelta, np.ndarray] = {}
        for meter in prepared:
            step(
                progress,
                0.2 + 0.8 * done / total,
                f"Budget: paths {chosen.start + 1}–{chosen.stop} of {meter.plan.name}",
            )
            grid = meter.grid
            if grid.step not in rows_by_step:
                rows_by_step[grid.step] = drawn_days[:, grid.day] * grid.slots_per_day + grid.slot
            _fill_block(
                meter,
                rows_by_step[grid.step],
                drawn_days,
                scenario_of_path[chosen],
                starts,
                chosen,
            )
            done += 1
    step(progress, 1.0, "Budget: paths simulated")
    return PathTotals(
        window=window,
        as_of=day,
        cut=cut,
        weather=scenarios,
        scenario_of_path=scenario_of_path,
        meters=[meter.out for meter in prepared],
        block_days=float(block_days),
        pool_days=len(pool),
        settings={"error_days": int(error_days)},
    )
