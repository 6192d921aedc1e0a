"""Budgets for the meters of a project: plans from the stored models, a calibration from
rolling month-ahead budgets, the simulated run, and everything the finance workbook needs.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date

import pandas as pd

from engine.backtest import run_backtest
from engine.budget import (
    BudgetRun,
    MeterPlan,
    WeatherAssumption,
    as_of_cut,
    backtest_budget,
    backtest_residuals,
    simulate_budget,
)
from engine.calendar import CampusCalendar
from engine.cleaning.project_log import cleaned_meter, stored_calendar
from engine.errors import InputError
from engine.modelling import chosen_model, fit_meter, fresh, hourly_weather, meter_inputs
from engine.models import EnergyModel, ModelInputs
from engine.progress import Progress, step
from engine.project import Project
from engine.tariffs import Tariff

WEATHER_CHOICES = ("typical", "past-years")


@dataclass
class BudgetRequest:
    """What the user asked for."""

    months: list[str]
    as_of: date
    weather: str  # "typical", "past-years" or a file's name
    levels: tuple[int, ...] = (10, 50, 90)
    paths: int = 1000
    calibration_origins: int = 12
    tariff: Tariff | None = None
    given_weather: pd.Series | None = None  # °C, for a weather file
    rng: int = 20261201


@dataclass
class ProjectBudget:
    """The run with what the finance workbook shows beside it."""

    run: BudgetRun
    quality: dict[str, dict]
    steps: list[dict]
    scorecards: dict[str, dict]
    data_range: dict[str, tuple[str, str]]


def last_reading_day(project: Project) -> date:
    """The latest local day holding a reading of any meter: the default as-of date."""
    days = []
    for name in project.meter_names():
        meter = project.load_meter(name)
        days.append(meter.values.index[-1].tz_convert(meter.timezone).date())
    if not days:
        raise InputError("the project has no meters.", hint="Import meter files first.")
    return max(days)


def budget_project(
    project: Project,
    request: BudgetRequest,
    *,
    meters: Sequence[str] | None = None,
    progress: Progress | None = None,
) -> ProjectBudget:
    """Budget the project's meters (each with its recommended model, fitting one if needed)."""
    names = list(meters) if meters else project.meter_names()
    cut = as_of_cut(request.as_of, project.timezone)
    calendar = stored_calendar(project) or CampusCalendar()
    histories = {name: meter_inputs(project, name) for name in names}
    utilities = {m["name"]: m["utility"] for m in project.summary()["meters"]}
    families, scorecards = {}, {}
    for done, name in enumerate(names):
        step(progress, 0.3 * done / len(names), f"choosing the model of {name}")
        families[name], scorecards[name] = _family_and_scores(project, name)
    hourly = hourly_weather(project)
    hourly = hourly[hourly.index < cut] if hourly is not None else None
    weather = _weather(request, hourly)

    def plans_as_of(as_of) -> list[MeterPlan]:
        at = as_of_cut(as_of, project.timezone)
        return [
            _plan(name, utilities[name], histories[name], families[name], at, calendar, request)
            for name in names
        ]

    step(progress, 0.35, "budgeting past months to check the range")
    past = backtest_budget(
        plans_as_of,
        {name: histories[name].window(end=cut) for name in names},
        request.calibration_origins,
        weather=weather,
        levels=request.levels,
        paths=min(request.paths, 300),
        rng=request.rng,
    )
    plans = []
    for done, name in enumerate(names):
        step(progress, 0.6 + 0.2 * done / len(names), f"out-of-sample errors of {name}")
        residuals = _residuals(histories[name].window(end=cut), families[name], hourly)
        plans.append(
            _plan(
                name,
                utilities[name],
                histories[name],
                families[name],
                cut,
                calendar,
                request,
                residuals,
            )
        )
    step(progress, 0.8, "simulating the budget")
    run = simulate_budget(
        plans,
        request.months,
        request.as_of,
        weather,
        levels=request.levels,
        paths=request.paths,
        calibration=past.calibrations(),
        rng=request.rng,
    )
    run.assumptions.update(
        {
            "models": {name: families[name].label for name in names},
            "calibration": f"the {request.calibration_origins} most recent past month-ahead "
            "budgets",
        }
    )
    step(progress, 1.0, "budget ready")
    return ProjectBudget(
        run=run,
        quality={name: _quality(project, name) for name in names},
        steps=[s for name in names for s in project.cleaning_steps(name)],
        scorecards=scorecards,
        data_range={name: _range(histories[name]) for name in names},
    )


def _family_and_scores(project: Project, name: str) -> tuple[EnergyModel, dict]:
    """The meter's recommended model, unfitted (running the fit wizard when it has none), and
    its scores."""
    if not project.results("model", name):
        fit_meter(project, name)
    model, choice = chosen_model(project, name)
    ranking = {row["model"]: row for row in choice.get("ranking", [])}
    return fresh(model), ranking.get(model.family, {})


def _plan(
    name: str,
    utility: str,
    history: ModelInputs,
    family: EnergyModel,
    cut: pd.Timestamp,
    calendar: CampusCalendar,
    request: BudgetRequest,
    residuals: pd.Series | None = None,
) -> MeterPlan:
    """The meter's model refitted on the readings before ``cut``, ready to simulate."""
    model = fresh(family).fit(history.window(end=cut))
    tariff = request.tariff if utility == "electricity" else None
    return MeterPlan(name, utility, model, history, calendar=calendar,
                     residuals=residuals, tariff=tariff)  # fmt: skip


def _residuals(history: ModelInputs, family: EnergyModel, hourly: pd.Series | None) -> pd.Series:
    """Out-of-sample errors of the family from a rolling one-month-ahead backtest."""
    result = run_backtest({family.family: fresh(family)}, history, origins=12,
                          weather_history=hourly)  # fmt: skip
    return backtest_residuals(result, family.family)


def _weather(request: BudgetRequest, temps: pd.Series | None) -> WeatherAssumption:
    """The weather assumption asked for, from the hourly history before the as-of cut."""
    if request.given_weather is not None:
        return WeatherAssumption.given(request.given_weather)
    if temps is None:
        return WeatherAssumption.none()
    if request.weather == "past-years":
        return WeatherAssumption.past_years(temps)
    return WeatherAssumption.typical(temps)


def _quality(project: Project, name: str) -> dict:
    from engine.cleaning import quality_summary

    meter, cleaned = cleaned_meter(project, name)
    return quality_summary(meter.values, cleaned)


def _range(history: ModelInputs) -> tuple[str, str]:
    known = history.energy.dropna().index
    local = known.tz_convert(history.timezone)
    return (f"{local[0]:%Y-%m-%d}", f"{local[-1]:%Y-%m-%d}") if len(local) else ("", "")
