"""Adopt a budget: keep it in the project under a name with everything it assumed.

An adopted budget is the yardstick a fiscal year is tracked against (:mod:`engine.tracking.
track`), so it must not move when the data do: the document holds the budget's figures as
issued (the run's JSON: months, ranges, cost, calibration, assumptions, cautions), the request
(as-of date, months, weather assumption, levels, paths, seed), the rate card, the campus
calendar, and per meter the fitted model as JSON with its interval, whether it used the
outdoor temperature, its price, and per budget day the budget's mean and the model's
prediction under the assumed weather (the mean over the weather scenarios the budget drew);
per bill account (``accounts``) the same, with its forecast billing period on each day.
Later imports, cleaning and refits change other tables only.
"""

from __future__ import annotations

from typing import Any

import numpy as np

import engine
from engine.accounts.paths import expected_days, layout, scenario_temperature
from engine.accounts.plan import AccountPlan
from engine.budget import BudgetWindow, MeterPlan, as_of_cut
from engine.budget.meter_grid import MeterGrid, native_interval, predictions, simulation_step
from engine.budget.result import BudgetRun
from engine.budget.weather_paths import WeatherScenarios, weather_scenarios
from engine.errors import InputError, ProjectError
from engine.project import Project
from engine.project.adopted_table import name_taken
from engine.steps.budgeting import BudgetRequest, ProjectBudget

#: Longest name an adopted budget may have (it names a workbook sheet's title and a file).
MAX_NAME = 80


def check_name(project: Project, name: str, *, replace: bool) -> str:
    """The name stripped, refused when empty, too long or taken (unless ``replace``).

    Called before the budget runs, so a refused name costs no work and stores nothing.
    """
    cleaned = name.strip()
    if not cleaned or len(cleaned) > MAX_NAME:
        raise InputError(
            f"'{name}' cannot name an adopted budget.",
            hint=f"Give a name of 1 to {MAX_NAME} characters, e.g. FY2026.",
            file=project.path,
        )
    if not replace and project.adopted_budget(cleaned) is not None:
        raise name_taken(cleaned, project.path)
    return cleaned


def adopt_budget(
    project: Project,
    name: str,
    outcome: ProjectBudget,
    request: BudgetRequest,
    *,
    replace: bool = False,
) -> dict:
    """Store ``outcome`` as the budget adopted under ``name``; return the stored document."""
    name = check_name(project, name, replace=replace)
    body = adopted_document(outcome, request, project.timezone)
    project.adopt_budget(name, body, replace=replace)
    return body


def adopted_as_issued(project: Project, name: str) -> ProjectBudget:
    """The budget adopted as ``name``, as it was issued, to show and write again.

    The figures, calibration, assumptions and cautions are the adopted ones; an adopted
    budget keeps no daily figures, data quality or scores, so the workbook says so on those
    sheets.
    """
    found = project.adopted_budget(name)
    if found is None:
        raise InputError(
            f"no budget is adopted as '{name}' in {project.path.name}.",
            hint="Adopt one with budget --adopt NAME, or choose an adopted name.",
            file=project.path,
        )
    try:
        run = BudgetRun.from_json(found["body"]["run"])
    except (KeyError, TypeError, ValueError) as error:
        raise ProjectError(
            f"the budget adopted as '{name}' in {project.path.name} cannot be read ({error!r})."
        ) from error
    return ProjectBudget(run=run, quality={}, steps=[], scorecards={}, data_range={})


