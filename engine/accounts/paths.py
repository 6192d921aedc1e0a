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
from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from engine.accounts.model import AccountModel, bill_days
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


def shared_bills(
    model: AccountModel,
    bills: pd.DataFrame,
    daily_temperature: pd.Series | None,
    days: pd.DatetimeIndex,
    column: str = "quantity_kwh",
) -> np.ndarray:
    """Each of ``days``' part of the bills' ``column`` (kWh, or cost), shared among each bill's
    days as the model shares its energy under the measured weather; NaN on days no bill
    covers (or whose bill lacks the figure)."""
    covered, owner = bill_days(bills)
    temperature = None
    if model.uses_temperature:
        measured = daily_temperature.reindex(covered).to_numpy(dtype=float)
        means = pd.Series(measured).groupby(owner).transform("mean").to_numpy()
        temperature = np.where(np.isfinite(measured), measured, means)[np.newaxis, :]
    # a bill without any temperature (or a model giving nothing) is shared by days
    shape = np.fmax(model.daily(covered, temperature, owner)[0], np.finfo(float).tiny)
    by_bill = np.bincount(owner, weights=shape)
    amount = pd.to_numeric(bills[column], errors="coerce").to_numpy(dtype=float)
    per_day = pd.Series(shape * (amount / by_bill)[owner], index=covered)
    return per_day.reindex(days).to_numpy()


@dataclass(frozen=True)
class Layout:
    """An account's budget days: the known bills' energy (NaN on days to forecast), which days
    are forecast, and their forecast billing period (0, 1, … along the cycle)."""

    known: np.ndarray
    forecast: np.ndarray  # positions of the days to forecast
    period: np.ndarray  # per forecast day


def layout(plan: AccountPlan, days: pd.DatetimeIndex) -> Layout:
    """Where the account's known bills end and its forecast billing periods run."""
    known = shared_bills(plan.model, plan.bills, plan.daily_temperature, days)
    ends = plan.bills["period_end"].to_numpy().astype("datetime64[D]")
    day = days.to_numpy().astype("datetime64[D]")
    before = np.searchsorted(ends, day, side="left") - 1
    until = np.where(before >= 0, ends[np.maximum(before, 0)], day[0] - np.timedelta64(1, "D"))
    forecast = np.flatnonzero(np.isnan(known))
    periods = cycle_periods(days[forecast], until[forecast], plan.cycle_days)
    return Layout(known, forecast, np.unique(periods, return_inverse=True)[1])


def expected_days(
    plan: AccountPlan, where: Layout, window: BudgetWindow, temperature: np.ndarray | None
) -> np.ndarray:
    """The model's energy on the forecast days under each scenario's daily °C
    ``(scenarios, days)`` (None without weather): ``(scenarios, forecast days)``."""
    if plan.model.uses_temperature:
        temperature = temperature[:, where.forecast]
    return plan.model.daily(window.days[where.forecast], temperature, where.period)


def account_paths(plan: AccountPlan, totals: PathTotals, rng: np.random.Generator) -> MeterPaths:
    """The account's per-path days, months and cost on the run's window and scenarios."""
    window = totals.window
    where = layout(plan, window.days)
    paths = totals.paths
    energy = np.broadcast_to(np.nan_to_num(where.known), (paths, len(window.days))).copy()
    if where.forecast.size:
        temperature = scenario_temperature(plan, window, totals.weather, totals.as_of)
        expected = expected_days(plan, where, window, temperature)
        rows = totals.scenario_of_path if len(expected) > 1 else np.zeros(paths, np.int64)
        drawn = rng.choice(plan.errors, size=(paths, where.period.max() + 1))
        energy[:, where.forecast] = np.maximum(expected[rows] * (1.0 + drawn[:, where.period]), 0)
    starts = month_starts(window)
    months = np.add.reduceat(energy, starts, axis=1)
    actual = np.add.reduceat(np.nan_to_num(where.known), starts)
    return MeterPaths(
        plan=plan,
        days=energy,
        months=months,
        cost=months * plan.rate if plan.rate is not None else None,
        actual_to_date=actual,
        errors_source=plan.errors_source,
        day_floor=np.zeros(len(window.days)),
    )


def scenario_temperature(
    plan: AccountPlan, window: BudgetWindow, weather: WeatherScenarios, as_of: date
) -> np.ndarray | None:
    """Scenario °C per window day; days up to the as-of date take the measured mean (None for
    a calendar-only account)."""
    if not plan.model.uses_temperature:
        return None
    scenarios = daily_scenarios(window, weather)
    measured = plan.daily_temperature.reindex(window.days).to_numpy(dtype=float)
    past = (window.days <= pd.Timestamp(as_of)) & np.isfinite(measured)
    chosen = pd.DataFrame(np.where(past[np.newaxis, :], measured[np.newaxis, :], scenarios).T)
    # a day left without a temperature (before the as-of date, unmeasured) takes its neighbours'
    return chosen.interpolate(limit_direction="both").to_numpy().T
