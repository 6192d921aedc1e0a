"""Model errors by whole local day, and the pool of days every meter's errors are drawn from.

A path's model error is a stationary block bootstrap (Politis & Romano 1994) of past *days*:
blocks of consecutive days (mean length chosen from the errors' autocorrelation, Politis &
White 2004: see :func:`error_block_days`) keep the errors' autocorrelation, and
whole days keep their daily shape. The days drawn are the same for every meter of a path, so
the meters' errors keep their dependence (a day the whole campus ran high stays high for all)
and a roll-up summed path by path is neither the sum of the meters' ranges nor independent.

Each meter's errors are laid in a table of local days × clock slots (24 hours, or 1 for daily
models). On the day clocks go forward the skipped hour takes the next hour's error; on the
day they go back the repeated hour keeps the first of its two. Only days with an error in
every interval are drawn, and only days every meter has; blocks run over those days in date
order, stepping over days missing from the pool and wrapping from the last day to the first.
"""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from engine.bootstrap import stationary_block_length
from engine.budget.meter_grid import DAY, HOUR, hourly_sums, native_interval
from engine.budget.plan import MeterPlan
from engine.errors import InputError
from engine.models.base import ModelInputs
from engine.timestamps import day_lengths

#: Fewest days in the shared pool of model errors (four weeks).
MIN_POOL_DAYS = 28


def model_errors(plan: MeterPlan, cut: pd.Timestamp, days: int) -> tuple[pd.Series, pd.Series, str]:
    """The meter's errors (actual − predicted) in the ``days`` before the cut, the forecasts
    they were errors of (actual − error, on the same intervals), and their source.

    Out-of-sample errors from the plan when it has them, else the fit period's residuals
    (the model predicting its own history).
    """
    start = cut - pd.Timedelta(days=days)
    if plan.residuals is not None:
        errors = plan.residuals[(plan.residuals.index >= start) & (plan.residuals.index < cut)]
        source = "out-of-sample backtest errors"
    else:
        history = plan.history.window(start=start, end=cut)
        if len(history.index) < 2:
            raise InputError(
                f"meter '{plan.name}' has no readings in the {days} days before the as-of date.",
                hint="Import recent readings, or choose an earlier as-of date.",
            )
        predicted = np.asarray(plan.model.predict(history.without_energy()), dtype=np.float64)
        errors = history.energy - predicted
        source = "fit-period residuals"
    forecasts = plan.history.energy.reindex(errors.index) - errors
    native = native_interval(plan.history)
    if native < HOUR and len(errors):
        first_hour = errors.index[0].floor("h")
        errors = hourly_sums(errors, native, first_hour)
        forecasts = hourly_sums(forecasts, native, first_hour)
    return errors.astype(np.float64), forecasts.astype(np.float64), source


def _day_numbers(local: pd.DatetimeIndex) -> np.ndarray:
    return local.normalize().to_numpy().astype("datetime64[D]").astype(np.int64)


def _hours_in_days(days: np.ndarray, timezone: str) -> np.ndarray:
    """How many hours each local day (day number) has: 23, 24 or 25."""
    if len(days) == 0:
        return np.zeros(0, dtype=np.int64)
    first, last = int(days.min()), int(days.max())
    return _day_lengths(timezone, first, last)[days - first]


