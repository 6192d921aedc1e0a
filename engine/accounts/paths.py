"""Budget paths of bill accounts, beside the meters' paths and on the same weather scenarios.

Per account and budget day:

* a day a known bill covers holds that bill's energy, shared among its days by the account's
  model under the weather that happened (:mod:`engine.accounts.split`); it is part of every path
  and of ``actual_to_date``;
* any other day belongs to a forecast billing period that continues the account's cycle; the
  period's energy is the model's prediction under the path's weather scenario (the same
  scenario the meters of that path assume; days before the as-of date take the measured
  temperature), shared among its days, times ``1 + e`` with ``e`` one of the account's
  out-of-sample bill errors, drawn per path and period; never below zero.

The paths' days, months and cost are kept as a meter's are (:class:`MeterPaths`), so the
summary widens them by the account's calibration and sums them into roll-ups path by path.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date

import numpy as np
import pandas as pd

from engine.accounts.model import bill_days
from engine.accounts.plan import AccountPlan
from engine.accounts.split import cycle_periods
from engine.budget.meter_grid import HOUR, MeterGrid
from engine.budget.periods import BudgetWindow, as_of_cut, as_of_date
from engine.budget.simulate import MeterPaths, PathTotals, month_starts
from engine.budget.weather_paths import WeatherAssumption, WeatherScenarios, weather_scenarios


def bill_only_totals(
    months: Sequence[str],
    as_of: date,
    weather: WeatherAssumption,
    timezone: str,
    paths: int,
    rng: np.random.Generator,
) -> PathTotals:
    """The frame of a budget without meters: window, weather scenarios and their paths."""
    window = BudgetWindow.of(list(months), timezone)
    cut = as_of_cut(as_of, timezone)
    scenarios = weather_scenarios(weather, window, cut, rng=rng, paths=paths)
    return PathTotals(
        window=window,
        as_of=as_of_date(as_of),
        cut=cut,
        weather=scenarios,
        scenario_of_path=rng.permutation(np.arange(paths) % scenarios.count),
        meters=[],
        block_days=1.0,
        pool_days=0,
        settings={"error_days": 0},  # no meter draws days of errors; accounts draw bills'
    )


def daily_scenarios(window: BudgetWindow, weather: WeatherScenarios) -> np.ndarray | None:
    """Each scenario's mean °C per local day of the window, ``(scenarios, days)``."""
    if weather.hourly is None:
        return None
    grid = MeterGrid.on(window, HOUR)
    counts = np.diff(np.r_[grid.day_starts, weather.hourly.shape[1]])
    return np.add.reduceat(weather.hourly, grid.day_starts, axis=1) / counts


def _known_days(plan: AccountPlan, days: pd.DatetimeIndex) -> tuple[np.ndarray, np.ndarray]:
    """Energy of each window day a known bill covers (NaN elsewhere), and the end of the
    newest bill before each day (``datetime64[D]``), from which forecast periods run."""
    bills = plan.bills
    covered, owner = bill_days(bills)
    temperature = None
    if plan.model.uses_temperature:
        measured = plan.daily_temperature.reindex(covered).to_numpy(dtype=float)
        means = pd.Series(measured).groupby(owner).transform("mean").to_numpy()
        temperature = np.where(np.isfinite(measured), measured, means)[np.newaxis, :]
    shape = np.maximum(plan.model.daily(covered, temperature, owner)[0], np.finfo(float).tiny)
    by_bill = np.bincount(owner, weights=shape)
    actual = bills["quantity_kwh"].to_numpy(dtype=float)
    energy = shape * (actual / by_bill)[owner]
    per_day = pd.Series(energy, index=covered).reindex(days).to_numpy()
    ends = bills["period_end"].to_numpy().astype("datetime64[D]")
    day = days.to_numpy().astype("datetime64[D]")
    before = np.searchsorted(ends, day, side="left") - 1
    until = np.where(before >= 0, ends[np.maximum(before, 0)], day[0] - np.timedelta64(1, "D"))
    return per_day, until


def account_paths(plan: AccountPlan, totals: PathTotals, rng: np.random.Generator) -> MeterPaths:
    """The account's per-path days, months and cost on the run's window and scenarios."""
    window = totals.window
    days = window.days
    known, until = _known_days(plan, days)
    forecast = np.flatnonzero(np.isnan(known))
    paths = totals.paths
    energy = np.broadcast_to(np.nan_to_num(known), (paths, len(days))).copy()
    if forecast.size:
        periods = cycle_periods(days[forecast], until[forecast], plan.cycle_days)
        _, period = np.unique(periods, return_inverse=True)
        temperature = None
        if plan.model.uses_temperature:
            temperature = _forecast_temperature(plan, window, totals.weather, totals.as_of)
            temperature = temperature[:, forecast]
        expected = plan.model.daily(days[forecast], temperature, period)
        rows = totals.scenario_of_path if len(expected) > 1 else np.zeros(paths, np.int64)
        drawn = rng.choice(plan.errors, size=(paths, period.max() + 1))
        energy[:, forecast] = np.maximum(expected[rows] * (1.0 + drawn[:, period]), 0.0)
    starts = month_starts(window)
    months = np.add.reduceat(energy, starts, axis=1)
    actual = np.add.reduceat(np.nan_to_num(known), starts)
    return MeterPaths(
        plan=plan,
        days=energy,
        months=months,
        cost=months * plan.rate if plan.rate is not None else None,
        actual_to_date=actual,
        errors_source=plan.errors_source,
        day_floor=np.zeros(len(days)),
    )


def _forecast_temperature(
    plan: AccountPlan, window: BudgetWindow, weather: WeatherScenarios, as_of: date
) -> np.ndarray:
    """Scenario °C per window day; days up to the as-of date take the measured mean."""
    scenarios = daily_scenarios(window, weather)
    measured = plan.daily_temperature.reindex(window.days).to_numpy(dtype=float)
    past = (window.days <= pd.Timestamp(as_of)) & np.isfinite(measured)
    return np.where(past[np.newaxis, :], measured[np.newaxis, :], scenarios)
