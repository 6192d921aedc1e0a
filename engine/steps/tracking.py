"""Track an adopted budget against the readings now in the project, month by month.

Per meter, per utility and for the campus, each budget month gets the budget as adopted
(mean and P-levels), the actual (complete months; the month under way to date, marked
incomplete; nothing for months not begun), and the variance split:

    variance = actual − budget P50
             = weather effect + usage effect
    weather effect = adopted model under the weather that happened
                     − adopted model under the assumed weather
                     (zero on days up to the budget's own as-of date: it knew them)
    usage effect   = variance − weather effect
                   = (actual − adopted model under the weather that happened)
                     + (adopted model under the assumed weather − budget P50)

The last bracket is the gap between the model's forecast and the budget's simulated P50 (the
mean of the model's past errors in that season, the calibration, the floor); it stays with
usage, which cancels a model's seasonal bias, and the two parts add up to the variance
exactly. With a spread-of-years weather assumption the model under the
assumed weather is the mean over the weather scenarios the budget drew. For the month under
way the budget P50 is taken to date: its share of the month in the budget's own daily means.

Cost, where the budget priced the meter, with ``p`` = budget cost P50 ÷ budget energy P50
(the month's budgeted price per kWh):

    cost variance = actual cost − budget cost P50
                  = weather effect · p + usage effect · p + price effect
    price effect  = actual cost − actual kWh · p

Roll-ups (utilities, campus) sum their meters' actuals, model predictions and cost effects;
their budget figures are the adopted roll-ups' own (a range of a sum, not a sum of ranges),
so their usage effect is again the rest of their variance.

The year-end outlook is a fresh budget of the same months from the tracking as-of date (the
same simulation and calibration as any budget, :func:`engine.steps.budgeting.budget_project`):
the actuals to date plus the forecast of the rest, beside the adopted total.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from datetime import date
from typing import Any

import numpy as np
import pandas as pd

from engine.accounts.budget import daily_means
from engine.budget import BudgetRun, BudgetWindow, as_of_cut
from engine.budget.summary import PEAK_CAUTION
from engine.budget.weather_paths import WeatherScenarios
from engine.calendar import CampusCalendar
from engine.defaults import WEATHER_CHOICES
from engine.errors import InputError
from engine.progress import Progress, step
from engine.project import Project
from engine.ready_meters import PreparedSite, ReadyMeter
from engine.steps.bill_prices import BillPrice, bill_prices
from engine.steps.budgeting import (
    BudgetRequest,
    budget_project,
    last_reading_day,
)
from engine.steps.prepared_site import prepare_site
from engine.tariffs import Tariff, tariff_from_dict
from engine.tracking.actuals import (
    daily_actuals,
    expected_readings,
    happened_prediction,
    happened_weather,
    tariff_cost,
)
from engine.tracking.bill_actuals import BilledDays, billed_days

COMPLETE, UNDER_WAY, NOT_BEGUN = "complete", "under way", "not begun"
IDENTITY = (
    "variance_kwh = weather_kwh + usage_kwh; variance_cost = weather_cost + usage_cost + "
    "price_cost (variance = actual − budget P50; for the month under way, the P50 to date)"
)

__all__ = ["COMPLETE", "IDENTITY", "NOT_BEGUN", "UNDER_WAY", "track_budget"]


@dataclass(frozen=True)
class _Days:
    """Per local day of the budget window, kWh: the budget's mean, the adopted model under
    the assumed weather and under the weather that happened (None when unknown), actual."""

    mean: np.ndarray
    assumed: np.ndarray
    happened: np.ndarray | None
    actual: np.ndarray

    def __add__(self, other: _Days) -> _Days:
        happened = (
            None
            if self.happened is None or other.happened is None
            else self.happened + other.happened
        )
        return _Days(
            self.mean + other.mean,
            self.assumed + other.assumed,
            happened,
            self.actual + other.actual,
        )


def month_status(window: BudgetWindow, as_of: date) -> tuple[list[str], np.ndarray]:
    """Each month's status on ``as_of``, and which of the window's days are counted."""
    counted = window.days <= pd.Timestamp(as_of)
    month = window.month_of_day()
    status = []
    for number in range(len(window.months)):
        inside = counted[month == number]
        status.append(COMPLETE if inside.all() else UNDER_WAY if inside.any() else NOT_BEGUN)
    return status, np.asarray(counted)


@dataclass(frozen=True)
class _Scene:
    """What every meter's tracking shares: the window, the as-of cut and month states, the
    adopted calendar, rate card and levels, the weather that happened, the bills' prices."""

    window: BudgetWindow
    cut: pd.Timestamp
    status: list[str]
    counted: np.ndarray
    known: np.ndarray  # days the budget already knew the actuals of (up to its as-of date)
    calendar: CampusCalendar
    weather: WeatherScenarios | None
    tariff: Tariff | None
    prices: dict[str, BillPrice]
    levels: list[str]


