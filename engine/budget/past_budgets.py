"""Month-ahead budgets made from rolling origins in the past, beside the months' actual totals.

At each origin month the plan factory is asked for meter plans as of the day before the month
(models fitted on the history before it), the budget for that one month is simulated, and its
ranges are set beside the metered total. The table feeds :func:`engine.budget.calibrate`,
which shows how often the ranges held and corrects them when they did not. Origins are the
last whole local calendar months of the history (:func:`engine.backtest.backtest_origins`),
as in the models' rolling-origin backtest.

Each past budget is marked *settled* when every model error it drew came from a model fitted
on at least :data:`SETTLED_HISTORY` of readings. The first past budgets of a short history
draw errors from refits on a few months, which miss by far more than later ones; their ranges
are wider than a budget made today, so they may not narrow today's range
(:func:`engine.budget.site_calibrations`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from datetime import date

import numpy as np
import pandas as pd

from engine.backtest import backtest_origins
from engine.budget.calibration import CALIBRATION_WINDOW, calibrate, site_calibrations
from engine.budget.meter_grid import DAY, native_interval
from engine.budget.periods import BudgetWindow, as_of_cut
from engine.budget.plan import MeterPlan
from engine.budget.result import Calibration
from engine.budget.simulate import simulate_paths
from engine.budget.skill import (
    LAST_YEAR,
    LAST_YEAR_COLUMN,
    SEASONAL_NAIVE,
    SEASONAL_NAIVE_COLUMN,
    baseline_windows,
    skill,
)
from engine.budget.summary import check_levels, roll_up_groups, spreads
from engine.budget.weather_paths import WeatherAssumption
from engine.errors import InputError
from engine.models.base import ModelInputs
from engine.progress import Progress, reworded, step

#: The metered month total and the naive budgets' totals of each past month.
_MEASURED = ("actual kWh", LAST_YEAR_COLUMN, SEASONAL_NAIVE_COLUMN)
#: Makes the meter plans a budget as of the given date would have had.
PlanFactory = Callable[[date], Sequence[MeterPlan]]
#: Readings a model must have been fitted on for its errors to be like today's model's: a
#: year, so that it has seen every season once.
SETTLED_HISTORY = pd.Timedelta(days=365)


@dataclass(frozen=True)
class BudgetBacktest:
    """Past month-ahead budgets and the actual totals.

    ``pairs`` has one row per origin month and meter or roll-up: ``month``, ``kind``
    (``"meter"``, ``"utility"`` or ``"campus"``), ``name``, ``actual kWh`` (NaN when the
    month's readings are incomplete), the naive budgets ``last year kWh`` and ``last week
    kWh`` (:mod:`engine.budget.skill`; NaN without whole readings), ``mean kWh``,
    ``P{level}`` per level and ``settled`` (see the module notes; a roll-up when all its
    meters are). ``skipped``
    lists origins the plan factory or the simulation could not serve, with the message.
    """

    pairs: pd.DataFrame
    skipped: pd.DataFrame
    levels: tuple[int, ...]

    def calibration(self, name: str, kind: str = "meter") -> Calibration:
        """The calibration of one meter's (or roll-up's) range, from its most recent months
        (a meter's pooled with the site's other meters, :func:`site_calibrations`), with the
        P50's skill against the naive budgets on the same months."""
        if kind == "meter":
            return self.calibrations()[name]
        rows = self.pairs[(self.pairs["name"] == name) & (self.pairs["kind"] == kind)]
        made = calibrate(rows[rows["month"].isin(self._recent_months())],
                         level_low=self.levels[0], level_high=self.levels[-1])  # fmt: skip
        return self._with_skill(made, rows)

    def calibrations(self) -> dict[str, Calibration]:
        """Per meter name, for :func:`engine.budget.simulate_budget`."""
        meters = self.pairs[self.pairs["kind"] == "meter"]
        made = site_calibrations(meters, level_low=self.levels[0], level_high=self.levels[-1])
        return {
            name: self._with_skill(made[name], meters[meters["name"] == name])
            for name in meters["name"].unique()
        }

    def _recent_months(self) -> list[str]:
        return sorted(self.pairs["month"].unique())[-CALIBRATION_WINDOW:]

    def _with_skill(self, made: Calibration, rows: pd.DataFrame) -> Calibration:
        """``made`` with the P50's skill against the naive budgets on the recent months."""
        recent = rows[rows["month"].isin(self._recent_months())]
        middle = "P50" if 50 in self.levels else "mean kWh"
        return replace(
            made,
            vs_last_year=skill(recent, LAST_YEAR_COLUMN, LAST_YEAR, middle),
            vs_seasonal_naive=skill(recent, SEASONAL_NAIVE_COLUMN, SEASONAL_NAIVE, middle),
        )