@functools.lru_cache(maxsize=32)
def _day_lengths(timezone: str, first: int, last: int) -> np.ndarray:
    """Hours of every local day from day number ``first`` to ``last``: the meters of a budget
    and its past budgets ask for the same few ranges, so each is worked out once."""
    days = pd.DatetimeIndex(np.arange(first, last + 1).astype("datetime64[D]"))
    lengths = np.asarray(day_lengths(days, timezone) // HOUR, dtype=np.int64)
    lengths.flags.writeable = False
    return lengths


def _fill_across(rows: np.ndarray) -> np.ndarray:
    """Each unknown slot of each row from the next known slot, else the last known one."""
    width = rows.shape[1]
    slots = np.arange(width)
    known = ~np.isnan(rows)
    following = np.minimum.accumulate(np.where(known, slots, width)[:, ::-1], axis=1)[:, ::-1]
    preceding = np.maximum.accumulate(np.where(known, slots, -1), axis=1)
    source = np.where(following < width, following, preceding)
    return np.take_along_axis(rows, np.clip(source, 0, width - 1), axis=1)


def error_table(errors: pd.Series, timezone: str, step: pd.Timedelta) -> pd.DataFrame:
    """Errors as a table of complete local days (rows, by day number) × clock slots."""
    errors = errors[np.isfinite(errors.to_numpy())]
    local = errors.index.tz_convert(timezone).tz_localize(None)
    days = _day_numbers(local)
    values = errors.to_numpy(dtype=np.float64)
    if step == DAY:
        table = pd.DataFrame({0: values}, index=days)
        return table[~table.index.duplicated()]
    numbers, row, counts = np.unique(days, return_inverse=True, return_counts=True)
    grid = np.full((len(numbers), 24), np.nan)
    last_first = np.arange(len(values))[::-1]  # written last to first: the first of a repeat wins
    grid[row[last_first], local.hour.to_numpy()[last_first]] = values[last_first]
    whole = counts == _hours_in_days(numbers, timezone)
    grid = grid[whole]
    gaps = np.isnan(grid).any(axis=1)  # a day the clock skipped an hour: the next hour's error
    if gaps.any():
        grid[gaps] = _fill_across(grid[gaps])
    return pd.DataFrame(grid, index=numbers[whole], columns=range(24))


def shared_pool(tables: dict[str, pd.DataFrame]) -> np.ndarray:
    """Day numbers every meter has complete errors for, sorted."""
    pool: np.ndarray | None = None
    for table in tables.values():
        days = table.index.to_numpy(dtype=np.int64)
        pool = days if pool is None else np.intersect1d(pool, days)
    pool = np.sort(pool) if pool is not None else np.zeros(0, dtype=np.int64)
    if len(pool) < MIN_POOL_DAYS:
        fewest = min(tables, key=lambda name: len(tables[name]))
        raise InputError(
            f"the meters share only {len(pool)} whole days of model errors to resample "
            f"(meter '{fewest}' has {len(tables[fewest])}); at least {MIN_POOL_DAYS} are needed.",
            hint="Budget meters with overlapping recent readings, or budget them separately.",
        )
    return pool


def error_block_days(tables: list[pd.DataFrame], pool: np.ndarray) -> float:
    """Mean block length in days for resampling the pool's days of model errors.

    Each meter's daily error totals over the pool (in date order) get the stationary
    bootstrap's automatic block length (:func:`engine.bootstrap.stationary_block_length`,
    Politis & White 2004); the longest is used, so the most persistent meter keeps its
    dependence (a month-long bias stays a month long), and a shorter one loses nothing.
    """
    return max(stationary_block_length(table.loc[pool].sum(axis=1).to_numpy()) for table in tables)


def level_elasticity(day_errors: np.ndarray, day_forecasts: np.ndarray) -> float:
    """How the size of a day's error grows with the day's forecast: ``b`` in ``sd ∝ level^b``.

    The days are sorted by forecast into up to ten groups of equal size (at least five days
    each); ``b`` is the slope of the log of each group's root-mean-square error on the log of
    its mean forecast (a grouped form of the Park 1966 regression for heteroscedasticity,
    from memory: grouping keeps single tiny errors, whose logs are far below the rest, from
    pulling the slope). It is kept between 0 (errors the same size whatever the load:
    additive) and 1 (errors in proportion to it). Fewer than :data:`MIN_POOL_DAYS` usable
    days, or forecasts that hardly vary, give 0.
    """
    usable = (day_forecasts > 0) & np.isfinite(day_errors) & np.isfinite(day_forecasts)
    if usable.sum() < MIN_POOL_DAYS:
        return 0.0
    order = np.argsort(day_forecasts[usable])
    groups = np.array_split(order, min(10, int(usable.sum()) // 5))
    errors, forecasts = day_errors[usable], day_forecasts[usable]
    level = np.log([forecasts[group].mean() for group in groups])
    size = np.array([np.sqrt(np.mean(errors[group] ** 2)) for group in groups])
    if np.ptp(level) < 0.1 or not (size > 0).all():  # a flat load, or exact forecasts
        return 0.0
    slope = np.polyfit(level, np.log(size), 1)[0]
    return float(np.clip(slope, 0.0, 1.0))


def level_factors(
    budget_levels: np.ndarray, drawn_levels: np.ndarray, elasticity: float
) -> np.ndarray:
    """Per path and budget day, the factor on a drawn day's errors: ``(budget / drawn)^b``.

    A day drawn from a light-load season and laid on a heavy-load budget day grows with the
    load, and the other way round; the ratio is kept within 1/3 and 3 so that a nearly idle
    day never scales an error beyond what the pool's own days show, and days without a
    positive forecast keep their errors as drawn.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = budget_levels / drawn_levels
    usable = (budget_levels > 0) & (drawn_levels > 0)
    return np.where(usable, np.clip(ratio, 1 / 3, 3.0) ** elasticity, 1.0)


def first_encounters(errors: pd.Series, history: ModelInputs) -> np.ndarray:
    """Per error, whether it fell on a day whose calendar condition the model that made it
    had never seen (no day of it in the history before the day's month): such errors are left
    out of a budget's error pool.

    A month-ahead refit meets its first closure or its first holiday in a break with nothing
    learned of it and misses those days by half or more. Every model budgeting later has
    learned them (they lie in its history), so those misses are not samples of its errors;
    drawn into its paths they skewed the month totals: on the sample campus a 15-month-old
    meter's P50 sat 0.8 % above the mean of its paths. Where leaving them out would leave
    fewer than :data:`MIN_POOL_DAYS` days to draw from, none is marked: a short history's
    misses are the best evidence it has.
    """
    if errors.empty:
        return np.zeros(0, dtype=bool)
    days, first_of = history.condition_days
    local = errors.index.tz_convert(history.timezone).tz_localize(None).to_numpy()
    error_days = local.astype("datetime64[D]").astype(np.int64)
    month_starts = local.astype("datetime64[M]").astype("datetime64[D]").astype(np.int64)
    at = np.clip(np.searchsorted(days, error_days), 0, len(days) - 1)
    first = (days[at] == error_days) & (first_of[at] >= month_starts)
    if len(np.unique(error_days[~first])) < MIN_POOL_DAYS:
        return np.zeros(len(errors), dtype=bool)
    return first