def adopted_document(outcome: ProjectBudget, request: BudgetRequest, timezone: str) -> dict:
    """The JSON document an adopted budget is kept as (see the module notes)."""
    run = outcome.run
    window = BudgetWindow.of(run.months, timezone)
    scenarios = _assumed_scenarios(outcome, request, window)
    return {
        "engine_version": engine.__version__,
        "timezone": timezone,
        "request": {
            "months": list(run.months),
            "as_of": request.as_of.isoformat(),
            "weather": request.weather,
            "weather_kind": outcome.weather.kind if outcome.weather else "none",
            "levels": list(request.levels),
            "paths": request.paths,
            "calibration_origins": request.calibration_origins,
            "currency": request.currency,
            "rng": request.rng,
        },
        "tariff": request.tariff.to_dict() if request.tariff is not None else None,
        "calendar": outcome.calendar.to_dict() if outcome.calendar is not None else None,
        "assumed_weather": {"description": run.weather, "scenarios": scenarios.count},
        "run": run.to_json(),
        "meters": {
            plan.name: _meter_document(plan, outcome, window, scenarios) for plan in outcome.plans
        },
        "accounts": {
            plan.name: _account_document(plan, outcome, window, scenarios, request)
            for plan in outcome.accounts
        },
    }


def _assumed_scenarios(
    outcome: ProjectBudget, request: BudgetRequest, window: BudgetWindow
) -> WeatherScenarios:
    """The weather scenarios the budget's simulation drew (same assumption, cut and seed:
    the simulation draws them first from its generator)."""
    if outcome.weather is None:
        return WeatherScenarios(("calendar only",), None, "no weather")
    cut = as_of_cut(request.as_of, window.timezone)
    return weather_scenarios(outcome.weather, window, cut, rng=request.rng, paths=request.paths)


def _meter_document(
    plan: MeterPlan, outcome: ProjectBudget, window: BudgetWindow, scenarios: WeatherScenarios
) -> dict[str, Any]:
    budget = next(meter for meter in outcome.run.meters if meter.name == plan.name)
    grid = MeterGrid.on(window, simulation_step(plan))
    predicted = predictions(plan, grid, window, scenarios)
    assumed = np.add.reduceat(predicted, grid.day_starts, axis=1).mean(axis=0)
    daily_mean = budget.daily["mean"].reindex(window.days).to_numpy(dtype=np.float64)
    return {
        "utility": plan.utility,
        "model": plan.model.to_dict(),
        "model_label": plan.model.label,
        "interval_seconds": int(native_interval(plan.history).total_seconds()),
        "uses_temperature": plan.uses_temperature,
        "rate": plan.rate,
        "currency": plan.price_currency,
        "priced_by": "tariff" if plan.tariff else ("bills" if plan.rate is not None else None),
        "days": [f"{day:%Y-%m-%d}" for day in window.days],
        "daily_mean_kwh": _plain(daily_mean),
        "assumed_weather_kwh": _plain(assumed),
    }


def _account_document(
    plan: AccountPlan,
    outcome: ProjectBudget,
    window: BudgetWindow,
    scenarios: WeatherScenarios,
    request: BudgetRequest,
) -> dict[str, Any]:
    """A bill account's part: its model, price, forecast billing periods, and per budget day
    the budget's mean and the model under the assumed weather (known bills' own energy on the
    days they covered)."""
    budget = next(meter for meter in outcome.run.meters if meter.name == plan.name)
    where = layout(plan, window.days)
    assumed = np.nan_to_num(where.known)
    period = np.full(len(window.days), -1)
    if where.forecast.size:
        temperature = scenario_temperature(plan, window, scenarios, request.as_of)
        assumed[where.forecast] = expected_days(plan, where, window, temperature).mean(axis=0)
        period[where.forecast] = where.period
    daily_mean = budget.daily["mean"].reindex(window.days).to_numpy(dtype=np.float64)
    return {
        "source": "bills",
        "account": plan.account or plan.name,
        "utility": plan.utility,
        "model": plan.model.to_dict(),
        "model_label": plan.model.label,
        "uses_temperature": plan.model.uses_temperature,
        "rate": plan.rate,
        "currency": plan.price_currency,
        "priced_by": "bills" if plan.rate is not None else None,
        "days": [f"{day:%Y-%m-%d}" for day in window.days],
        "forecast_period": [int(p) for p in period],
        "daily_mean_kwh": _plain(daily_mean),
        "assumed_weather_kwh": _plain(assumed),
    }


def _plain(values: np.ndarray) -> list[float | None]:
    """Floats for JSON, None where not finite."""
    return [float(v) if np.isfinite(v) else None for v in values]