def track_budget(
    project: Project,
    name: str,
    *,
    as_of: date | None = None,
    workers: int | None = None,
    scheduler: str | None = None,
    progress: Progress | None = None,
) -> dict[str, Any]:
    """The tracking report of the budget adopted as ``name`` (JSON-ready; see the module).

    ``as_of`` defaults to the last day with a reading. Nothing is stored by tracking itself;
    the outlook's fresh budget keeps its meters' modelling as any budget does.
    """
    stored = _adopted(project, name)
    doc = stored["body"]
    request, run = doc["request"], doc["run"]
    window = BudgetWindow.of(request["months"], doc["timezone"])
    as_of = as_of if as_of is not None else last_reading_day(project)
    if as_of < window.first_day:
        raise InputError(
            f"the as-of date {as_of} comes before the budget '{name}' begins ({window.first_day}).",
            hint=f"Track it as of {window.first_day} or later.",
            file=project.path,
        )
    names, cautions = _meters_present(project, name, run)
    step(progress, 0.0, "reading the actuals")
    site = prepare_site(project, names)
    status, counted = month_status(window, as_of)
    cut = as_of_cut(as_of, window.timezone)
    scene = _Scene(
        window,
        cut,
        status,
        counted,
        np.asarray(window.days <= pd.Timestamp(request["as_of"])),
        CampusCalendar.from_dict(doc["calendar"] or {}),
        happened_weather(site.hourly_before(cut), window),
        tariff_from_dict(doc["tariff"]) if doc["tariff"] else None,
        bill_prices(project),
        [str(level) for level in run["levels"]],
    )
    meters, days_of, records_of = [], {}, {}
    for budget in (meter for meter in run["meters"] if meter["name"] in names):
        report, days, meter_cautions = _track_meter(
            budget, doc["meters"][budget["name"]], site.meter(budget["name"]), scene
        )
        meters.append(report)
        days_of[budget["name"]], records_of[budget["name"]] = days, report["months"]
        cautions += meter_cautions
    covered_of = {}
    for budget in (m for m in run["meters"] if m["name"] in doc.get("accounts", {})):
        tracked = _track_account(project, budget, doc["accounts"][budget["name"]], site, scene)
        if tracked is None:
            cautions.append(
                f"The bills of account '{budget['name']}' are no longer in the project; it is "
                "left out of the tracking."
            )
            continue
        report, days, covered, account_cautions = tracked
        meters.append(report)
        days_of[budget["name"]], records_of[budget["name"]] = days, report["months"]
        covered_of[budget["name"]] = covered
        cautions += account_cautions
    cautions += _weather_gap_cautions(meters)
    groups = _roll_ups(run, days_of, records_of, scene, covered_of)
    over = all(state == COMPLETE for state in status) and all(
        record["complete"] for report in meters for record in report["months"]
    )
    outlook, outlook_cautions = _outlook(
        project, doc, name, as_of, names, over, workers, scheduler, progress
    )
    _attach_outlook(meters, groups, outlook, run, over)
    step(progress, 1.0, "tracking ready")
    return {
        "budget": name,
        "adopted_at": stored["adopted_at"],
        "adopted_as_of": request["as_of"],
        "as_of": as_of.isoformat(),
        "months": list(request["months"]),
        "status": dict(zip(request["months"], status, strict=True)),
        "levels": run["levels"],
        "currency": run["currency"],
        "weather": run["weather"],
        "meters": meters,
        "utilities": [groups[g["group"]] for g in run["utilities"] if g["group"] in groups],
        "campus": groups.get("campus"),
        "identity": IDENTITY,
        "assumptions": _assumptions(doc),
        "cautions": _unique([*cautions, *outlook_cautions]),
    }


