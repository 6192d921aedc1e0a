"""One meter on the budget window: its simulation grid, model predictions and metered actuals.

Budgets simulate hourly (daily for daily models): a model fitted on sub-hourly readings
predicts at its own interval and its predictions are summed to UTC hours, and so are the
readings. Every interval of the grid knows its local day (counted from the window's first
day) and its clock slot (the local hour, or 0 for days), which is how resampled model errors
are laid onto it.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import pandas as pd

from engine.budget.periods import BudgetWindow
from engine.budget.plan import MeterPlan
from engine.budget.scenarios import WeatherScenarios
from engine.calendar import CampusCalendar, OccupancyRule, label_intervals
from engine.errors import InputError
from engine.models.base import ModelInputs, predict_scenarios

HOUR = pd.Timedelta(hours=1)
DAY = pd.Timedelta(days=1)
#: Spacing from which inputs count as daily (local days are 23 to 25 hours long in UTC).
_DAILY_FROM = pd.Timedelta(hours=20)


def native_interval(inputs: ModelInputs) -> pd.Timedelta:
    """The inputs' interval: a divisor of an hour, or one day."""
    if len(inputs.index) < 2:
        raise InputError(
            "the meter's history holds fewer than two intervals.",
            hint="Budget a meter with at least a few weeks of readings.",
        )
    interval = inputs.interval
    if interval >= _DAILY_FROM:
        return DAY
    if interval <= pd.Timedelta(0) or HOUR % interval:
        raise InputError(
            f"a budget cannot simulate readings {interval} apart.",
            hint="Model the meter on hourly (or 15-, 30-minute) readings or on daily totals.",
        )
    return interval


def hourly_sums(values: pd.Series, interval: pd.Timedelta, origin: pd.Timestamp) -> pd.Series:
    """Sums of sub-hourly values per hour counted from ``origin``; NaN unless all are known."""
    if interval >= HOUR:
        return values
    return values.resample("h", origin=origin).sum(min_count=int(HOUR // interval))


@dataclass(frozen=True)
class MeterGrid:
    """Where a meter's simulated intervals sit on the window.

    ``step`` is one hour or one day; ``index`` the UTC interval starts; ``day`` the local day
    of each interval (0 = the window's first day) and ``slot`` its clock slot;
    ``day_starts`` the position of each day's first interval.
    """

    step: pd.Timedelta
    index: pd.DatetimeIndex
    day: np.ndarray
    slot: np.ndarray
    day_starts: np.ndarray

    @property
    def slots_per_day(self) -> int:
        return 1 if self.step == DAY else 24

    @classmethod
    def on(cls, window: BudgetWindow, step: pd.Timedelta) -> MeterGrid:
        if step == DAY:
            count = len(window.days)
            return cls(
                step,
                window.day_midnights(),
                np.arange(count),
                np.zeros(count, dtype=np.int64),
                np.arange(count),
            )
        local = window.hours.tz_convert(window.timezone).tz_localize(None)
        day_number = local.normalize().to_numpy().astype("datetime64[D]").astype(np.int64)
        day = day_number - day_number[0]
        return cls(
            HOUR,
            window.hours,
            day,
            local.hour.to_numpy().astype(np.int64),
            np.flatnonzero(np.r_[True, day[1:] != day[:-1]]),
        )


def simulation_step(plan: MeterPlan) -> pd.Timedelta:
    """One day for daily models, one hour otherwise."""
    return DAY if native_interval(plan.history) == DAY else HOUR


def known_actuals(plan: MeterPlan, grid: MeterGrid, cut: pd.Timestamp) -> np.ndarray:
    """Metered energy on the grid before the cut, NaN where unknown (to be forecast)."""
    energy = plan.history.energy
    energy = energy[(energy.index >= grid.index[0]) & (energy.index < cut)]
    if energy.empty:
        return np.full(len(grid.index), np.nan)
    energy = hourly_sums(energy, native_interval(plan.history), grid.index[0])
    return energy.reindex(grid.index).to_numpy(dtype=np.float64)


def _daily_means(hourly: np.ndarray, window: BudgetWindow) -> np.ndarray:
    """Per-scenario mean of each local day's hours."""
    hour_grid = MeterGrid.on(window, HOUR)
    counts = np.diff(np.r_[hour_grid.day_starts, hourly.shape[1]])
    return np.add.reduceat(hourly, hour_grid.day_starts, axis=1) / counts


def predictions(
    plan: MeterPlan, grid: MeterGrid, window: BudgetWindow, weather: WeatherScenarios
) -> np.ndarray:
    """The model's energy per grid interval under each weather scenario, ``(scenarios, n)``.

    A calendar-only model gives one row, shared by every scenario.
    """
    native = native_interval(plan.history)
    labels = None
    if native == DAY:
        index = grid.index
        if plan.calendar is not None:
            labels = label_intervals(index, plan.timezone, plan.calendar, plan.occupancy)
    else:
        index = pd.date_range(window.start, window.end, freq=native, inclusive="left")
        if plan.calendar is not None:
            labels = _interval_labels(
                window.start, window.end, native, plan.timezone, plan.calendar, plan.occupancy
            )
    if not plan.uses_temperature:
        temperatures = None
    elif weather.hourly is None:
        raise InputError(
            f"the model of meter '{plan.name}' uses outdoor temperature, but the budget "
            "assumes no weather.",
            hint="Choose typical weather, past years' weather or a temperature file.",
        )
    elif native == DAY:
        temperatures = _daily_means(weather.hourly, window)
    else:
        temperatures = np.repeat(weather.hourly, int(HOUR // native), axis=1)
    inputs = ModelInputs(index=index, timezone=plan.timezone, labels=labels)
    if temperatures is None:
        predicted = np.asarray(plan.model.predict(inputs), dtype=np.float64)[np.newaxis, :]
    else:
        predicted = predict_scenarios(plan.model, inputs, temperatures)
    if native < HOUR:
        per_hour = int(HOUR // native)
        predicted = predicted.reshape(len(predicted), -1, per_hour).sum(axis=2)
    return predicted


def check_predictions(
    plan: MeterPlan, grid: MeterGrid, predicted: np.ndarray, known: np.ndarray
) -> None:
    """Every interval that needs a forecast must have one."""
    needed = np.isnan(known)
    bad = needed & ~np.isfinite(predicted).all(axis=0)
    if bad.any():
        first = grid.index[bad][0].tz_convert(plan.timezone)
        raise InputError(
            f"the model of meter '{plan.name}' gives no forecast for {int(bad.sum())} "
            f"budget interval(s), the first at {first:%Y-%m-%d %H:%M %Z}.",
            hint="Check the weather for those hours, or refit the model on more history.",
        )


@lru_cache(maxsize=32)
def _interval_labels(
    start: pd.Timestamp,
    end: pd.Timestamp,
    step: pd.Timedelta,
    timezone: str,
    calendar: CampusCalendar,
    occupancy: OccupancyRule | None,
) -> pd.DataFrame:
    """The calendar labels of the intervals from ``start`` to ``end``, made once for every
    meter read at ``step`` (a budget and its past budgets label each month for each meter);
    callers only read them."""
    index = pd.date_range(start, end, freq=step, inclusive="left")
    return label_intervals(index, timezone, calendar, occupancy)
