"""Budgets for the meters of a project: plans from the stored models, a calibration from
rolling month-ahead budgets, the simulated run, and everything the finance workbook needs.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from datetime import date
from pathlib import Path

import pandas as pd

from engine.bill_prices import BillPrice, bill_prices
from engine.budget import (
    BudgetRun,
    MeterPlan,
    WeatherAssumption,
    as_of_cut,
    backtest_budget,
    plans_from_refits,
    rolling_refits,
    simulate_budget,
)
from engine.budget.summary import check_levels
from engine.calendar import CampusCalendar
from engine.cleaning.project_log import cleaned_meter, stored_calendar
from engine.errors import InputError
from engine.modelling import (
    chosen_model,
    compare_models,
    fit_meter,
    hourly_weather,
    meter_inputs,
)
from engine.models import EnergyModel, ModelInputs
from engine.models.base import fresh
from engine.progress import Progress, step
from engine.project import Project
from engine.reading import ReadOptions, read_weather_file
from engine.tariffs import Tariff, is_currency_code, read_tariff
from engine.weather import typical_year

WEATHER_CHOICES = ("typical", "past-years")
#: The bills' currency unless told otherwise (bills store plain amounts).
DEFAULT_CURRENCY = "USD"
#: Fewest simulated paths that make a range.
MIN_PATHS = 100
#: Months of out-of-sample errors a budget draws its model error from.
ERROR_MONTHS = 12
#: Those months in days, for the simulation's error window.
ERROR_DAYS = 366


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
    currency: str = DEFAULT_CURRENCY  # of the bills' costs (a rate card states its own)
    rng: int = 20261201


@dataclass
class ProjectBudget:
    """The run with what the finance workbook shows beside it."""

    run: BudgetRun
    quality: dict[str, dict]
    steps: list[dict]
    scorecards: dict[str, dict]
    data_range: dict[str, tuple[str, str]]


def budget_request(
    project: Project,
    months: list[str],
    *,
    as_of: date | None = None,
    weather: str = "past-years",
    levels: Sequence[int] = (10, 50, 90),
    paths: int = 1000,
    tariff_file: str | Path | None = None,
    currency: str | None = None,
) -> BudgetRequest:
    """A checked request for ``project``; the files it names are read now, so their problems
    show before any work starts.

    ``as_of`` defaults to the last day with a reading; ``weather`` is one of
    :data:`WEATHER_CHOICES` or the path of a temperature file (read on the project's clock);
    ``tariff_file`` a rate card for the electricity meters; ``currency`` that of the bills'
    costs, which price the meters no rate card covers (default: the rate card's currency, else
    :data:`DEFAULT_CURRENCY`).
    """
    given = None
    if weather not in WEATHER_CHOICES:
        if not Path(weather).is_file():
            raise InputError(
                f"the weather assumption '{weather}' is neither "
                f"{' nor '.join(WEATHER_CHOICES)} nor a file.",
                hint="Choose typical or past-years weather, or the path of a temperature file.",
            )
        given = read_weather_file(weather, ReadOptions(timezone=project.timezone)).temps_c
    if paths < MIN_PATHS:
        raise InputError(
            f"{paths} paths are too few for a range.", hint=f"Use {MIN_PATHS} or more."
        )
    tariff = read_tariff(tariff_file) if tariff_file else None
    if currency is not None and not is_currency_code(currency.upper()):
        raise InputError(
            f"the currency '{currency}' is not a three-letter code.", hint="e.g. USD, EUR, CAD."
        )
    return BudgetRequest(
        months=list(months),
        as_of=as_of if as_of is not None else last_reading_day(project),
        weather=weather,
        levels=check_levels(levels),
        paths=paths,
        tariff=tariff,
        given_weather=given,
        currency=(currency or (tariff.currency if tariff else DEFAULT_CURRENCY)).upper(),
    )


def keep_budget(project: Project, run: BudgetRun) -> int:
    """Store the run's summary in the project file; returns its result id."""
    return project.add_result("budget", None, f"budget from {run.months[0]}", run.to_json())


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
    """Budget the project's meters, each with its recommended model, from the as-of date.

    Everything after the as-of date is ignored. A meter's stored model choice is used; without
    one the fit wizard chooses on the readings before the as-of date (and stores its choice
    when no reading comes after it). Each meter's model is refitted
    before each of its last months (:func:`engine.budget.rolling_refits`): those refits give
    the past month-ahead budgets that check the range and the out-of-sample errors every
    budget draws its model error from.
    """
    names = list(meters) if meters else project.meter_names()
    cut = as_of_cut(request.as_of, project.timezone)
    calendar = stored_calendar(project) or CampusCalendar()
    utilities = {m["name"]: m["utility"] for m in project.summary()["meters"]}
    hourly = hourly_weather(project, as_of=cut)
    weather, no_weather = _weather(request, hourly, project.timezone)
    if no_weather:
        hourly = None
    refit_months = request.calibration_origins + ERROR_MONTHS
    histories, families, scorecards, refits = {}, {}, {}, {}
    for done, name in enumerate(names):
        share = _share(progress, 0.7 * done / len(names), 0.7 * (done + 1) / len(names))
        everything = meter_inputs(project, name)
        histories[name] = everything.window(end=cut)
        if no_weather:
            histories[name] = replace(histories[name], temperature=None)
        families[name], scorecards[name] = _family_and_scores(
            project, name, histories[name], hourly,
            stored=not no_weather, storable=everything.index[-1] < cut,
            progress=_share(share, 0.0, 0.8),
        )  # fmt: skip
        refits[name] = rolling_refits(
            families[name], histories[name], refit_months, progress=_share(share, 0.8, 1.0)
        )

    prices = bill_prices(project)
    plans = []
    for name in names:
        model = fresh(families[name]).fit(histories[name])
        plans.append(MeterPlan(name, utilities[name], model, histories[name], calendar=calendar,
                               residuals=refits[name].errors,
                               **_price(utilities[name], request, prices)))  # fmt: skip
    past = backtest_budget(
        plans_from_refits(plans, refits),
        histories,
        request.calibration_origins,
        weather=weather,
        levels=request.levels,
        paths=min(request.paths, 300),
        error_days=ERROR_DAYS,
        rng=request.rng,
        progress=_share(progress, 0.7, 0.9),
    )
    run = simulate_budget(
        plans,
        request.months,
        request.as_of,
        weather,
        levels=request.levels,
        paths=request.paths,
        calibration=past.calibrations(),
        error_days=ERROR_DAYS,
        rng=request.rng,
        progress=_share(progress, 0.9, 1.0),
    )
    run.assumptions.update(
        {
            "models": {name: families[name].label for name in names},
            "model error": f"out-of-sample errors of each meter's model refitted before each of "
            f"the {ERROR_MONTHS} months before the as-of date (month-ahead, actual weather)",
            "calibration": f"the {request.calibration_origins} most recent past month-ahead "
            "budgets, each from the model and errors known before its month",
        }
    )
    if no_weather:
        run.cautions.append(no_weather)
    priced_by_bills = {plan.utility for plan in plans if plan.rate is not None}
    if priced_by_bills:
        run.assumptions["prices from bills"] = {
            utility: prices[utility].sentence(request.currency)
            for utility in sorted(priced_by_bills)
        }
    step(progress, 1.0, "budget ready")
    return ProjectBudget(
        run=run,
        quality={name: _quality(project, name) for name in names},
        steps=[s for name in names for s in project.cleaning_steps(name)],
        scorecards=scorecards,
        data_range={name: _range(histories[name]) for name in names},
    )


def _price(utility: str, request: BudgetRequest, prices: dict[str, BillPrice]) -> dict:
    """How a meter of ``utility`` is costed: the rate card (electricity), else its utility's
    bills, else not at all."""
    if utility == "electricity" and request.tariff is not None:
        return {"tariff": request.tariff}
    if utility in prices:
        return {"rate": prices[utility].rate, "currency": request.currency}
    return {}


def _share(progress: Progress | None, start: float, stop: float) -> Progress | None:
    return progress.part(start, stop) if progress is not None else None


def _family_and_scores(
    project: Project,
    name: str,
    history: ModelInputs,
    hourly: pd.Series | None,
    *,
    stored: bool,
    storable: bool,
    progress: Progress | None,
) -> tuple[EnergyModel, dict]:
    """The meter's model, unfitted, and its backtest scores.

    The stored choice when there is one and ``stored`` allows it (the user's; not when the
    budget drops the weather it was made with); otherwise the fit wizard's, made on
    ``history``, and stored when ``storable`` (no reading after the as-of date, same inputs).
    """
    has_choice = stored and bool(project.results("model", name))
    if has_choice or (stored and storable):
        if not has_choice:
            fit_meter(project, name, progress=progress)
        model, choice = chosen_model(project, name)
    else:
        compared = compare_models(history, hourly, progress=progress)
        if compared.choice.chosen is None:
            raise InputError(
                f"no model could be chosen for meter '{name}' from its readings before the "
                f"as-of date: {'; '.join(compared.choice.warnings) or 'every family failed'}.",
                hint="Choose a later as-of date, or import more history for this meter.",
                file=project.path,
            )
        model, choice = compared.models[compared.choice.chosen], compared.choice.to_dict()
    ranking = {row["model"]: row for row in choice.get("ranking", [])}
    return fresh(model), ranking.get(model.family, {})


def _weather(
    request: BudgetRequest, temps: pd.Series | None, timezone: str
) -> tuple[WeatherAssumption, str]:
    """The weather assumption asked for, from the hourly history before the as-of cut, and
    why the budget goes without weather when that history cannot give it ("" when it can).

    Typical and past years' weather need a typical year, so a year of temperatures; with
    less, the models run on the calendar alone rather than on a climate the tool would have
    to invent, and the budget says so.
    """
    if request.given_weather is not None:
        return WeatherAssumption.given(request.given_weather), ""
    if temps is None:
        return WeatherAssumption.none(), ""
    try:
        typical_year(temps.dropna(), timezone)
    except InputError as error:
        return WeatherAssumption.none(), (
            "The budget runs without weather: the temperatures before the as-of date cannot "
            f"give a typical year ({error.message.rstrip('.')}). Its models use the calendar "
            "alone; give a temperature file for the budget months, or a year of weather "
            "history, to budget with weather."
        )
    if request.weather == "past-years":
        return WeatherAssumption.past_years(temps), ""
    return WeatherAssumption.typical(temps), ""


def _quality(project: Project, name: str) -> dict:
    from engine.cleaning import quality_summary

    meter, cleaned = cleaned_meter(project, name)
    return quality_summary(meter.values, cleaned)


def _range(history: ModelInputs) -> tuple[str, str]:
    known = history.energy.dropna().index
    local = known.tz_convert(history.timezone)
    return (f"{local[0]:%Y-%m-%d}", f"{local[-1]:%Y-%m-%d}") if len(local) else ("", "")