def _meters_present(project: Project, name: str, run: dict) -> tuple[list[str], list[str]]:
    """The adopted budget's meters still in the project, and the tracking's first cautions."""
    present = set(project.meter_names())
    metered = [meter for meter in run["meters"] if meter.get("source", "readings") == "readings"]
    names = [meter["name"] for meter in metered if meter["name"] in present]
    if not names and len(metered) == len(run["meters"]):
        raise InputError(
            f"none of the meters of the budget '{name}' is in the project any more.",
            hint="Import the meters again, or adopt a new budget.",
            file=project.path,
        )
    gone = [
        f"Meter '{meter['name']}' of the adopted budget is no longer in the project; it is "
        "left out of the tracking."
        for meter in metered
        if meter["name"] not in present
    ]
    return names, [PEAK_CAUTION, *gone]


def _track_meter(
    budget: dict, adopted: dict, ready: ReadyMeter, scene: _Scene
) -> tuple[dict, _Days, list[str]]:
    """One meter's tracking report, its days (for the roll-ups) and its cautions."""
    name, window, counted = budget["name"], scene.window, scene.counted
    readings = daily_actuals(ready.raw, window, scene.cut)
    expected = expected_readings(window, ready.raw.interval)
    cautions = _reading_cautions(name, readings, expected, scene.status, window)
    happened = happened_prediction(ready, adopted, scene.calendar, window, scene.weather)
    assumed = np.asarray(adopted["assumed_weather_kwh"], dtype=np.float64)
    if happened is None:
        cautions.append(
            f"The weather effect of meter '{name}' is unknown: its adopted model uses the "
            "outdoor temperature and the project has no weather for the months."
        )
    elif _blind(happened[counted], assumed[counted]):
        happened = assumed.copy()  # the same forecast, whatever the weather: no effect
        cautions.append(
            f"The adopted model of meter '{name}' ({budget['model']}) does not respond to the "
            "outdoor temperature: its weather effect is zero and the whole variance shows as "
            "usage."
        )
    if happened is not None:  # days the budget knew: their actual weather was no surprise
        happened = np.where(scene.known, assumed, happened)
    days = _Days(
        np.nan_to_num(np.asarray(adopted["daily_mean_kwh"], dtype=np.float64)),
        assumed,
        happened,
        readings["kwh"].to_numpy(dtype=np.float64),
    )
    costs = _actual_costs(ready, adopted, scene, days, cautions)
    records = _months(budget["months"], scene, days, costs)
    return _group_report(budget, records, "name"), days, cautions


def _roll_ups(
    run: dict,
    days_of: dict[str, _Days],
    records_of: dict[str, list[dict]],
    scene: _Scene,
    covered_of: dict[str, np.ndarray],
) -> dict[str, dict]:
    """Each utility's and the campus's tracking, from their meters' days and cost effects.

    A roll-up with bill accounts counts only the days every account's bills cover."""
    groups = {}
    for group in [*run["utilities"], *([run["campus"]] if run["campus"] else [])]:
        members = [member for member in group["meters"] if member in days_of]
        if not members:
            continue
        days = sum((days_of[m] for m in members[1:]), days_of[members[0]])
        counted = scene.counted.copy()
        for member in members:
            counted &= covered_of.get(member, counted)
        records = _months(group["months"], _counting(scene, counted), days, None)
        _roll_up_costs(records, [records_of[m] for m in members])
        groups[group["group"]] = _group_report(group, records, "group")
    return groups


def _counting(scene: _Scene, counted: np.ndarray) -> _Scene:
    """The scene with only ``counted`` days known: a month is complete when all of its days
    are, under way when some are."""
    if np.array_equal(counted, scene.counted):
        return scene
    month = scene.window.month_of_day()
    status = []
    for number in range(len(scene.window.months)):
        inside = counted[month == number]
        status.append(COMPLETE if inside.all() else UNDER_WAY if inside.any() else NOT_BEGUN)
    return replace(scene, counted=counted, status=status)