def month_total(inputs: ModelInputs, start: pd.Timestamp, end: pd.Timestamp) -> float:
    """The metered kWh in ``[start, end)``, or NaN unless every interval has a reading."""
    first, stop = inputs.index.searchsorted([start, end])  # the index is sorted
    inside = inputs.energy.to_numpy(dtype=np.float64)[first:stop]
    interval = native_interval(inputs)
    expected = round((end - start) / DAY) if interval == DAY else int((end - start) // interval)
    if np.count_nonzero(~np.isnan(inside)) != expected:
        return float("nan")
    return float(np.nansum(inside))


def _past_month_progress(
    progress: Progress | None, number: int, months: Sequence[str]
) -> Progress | None:
    """Progress of one past budget, its messages naming the past month ("Past budget for
    2025-11 (3 of 12): forecasting Library"), so they do not read as the budget itself."""
    if progress is None:
        return None
    part = progress.part(number / len(months), (number + 1) / len(months))
    where = f"Past budget for {months[number]} ({number + 1} of {len(months)})"
    return reworded(part, lambda message: f"{where}: {message.removeprefix('Budget: ')}")


def _origin_months(history: Mapping[str, ModelInputs], origins: int | Sequence[str]) -> list[str]:
    if not isinstance(origins, int):
        return [str(month) for month in origins]
    common: set[str] | None = None
    for inputs in history.values():
        starts = backtest_origins(inputs.index, inputs.timezone, origins, inputs.interval)
        months = set(starts.tz_convert(inputs.timezone).strftime("%Y-%m"))
        common = months if common is None else common & months
    return sorted(common or ())


def settled(plan: MeterPlan, as_of: date, error_days: int) -> bool:
    """Whether every model error a budget of ``plan`` as of ``as_of`` draws (those of the
    ``error_days`` before the cut) lies :data:`SETTLED_HISTORY` or more after the meter's
    first reading, so the model that made it had seen a year of readings."""
    cut = as_of_cut(as_of, plan.timezone)
    errors = plan.residuals
    window_start = cut - pd.Timedelta(days=error_days)
    if errors is not None:
        drawn = errors.index[(errors.index >= window_start) & (errors.index < cut)]
        window_start = drawn.min() if len(drawn) else cut
    first_reading = plan.history.energy.first_valid_index()
    return first_reading is not None and window_start - first_reading >= SETTLED_HISTORY


def _rows(
    month: str,
    plans: Sequence[MeterPlan],
    totals: dict[str, np.ndarray],
    actuals: dict[str, dict[str, float]],
    levels: tuple[int, ...],
    settled_plans: set[str],
) -> list[dict[str, object]]:
    groups = [("meter", plan.name, [plan.name]) for plan in plans] + roll_up_groups(plans)
    rows = []
    for kind, name, members in groups:
        paths = np.sum([totals[member] for member in members], axis=0)
        (spread,) = spreads(paths[:, np.newaxis], levels)
        rows.append(
            {
                "month": month,
                "kind": kind,
                "name": name,
                **{
                    column: float(np.sum([actuals[member][column] for member in members]))
                    for column in _MEASURED
                },
                "mean kWh": spread.mean,
                **{f"P{level}": value for level, value in spread.quantiles.items()},
                "settled": all(member in settled_plans for member in members),
            }
        )
    return rows


def backtest_budget(
    plan_factory: PlanFactory,
    history: Mapping[str, ModelInputs],
    origins: int | Sequence[str] = 36,
    *,
    weather: WeatherAssumption,
    levels: Sequence[int] = (10, 50, 90),
    paths: int = 500,
    block_days: float | None = None,
    error_days: int = 730,
    rng: np.random.Generator | int | None = None,
    correct_level: bool = True,
    progress: Progress | None = None,
) -> BudgetBacktest:
    """Month-ahead budgets from rolling origins, beside the actual month totals.

    Parameters
    ----------
    plan_factory : callable
        ``plan_factory(as_of)`` gives the meter plans as of that date: models fitted on the
        readings up to it (the budget itself ignores every reading after it).
    history : mapping of meter name to ModelInputs
        Every meter's whole history, for the actual month totals.
    origins : int or sequence of str, default 36
        How many of the last whole months to budget, or the ``"YYYY-MM"`` months themselves.
    weather, levels, paths, block_days, error_days, rng, correct_level
        As in :func:`engine.budget.simulate_budget` (without calibration: this is what
        measures it).
    progress : Progress, optional
        Stepped per origin; cancelling raises ``Cancelled``.
    """
    levels = check_levels(levels)
    generator = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    months = _origin_months(history, origins)
    if not months:
        raise InputError(
            "the history has no whole month to make a past budget for.",
            hint="Import at least two calendar months of readings (a few years for a useful "
            "calibration).",
        )
    rows: list[dict[str, object]] = []
    skipped: list[dict[str, str]] = []
    for number, month in enumerate(months):
        step(progress, number / len(months), f"Past budget for {month}")
        first_day = pd.Period(month, freq="M").start_time.date()
        as_of = first_day - pd.Timedelta(days=1)
        try:
            plans = list(plan_factory(as_of))
            totals = simulate_paths(
                plans,
                [month],
                as_of,
                weather,
                paths=paths,
                block_days=block_days,
                error_days=error_days,
                rng=generator,
                correct_level=correct_level,
                progress=_past_month_progress(progress, number, months),
            )
        except InputError as error:
            skipped.append({"month": month, "message": error.message})
            continue
        window = BudgetWindow.of([month], plans[0].timezone)
        unknown = [plan.name for plan in plans if plan.name not in history]
        if unknown:
            raise InputError(
                f"the history has no readings for meter(s) {', '.join(unknown)}.",
                hint="Give the whole history of every meter the plans budget.",
            )
        spans = {
            "actual kWh": (window.start, window.end, 1.0),
            **baseline_windows(window.start, month, plans[0].timezone),
        }
        actuals = {
            plan.name: {
                column: factor * month_total(history[plan.name], start, end)
                for column, (start, end, factor) in spans.items()
            }
            for plan in plans
        }
        by_meter = {meter.plan.name: meter.months[:, 0] for meter in totals.meters}
        ready = {plan.name for plan in plans if settled(plan, as_of, error_days)}
        rows += _rows(month, plans, by_meter, actuals, levels, ready)
    step(progress, 1.0, "Past budgets made")
    columns = [
        "month",
        "kind",
        "name",
        *_MEASURED,
        "mean kWh",
        *(f"P{x}" for x in levels),
        "settled",
    ]
    return BudgetBacktest(
        pairs=pd.DataFrame(rows, columns=columns),
        skipped=pd.DataFrame(skipped, columns=["month", "message"]),
        levels=levels,
    )
