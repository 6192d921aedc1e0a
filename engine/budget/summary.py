"""Turn per-path totals into the budget's result: ranges per month, meter, utility and campus.

Every total is summed path by path first (days into months, months into the period, meters
into utilities and the campus) and only then summarised by its mean and quantiles, so a
period's or a roll-up's range is the range of the sum, not the sum of ranges.

A calibration's ``scale`` widens (or narrows) a meter's ranges around the mean of its paths:
each path's day ``x`` becomes ``mean + scale · (x − mean)``, never below the floor the
simulation keeps (zero, or the lowest reading of a meter that ran below it, in every interval
of the day), and the path's months and period are the sums of its widened days. The mean adds
up, so this is the same as widening each month or the period around its own mean: every
quantile moves to ``mean + scale · (quantile − mean)`` at every level of the sum (away from
the floor), and the gap between a period's P50 and the sum of its months' P50s is the gap
before widening times the scale. It is applied to the meter's paths before roll-ups, so the
corrected meters add up too.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from engine.budget.calibration import MAX_SCALE
from engine.budget.plan import MeterPlan
from engine.budget.result import (
    BudgetRun,
    Calibration,
    MeterBudget,
    PeriodTotal,
    PricedPart,
    RollUp,
    Spread,
)
from engine.budget.simulate import MeterPaths, PathTotals, month_starts
from engine.errors import InputError
from engine.words import counted

#: Wording every budget carries (see the product brief's cautions).
ESTIMATE_CAUTION = (
    "A budget forecast is an estimate: its range is the spread of simulated futures under the "
    "stated weather and model, and months can fall outside it."
)
COST_CAUTION = (
    "Costs apply the tariff to forecast energy; they do not replace the utility's bill or the "
    "tariff's legal text."
)
#: Carried by every budget, with or without demand charges: a forecast is not a design load.
PEAK_CAUTION = (
    "A forecast peak or month total is not a design load: service sizing, protection and plant "
    "capacity are decided by a licensed engineer under local codes. Forecast peaks serve the "
    "demand-charge budget only."
)
PARAMETER_NOTE = (
    "carried by the model errors, which come from the model refitted before each past month "
    "(so they include the error of estimating its parameters from the history then known); "
    "not simulated separately, and the calibration on past months corrects ranges that "
    "proved too narrow or too wide"
)


def check_levels(levels: Sequence[int]) -> tuple[int, ...]:
    """Whole-percent levels strictly between 0 and 100, sorted, including 50."""
    chosen = tuple(sorted({int(level) for level in levels}))
    if not chosen or chosen[0] < 1 or chosen[-1] > 99 or 50 not in chosen:
        raise InputError(
            f"the budget levels {list(levels)} cannot be used.",
            hint="Choose whole percentages from 1 to 99 that include 50, e.g. 10, 50, 90.",
        )
    return chosen


def roll_up_groups(plans: Sequence[MeterPlan]) -> list[tuple[str, str, list[str]]]:
    """``(kind, name, meter names)`` of a run's roll-ups: each utility, then the campus.

    The campus is every meter and is only formed from two meters on. A bill account that
    meters measure is left out: its meters count instead.
    """
    plans = [plan for plan in plans if plan.in_roll_ups]
    by_utility: dict[str, list[str]] = {}
    for plan in plans:
        by_utility.setdefault(plan.utility, []).append(plan.name)
    groups = [("utility", utility, names) for utility, names in by_utility.items()]
    if len(plans) > 1:
        groups.append(("campus", "campus", [plan.name for plan in plans]))
    return groups


def spreads(values: np.ndarray, levels: Sequence[int]) -> list[Spread]:
    """Mean and quantiles over paths (axis 0) of each column of ``values`` ``(paths, k)``."""
    quantiles = np.quantile(values, np.asarray(levels) / 100.0, axis=0)
    means = values.mean(axis=0)
    return [
        Spread(
            mean=float(means[column]),
            quantiles={
                str(level): float(q) for level, q in zip(levels, quantiles[:, column], strict=True)
            },
        )
        for column in range(values.shape[1])
    ]


def widen(values: np.ndarray, scale: float, floor: np.ndarray | None = None) -> np.ndarray:
    """``mean + scale · (values − mean)`` per column, the mean over paths (axis 0).

    Values widened below ``floor`` (one per column) are raised to it.
    """
    if scale == 1.0:
        return values
    middle = values.mean(axis=0)
    widened = middle + scale * (values - middle)
    return widened if floor is None else np.maximum(widened, floor)


def period_totals(
    labels: Sequence[str],
    months: np.ndarray,
    actual: np.ndarray,
    cost: np.ndarray | None,
    levels: Sequence[int],
) -> tuple[list[PeriodTotal], PeriodTotal]:
    """Month and whole-period totals of ``(paths, months)`` energy and cost."""
    energy = spreads(np.column_stack([months, months.sum(axis=1)]), levels)
    if cost is None:
        costs: list[Spread | None] = [None] * (len(labels) + 1)
    else:
        costs = list(spreads(np.column_stack([cost, cost.sum(axis=1)]), levels))
    rows = [
        PeriodTotal(label, float(done), spread, price)
        for label, done, spread, price in zip(labels, actual, energy[:-1], costs[:-1], strict=True)
    ]
    return rows, PeriodTotal("total", float(actual.sum()), energy[-1], costs[-1])


class _Adjusted:
    """A meter's per-path totals after its calibration: widened days, and their sums.

    A price per kWh prices the widened months; a tariff's monthly cost (not a sum of daily
    costs: demand charges) is widened around its own mean by the same scale.
    """

    def __init__(self, meter: MeterPaths, scale: float, month_starts: np.ndarray) -> None:
        self.meter = meter
        self.days = widen(meter.days, scale, meter.day_floor)
        self.months = (
            meter.months if scale == 1.0 else np.add.reduceat(self.days, month_starts, axis=1)
        )
        plan = meter.plan
        if meter.cost is None:
            self.cost = None
        elif plan.tariff is None and plan.rate is not None:
            self.cost = self.months * plan.rate
        else:
            self.cost = widen(meter.cost, scale)


def _daily_table(days: np.ndarray, index: pd.DatetimeIndex, levels: Sequence[int]) -> pd.DataFrame:
    quantiles = np.quantile(days, np.asarray(levels) / 100.0, axis=0)
    table = pd.DataFrame({"mean": days.mean(axis=0)}, index=index)
    for level, row in zip(levels, quantiles, strict=True):
        table[f"P{level}"] = row
    return table


def _roll_up(
    group: str, members: list[_Adjusted], labels: Sequence[str], levels: Sequence[int]
) -> RollUp:
    rows, total = _summed(members, labels, levels)
    names = [member.meter.plan.name for member in members]
    priced = [member for member in members if member.cost is not None]
    part = None
    if 0 < len(priced) < len(members):
        priced_rows, priced_total = _summed(priced, labels, levels)
        part = PricedPart(
            meters=[member.meter.plan.name for member in priced],
            left_out=[member.meter.plan.name for member in members if member.cost is None],
            months=priced_rows,
            total=priced_total,
        )
    return RollUp(group=group, meters=names, months=rows, total=total, priced_only=part)


def _summed(
    members: list[_Adjusted], labels: Sequence[str], levels: Sequence[int]
) -> tuple[list[PeriodTotal], PeriodTotal]:
    """Month and period totals of ``members`` summed path by path; cost only when every
    member is priced."""
    months = np.sum([member.months for member in members], axis=0)
    actual = np.sum([member.meter.actual_to_date for member in members], axis=0)
    priced = all(member.cost is not None for member in members)
    cost = np.sum([member.cost for member in members], axis=0) if priced else None
    return period_totals(labels, months, actual, cost, levels)


def _currency(meters: list[MeterPaths]) -> str | None:
    currencies = sorted(
        {m.plan.price_currency for m in meters if m.plan.price_currency is not None}
    )
    if len(currencies) > 1:
        raise InputError(
            f"the meters are priced in different currencies ({', '.join(currencies)}).",
            hint="Budget meters priced in one currency together.",
        )
    return currencies[0] if currencies else None


def _level_corrections(totals: PathTotals) -> dict[str, dict[str, str]]:
    """Per meter whether its forecast's level was corrected and by how much (none for bill
    accounts, which have no interval errors)."""
    said = {m.plan.name: m.level.sentence() for m in totals.meters if m.level is not None}
    return {"level_correction": said} if said else {}


def _assumptions(totals: PathTotals, calibration: Mapping[str, Calibration]) -> dict[str, object]:
    return {
        "as_of": totals.as_of.isoformat(),
        "history_ignored_from": totals.cut.isoformat(),
        "weather": totals.weather.description,
        "weather_scenarios": list(totals.weather.names),
        **({"weather_memory": totals.weather.memory} if totals.weather.memory else {}),
        "model_errors": {
            meter.plan.name: f"{meter.errors_source} of the {totals.settings['error_days']} "
            "days before the as-of date"
            + (
                f", less those of {counted(meter.first_encounter_days, 'day')} of calendar "
                "conditions the refit before them had never seen (a first closure or break, a "
                "first holiday in one), which later models have learned"
                if meter.first_encounter_days
                else ""
            )
            + (
                f"; each drawn day's errors scaled by the ratio of the budget day's forecast to "
                f"its own to the power {meter.error_growth:.2f}, as error size grew with the "
                "forecast on those days (log–log fit)"
                if meter.error_growth > 0
                else ""
            )
            for meter in totals.meters
        },
        "resampling": (
            "stationary bootstrap of whole local days (Politis & Romano 1994), mean block "
            f"{totals.block_days:.1f} days (from the errors' autocorrelation, Politis & White "
            f"2004, unless set), from {totals.pool_days} days that every meter shares; "
            "the same days and the same weather for every meter of a path"
        ),
        **_level_corrections(totals),
        "parameter_uncertainty": PARAMETER_NOTE,
        "calibration": {
            name: calibration[name].sentence() if name in calibration else "not checked"
            for name in (meter.plan.name for meter in totals.meters)
        },
        "roll_ups": "summed path by path over their meters",
        "campus_energy": "every utility's energy in kWh (thermal kWh for fuels), summed",
        "floor": "no path goes below the lowest reading the meter had (zero if never negative)",
    }


def _cautions(totals: PathTotals, calibration: Mapping[str, Calibration]) -> list[str]:
    cautions = [ESTIMATE_CAUTION]
    plans = [meter.plan for meter in totals.meters]
    if any(plan.tariff is not None or plan.rate is not None for plan in plans):
        cautions.append(COST_CAUTION)
    cautions.append(PEAK_CAUTION)
    unchecked = [plan.name for plan in plans if plan.name not in calibration]
    if unchecked:
        cautions.append(
            f"The ranges of {', '.join(unchecked)} have not been checked against past months."
        )
    unfit = [
        plan.name
        for plan in plans
        if plan.name in calibration and calibration[plan.name].scale >= MAX_SCALE
    ]
    if unfit:
        cautions.append(_unfit_caution(unfit, totals.weather.is_typical_year))
    return cautions


def _unfit_caution(names: list[str], typical_year: bool) -> str:
    """Why the ranges of ``names`` were widened no further, and what to do about it.

    Under typical weather every path has the same weather, so a range holds the model's error
    alone and a meter whose months follow the weather misses them by their weather; that is
    the assumption's doing before it is the model's.
    """
    meters = "this meter" if len(names) == 1 else "these meters"
    stopped = (
        f"The ranges of {', '.join(names)} missed past months so far that widening them was "
        f"stopped at {MAX_SCALE:g} times"
    )
    if typical_year:
        return (
            f"{stopped}. Under typical weather a range holds the model's error alone, and the "
            "weather moves these months more: budget with past years' weather (the default) "
            "for ranges that include its variation; if those miss as far, the model is not "
            f"fit for budgeting {meters}."
        )
    return (
        f"{stopped}: the model is not fit for budgeting {meters}. Review its data and model "
        "before relying on these figures."
    )


def summarise(
    totals: PathTotals,
    *,
    levels: Sequence[int] = (10, 50, 90),
    calibration: Mapping[str, Calibration] | None = None,
) -> BudgetRun:
    """The budget's result from simulated per-path totals, with calibrations applied."""
    levels = check_levels(levels)
    calibration = dict(calibration or {})
    labels = list(totals.window.months)
    starts = month_starts(totals.window)
    adjusted = [
        _Adjusted(
            meter,
            calibration[meter.plan.name].scale if meter.plan.name in calibration else 1.0,
            starts,
        )
        for meter in totals.meters
    ]
    currency = _currency(totals.meters)
    budgets = []
    for member in adjusted:
        plan = member.meter.plan
        rows, total = period_totals(
            labels, member.months, member.meter.actual_to_date, member.cost, levels
        )
        budgets.append(
            MeterBudget(
                name=plan.name,
                utility=plan.utility,
                model=plan.model.label,
                months=rows,
                total=total,
                daily=_daily_table(member.days, totals.window.days, levels),
                scores=dict(plan.scores),
                source=plan.source,
                metered_by=list(plan.metered_by),
            )
        )
    by_name = {member.meter.plan.name: member for member in adjusted}
    rolled = {
        (kind, name): _roll_up(name, [by_name[m] for m in members], labels, levels)
        for kind, name, members in roll_up_groups([m.plan for m in totals.meters])
    }
    utilities = [roll for (kind, _), roll in rolled.items() if kind == "utility"]
    campus = rolled.get(("campus", "campus"))
    tariffs = sorted({m.plan.tariff.name for m in totals.meters if m.plan.tariff is not None})
    return BudgetRun(
        start=labels[0],
        months=labels,
        as_of=totals.as_of.isoformat(),
        weather=totals.weather.description,
        levels=list(levels),
        paths=totals.paths,
        meters=budgets,
        utilities=utilities,
        campus=campus,
        calibration={
            name: calibration[name]
            for name in (m.plan.name for m in totals.meters)
            if name in calibration
        },
        currency=currency,
        tariff=", ".join(tariffs) if tariffs else None,
        assumptions=_assumptions(totals, calibration),
        cautions=_cautions(totals, calibration),
    )