def _track_account(
    project: Project, budget: dict, adopted: dict, site: PreparedSite, scene: _Scene
) -> tuple[dict, _Days, np.ndarray, list[str]] | None:
    """A bill account's tracking: its report, days, the days its bills cover, its cautions
    (None when its bills are gone from the project)."""
    name = budget["name"]
    try:
        bills = project.load_bills(adopted["account"])
    except KeyError:
        return None
    window = scene.window
    as_of = pd.Timestamp(scene.cut.tz_convert(window.timezone).date()) - pd.Timedelta(days=1)
    temperature = daily_means(site.hourly_before(scene.cut), window.timezone)
    billed = billed_days(adopted, bills, temperature, window, as_of)
    covered = billed.covered & scene.counted
    account_scene = _counting(scene, covered)
    assumed = np.asarray(adopted["assumed_weather_kwh"], dtype=np.float64)
    cautions = []
    if billed.happened is None:
        cautions.append(
            f"The weather effect of account '{name}' is unknown: its adopted model uses the "
            "outdoor temperature and the project has no weather for the months."
        )
    elif not adopted["uses_temperature"]:
        cautions.append(
            f"The adopted model of account '{name}' ({budget['model']}) does not respond to "
            "the outdoor temperature: its weather effect is zero and the variance shows as usage."
        )
    happened = None if billed.happened is None else np.where(scene.known, assumed, billed.happened)
    late = [m for m, s, a in zip(window.months, account_scene.status, scene.status, strict=True)
            if s != a]  # fmt: skip
    if late:
        cautions.append(
            f"Account '{name}' has no bill yet for every day of {', '.join(late)}: those months "
            "are compared to date, up to its newest bill."
        )
    days = _Days(
        np.nan_to_num(np.asarray(adopted["daily_mean_kwh"], dtype=np.float64)),
        assumed,
        happened,
        np.where(covered, billed.kwh, 0.0),
    )
    costs = _bill_costs(adopted, billed, account_scene, days)
    records = _months(budget["months"], account_scene, days, costs)
    return _group_report(budget, records, "name"), days, covered, cautions


def _bill_costs(
    adopted: dict, billed: BilledDays, scene: _Scene, days: _Days
) -> list[float | None]:
    """Each complete month's cost from the bills' own charges (their share of each bill), or
    its kWh at the adopted price where a bill shows no cost."""
    month_of_day = scene.window.month_of_day()
    out: list[float | None] = []
    for number, state in enumerate(scene.status):
        inside = month_of_day == number
        if state != COMPLETE or adopted["priced_by"] is None:
            out.append(None)
        elif np.isfinite(billed.cost[inside]).all():
            out.append(float(billed.cost[inside].sum()))
        else:
            out.append(float(days.actual[inside].sum()) * adopted["rate"])
    return out


def _blind(happened: np.ndarray, assumed: np.ndarray) -> bool:
    """Whether the model predicted the same under both weathers (to rounding): a model that
    does not respond to the outdoor temperature."""
    return bool(np.allclose(happened, assumed, rtol=1e-9, atol=1e-9, equal_nan=True))


def _adopted(project: Project, name: str) -> dict:
    stored = project.adopted_budget(name)
    if stored is None:
        names = project.adopted_budget_names()
        raise InputError(
            f"no budget is adopted as '{name}'.",
            hint=(
                f"Adopted budgets: {', '.join(names)}."
                if names
                else "Adopt one first: loadledger budget PROJECT ... --adopt NAME."
            ),
            file=project.path,
        )
    return stored


def _months(
    adopted: list[dict], scene: _Scene, days: _Days, actual_costs: list[float | None] | None
) -> list[dict]:
    """One record per budget month (energy split; cost split where ``actual_costs``)."""
    month_of_day = scene.window.month_of_day()
    records = []
    for number, month in enumerate(adopted):
        inside = month_of_day == number
        record = _energy_record(
            month, scene.status[number], inside, inside & scene.counted, days, scene.levels
        )
        if "cost" in month:
            cost = actual_costs[number] if actual_costs is not None else None
            record.update(_cost_record(month, record, cost))
        records.append(record)
    return records


def _energy_record(
    month: dict, status: str, inside: np.ndarray, counted: np.ndarray, days: _Days, levels
) -> dict:
    quantiles = month["quantiles"]
    record: dict[str, Any] = {
        "month": month["month"],
        "budget": {"mean": month["mean"], "quantiles": dict(quantiles)},
        "status": status,
        "complete": status == COMPLETE,
        "actual": None,
        "budget_to_date": None,
        "variance_kwh": None,
        "weather_kwh": None,
        "usage_kwh": None,
        "outside_range": None,
        "model_kwh": None,
    }
    if status == NOT_BEGUN:
        return record
    share = 1.0
    if status == UNDER_WAY:
        whole = days.mean[inside].sum()
        share = float(days.mean[counted].sum() / whole) if whole > 0 else 0.0
    baseline = quantiles["50"] * share
    actual = float(days.actual[counted].sum())
    assumed = float(days.assumed[counted].sum())
    happened = None
    if days.happened is not None and np.isfinite(days.happened[counted]).all():
        happened = float(days.happened[counted].sum())
    weather = None if happened is None or not np.isfinite(assumed) else happened - assumed
    variance = actual - baseline
    record.update(
        actual=actual,
        budget_to_date=baseline,
        variance_kwh=variance,
        weather_kwh=weather,
        usage_kwh=None if weather is None else variance - weather,
        model_kwh={"assumed_weather": _finite(assumed), "weather_that_happened": happened},
    )
    if status == COMPLETE:
        low, high = quantiles[levels[0]], quantiles[levels[-1]]
        record["outside_range"] = bool(actual < low or actual > high)
    return record


def _cost_record(month: dict, record: dict, actual_cost: float | None) -> dict:
    """Cost fields of a month: the budget's cost, and for a complete month with a known
    actual cost the variance split into weather, usage and price effects."""
    fields: dict[str, Any] = {
        "budget_cost": dict(month["cost"]),
        "actual_cost": None,
        "variance_cost": None,
        "weather_cost": None,
        "usage_cost": None,
        "price_cost": None,
        "budget_price_per_kwh": None,
    }
    energy_p50 = month["quantiles"]["50"]
    if not record["complete"] or actual_cost is None or energy_p50 <= 0:
        return fields
    cost_p50 = month["cost"]["quantiles"]["50"]
    price = cost_p50 / energy_p50
    variance = actual_cost - cost_p50
    price_effect = actual_cost - record["actual"] * price
    weather = None if record["weather_kwh"] is None else record["weather_kwh"] * price
    fields.update(
        actual_cost=actual_cost,
        variance_cost=variance,
        weather_cost=weather,
        usage_cost=None if weather is None else variance - weather - price_effect,
        price_cost=price_effect,
        budget_price_per_kwh=price,
    )
    return fields


def _roll_up_costs(records: list[dict], members: list[list[dict]]) -> None:
    """A roll-up's cost split: its meters' actual cost, weather and price effects summed,
    usage the rest of its own variance."""
    for number, record in enumerate(records):
        if "budget_cost" not in record or not record["complete"]:
            continue
        parts = [member[number] for member in members]
        if any(part.get("actual_cost") is None for part in parts):
            continue
        actual = sum(part["actual_cost"] for part in parts)
        cost_p50 = record["budget_cost"]["quantiles"]["50"]
        price_effect = sum(part["price_cost"] for part in parts)
        known = all(part["weather_cost"] is not None for part in parts)
        weather = sum(part["weather_cost"] for part in parts) if known else None
        variance = actual - cost_p50
        energy_p50 = record["budget"]["quantiles"]["50"]
        record.update(
            budget_price_per_kwh=cost_p50 / energy_p50 if energy_p50 > 0 else None,
            actual_cost=actual,
            variance_cost=variance,
            weather_cost=weather,
            usage_cost=None if weather is None else variance - weather - price_effect,
            price_cost=price_effect,
        )


def _actual_costs(
    ready: ReadyMeter, adopted: dict, scene: _Scene, days: _Days, cautions: list[str]
) -> list[float | None]:
    """What each complete month's metered energy cost: the adopted rate card on the readings,
    or the price per kWh the project's bills now give (the adopted one without bills). A
    complete month the rate card cannot price gets None and a caution saying why."""
    month_of_day = scene.window.month_of_day()
    out: list[float | None] = []
    for number, state in enumerate(scene.status):
        if state != COMPLETE or adopted["priced_by"] is None:
            out.append(None)
        elif adopted["priced_by"] == "tariff" and scene.tariff is not None:
            priced = tariff_cost(ready.raw, scene.window, number, scene.tariff)
            if isinstance(priced, InputError):
                cautions.append(
                    f"The actual cost of meter '{ready.name}' in {scene.window.months[number]} "
                    f"is unknown, so its cost variance is left blank: {priced.message}"
                )
                priced = None
            out.append(priced)
        else:
            current = scene.prices.get(ready.utility)
            rate = current.rate if current is not None else adopted["rate"]
            out.append(float(days.actual[month_of_day == number].sum()) * rate)
    return out


def _group_report(group: dict, records: list[dict], key: str) -> dict:
    out = {key: group[key], "unit": group.get("unit", "kWh")}
    if key == "name":
        out.update(
            utility=group["utility"],
            model=group["model"],
            source=group.get("source", "readings"),
        )
    else:
        out["meters"] = list(group["meters"])
    out["months"] = records
    total = group["total"]
    out["adopted_total"] = {"mean": total["mean"], "quantiles": dict(total["quantiles"])}
    if "cost" in total:
        out["adopted_total"]["cost"] = dict(total["cost"])
    return out


def _outlook(
    project: Project,
    doc: dict,
    name: str,
    as_of: date,
    names: list[str],
    over: bool,
    workers: int | None,
    scheduler: str | None,
    progress: Progress | None,
) -> tuple[BudgetRun | None, list[str]]:
    """A fresh budget of the adopted months from ``as_of`` (None once every month is over:
    complete, and every account billed for all its days)."""
    if over:
        return None, []
    request = doc["request"]
    weather = request["weather"]
    cautions = []
    if weather not in WEATHER_CHOICES:
        cautions.append(
            f"The budget '{name}' assumed the temperatures of a file; its year-end outlook "
            "assumes past years' weather instead (the file is not kept in the project)."
        )
        weather = "past-years"
    fresh = BudgetRequest(
        months=list(request["months"]),
        as_of=as_of,
        weather=weather,
        levels=tuple(request["levels"]),
        paths=request["paths"],
        calibration_origins=request["calibration_origins"],
        tariff=tariff_from_dict(doc["tariff"]) if doc["tariff"] else None,
        currency=request["currency"],
        rng=request["rng"],
    )
    part = progress.part(0.1, 1.0) if progress is not None else None
    try:
        run = budget_project(
            project, fresh, meters=names, workers=workers, scheduler=scheduler, progress=part,
            with_accounts=True,
        ).run  # fmt: skip
    except InputError as error:  # the tracking stands without it; say why it is missing
        return None, [*cautions, f"The year-end outlook could not be made: {error.message}"]
    return run, cautions + run.cautions


def _attach_outlook(
    meters: list[dict],
    groups: dict[str, dict],
    outlook: BudgetRun | None,
    adopted: dict,
    over: bool,
) -> None:
    """Each meter's and roll-up's year-end outlook: the fresh budget's period total (actuals
    to date plus the forecast of the rest), the actual total once every month is ``over``,
    else None (the outlook could not be made)."""
    fresh: dict[str, Any] = {}
    if outlook is not None:
        fresh = {m.name: m for m in outlook.meters} | {u.group: u for u in outlook.utilities}
        if outlook.campus is not None:
            fresh["campus"] = outlook.campus
    for report in [*meters, *groups.values()]:
        key = report.get("name") or report.get("group")
        found = fresh.get(key)
        if found is not None:
            total = found.total
            report["outlook"] = {
                "mean": total.energy.mean,
                "quantiles": dict(total.energy.quantiles),
                "actual_to_date": total.actual_to_date,
            }
            if total.cost is not None:
                report["outlook"]["cost"] = total.cost.to_json()
            report["outlook_months"] = [
                {"month": m.period, "mean": m.energy.mean, "quantiles": dict(m.energy.quantiles)}
                for m in found.months
            ]
        elif over:
            actual = sum(record["actual"] for record in report["months"])
            levels = adopted["levels"]
            report["outlook"] = {
                "mean": actual,
                "quantiles": {str(level): actual for level in levels},
                "actual_to_date": actual,
            }
            costs = [record.get("actual_cost") for record in report["months"]]
            if costs and all(cost is not None for cost in costs):
                spent = float(sum(costs))
                report["outlook"]["cost"] = {
                    "mean": spent,
                    "quantiles": {str(level): spent for level in levels},
                }
        else:
            report["outlook"] = None


def _reading_cautions(
    name: str,
    readings: pd.DataFrame,
    expected: pd.Series,
    status: list[str],
    window: BudgetWindow,
) -> list[str]:
    """A caution per counted month whose readings are short of its intervals.

    Only days short of their intervals count: a day holding more readings than intervals
    (a repeated stamp) does not make up for another day's gap.
    """
    month_of_day = window.month_of_day()
    shortfall = np.clip(expected.to_numpy() - readings["readings"].to_numpy(), 0, None)
    cautions = []
    for number, state in enumerate(status):
        missing = int(shortfall[month_of_day == number].sum())
        if state == COMPLETE and missing > 0:
            cautions.append(
                f"Meter '{name}' misses {missing} reading(s) in {window.months[number]}: its "
                "actual there is the sum of the readings it has, so it is low by what the "
                "missing intervals held."
            )
    return cautions


def _weather_gap_cautions(meters: list[dict]) -> list[str]:
    gaps = sorted(
        {
            record["month"]
            for meter in meters
            for record in meter["months"]
            if record["status"] != NOT_BEGUN
            and record["weather_kwh"] is None
            and record["model_kwh"] is not None
        }
    )
    if not gaps:
        return []
    return [
        f"The weather that happened has hours missing in {', '.join(gaps)}: the weather and "
        "usage effects are left out there; the variance still stands."
    ]


def _assumptions(doc: dict) -> dict[str, Any]:
    scenarios = doc["assumed_weather"]["scenarios"]
    assumed = (
        f"the mean over the {scenarios} weather scenarios the budget drew"
        if scenarios > 1
        else "the budget's single weather scenario"
    )
    return {
        "actual": "the meter's readings as imported, summed by local calendar month (cleaning "
        "fixes are for modelling); the month under way up to the as-of date",
        "weather effect": "the adopted model's prediction under the weather that happened "
        f"minus its prediction under the assumed weather ({assumed})",
        "usage effect": "the rest of the variance: actual minus the adopted model under the "
        "weather that happened, plus the gap between that model's forecast under the assumed "
        "weather and the budget's P50",
        "price effect": "actual cost minus actual kWh at the month's budgeted price per kWh "
        "(budget cost P50 / budget energy P50): prices that changed, and the charges that do "
        "not follow the kWh (fixed and demand charges, time-of-use mix)",
        "month under way": "compared with the budget P50 to date: its share of the month in "
        "the budget's daily means; no range check until the month is complete",
        "outlook": "a fresh budget of the same months from the as-of date (actuals to date "
        "plus the forecast of the rest, same simulation and calibration as budgets)",
        "actual cost": "the adopted rate card applied to the readings; meters priced from bills "
        "at the price per kWh the project's bills now give",
        "bill accounts": "an account's actual is its bills that ended by the as-of date, each "
        "shared among its days by the adopted model under the weather that happened (base by "
        "days, heating and cooling by degree-days), and its actual cost those bills' own "
        "charges shared the same way; a month is complete for it when bills cover all its "
        "days, else compared to date; roll-ups with accounts count only the days their bills "
        "cover",
    }


def _finite(value: float) -> float | None:
    """The value, or None where it is not a number (JSON has no NaN)."""
    return value if np.isfinite(value) else None


def _unique(items: list[str]) -> list[str]:
    return list(dict.fromkeys(items))
