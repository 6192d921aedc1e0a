"""Budgets for the meters of a project: plans from the stored models, a calibration from
rolling month-ahead budgets, the simulated run, and everything the finance workbook needs.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd

from engine.accounts.budget import Accounts, account_totals, calibrations, describe, plan_accounts
from engine.accounts.paths import bill_only_totals
from engine.accounts.plan import AccountPlan
from engine.backtest import ACTUAL_WEATHER
from engine.budget import (
    BudgetRun,
    MeterPlan,
    WeatherAssumption,
    as_of_cut,
    backtest_budget,
    plans_from_refits,
    simulate_paths,
    summarise,
)
from engine.budget.periods import check_ahead
from engine.budget.refits import CALIBRATION_MONTHS, ERROR_MONTHS
from engine.budget.summary import check_levels
from engine.calendar import CampusCalendar
from engine.defaults import DEFAULT_ORIGINS, DEFAULT_PATHS, DEFAULT_WEATHER, WEATHER_CHOICES
from engine.errors import InputError, ProjectError
from engine.meter_labels import naming_progress, with_shown_names
from engine.models import MODEL_FAMILIES, ModelInputs
from engine.parallel import MeterFailure, run_per_meter
from engine.progress import Progress, step
from engine.project import Project
from engine.reading import ReadOptions, read_weather_file
from engine.ready_meters import PreparedSite, ReadyMeter
from engine.steps.account_membership import meter_accounts, metered_by
from engine.steps.bill_prices import BillPrice, bill_prices
from engine.steps.fitting import keep_fit
from engine.steps.kept_models import (
    chosen_scores,
    job_key,
    keep,
    keep_for_next_budget,
    kept,
    ranking_row,
)
from engine.steps.labels import meter_labels
from engine.steps.prepared_site import prepare_site
from engine.steps.site_weather import stations_sentence
from engine.tariffs import Tariff, is_currency_code, read_tariff
from engine.weather import TypicalYears, typical_year
from engine.wizard import (
    MeterJob,
    MeterModels,
    learn_typical_years,
    model_meter,
)

#: The bills' currency unless told otherwise (bills store plain amounts).
DEFAULT_CURRENCY = "USD"
#: Fewest simulated paths that make a range.
MIN_PATHS = 100
#: Those months in days, for the simulation's error window.
ERROR_DAYS = 366


@dataclass
class BudgetRequest:
    """What the user asked for."""

    months: list[str]
    as_of: date
    weather: str  # "typical", "past-years" or a file's name
    levels: tuple[int, ...] = (10, 50, 90)
    paths: int = DEFAULT_PATHS
    calibration_origins: int = CALIBRATION_MONTHS
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
    #: The past month-ahead budgets that checked the ranges (:class:`BudgetBacktest` pairs);
    #: None for a budget read back from the project.
    past_budgets: pd.DataFrame | None = None
    # What the run was made from, for adopting it (engine.steps.adopting).
    plans: list[MeterPlan] = field(default_factory=list)
    weather: WeatherAssumption | None = None
    calendar: CampusCalendar | None = None
    accounts: list[AccountPlan] = field(default_factory=list)  # the bill accounts budgeted


#: Days an as-of date may lie after the last reading: the year of model errors a budget
#: draws from (:data:`engine.budget.refits.ERROR_MONTHS`) must hold some.
MAX_DAYS_PAST_READINGS = 365


def budget_request(
    project: Project,
    months: list[str],
    *,
    as_of: date | None = None,
    weather: str = DEFAULT_WEATHER,
    levels: Sequence[int] = (10, 50, 90),
    paths: int = DEFAULT_PATHS,
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
    last = last_reading_day(project)
    as_of = as_of if as_of is not None else last
    check_ahead(list(months), as_of)
    if (as_of - last).days > MAX_DAYS_PAST_READINGS:
        raise InputError(
            f"the as-of date {as_of:%Y-%m-%d} is {(as_of - last).days} days after the last "
            f"reading ({last:%Y-%m-%d}): a budget draws its model error from the year before "
            "the as-of date, and that year has no readings.",
            hint="Choose an as-of date within a year of the last reading, or import the "
            "newer readings.",
        )
    return BudgetRequest(
        months=list(months),
        as_of=as_of,
        weather=weather,
        levels=check_levels(levels),
        paths=paths,
        tariff=tariff,
        given_weather=given,
        currency=(currency or (tariff.currency if tariff else DEFAULT_CURRENCY)).upper(),
    )


def keep_budget(project: Project, budget: ProjectBudget) -> int:
    """Store the run in the project file; returns its result id.

    The body is the run's JSON (what ``budget --json`` prints) plus, under ``"detail"``, what
    the finance workbook needs beside it (each meter's daily figures and scores, the data
    quality, cleaning steps, scorecards and data ranges), so that :func:`latest_budget` gives
    back the budget as it was run.
    """
    run = budget.run
    detail = {
        "daily": {m.name: _daily_json(m.daily) for m in run.meters},
        "scores": {m.name: m.scores for m in run.meters},
        "quality": budget.quality,
        "steps": budget.steps,
        "scorecards": budget.scorecards,
        "data_range": {name: list(span) for name, span in budget.data_range.items()},
    }
    body = {**run.to_json(), "detail": detail}
    return project.add_result("budget", None, f"budget from {run.months[0]}", body)


def latest_budget(project: Project) -> ProjectBudget | None:
    """The budget kept last in the project, as it was run; None when it keeps none.

    A budget kept before the detail was kept comes back without daily figures, data quality
    or scorecards (the workbook then says so on those sheets).
    """
    kept = project.last_result("budget")
    if kept is None:
        return None
    body = kept["body"]
    try:
        detail = body.get("detail", {})
        daily = {name: _daily_frame(table) for name, table in detail.get("daily", {}).items()}
        return ProjectBudget(
            run=BudgetRun.from_json(body, daily, detail.get("scores")),
            quality=detail.get("quality", {}),
            steps=detail.get("steps", []),
            scorecards=detail.get("scorecards", {}),
            data_range={name: tuple(span) for name, span in detail.get("data_range", {}).items()},
        )
    except (AttributeError, KeyError, TypeError, ValueError) as error:
        raise ProjectError(
            f"the budget kept in {project.path.name} cannot be read ({error!r}); "
            "budget again to replace it."
        ) from error


def _daily_json(daily: pd.DataFrame) -> dict:
    """A meter's daily figures (naive local days) as JSON: the days and each column."""
    days = [day.date().isoformat() for day in daily.index]
    return {"days": days, "figures": {str(c): daily[c].tolist() for c in daily.columns}}


def _daily_frame(table: dict) -> pd.DataFrame:
    index = pd.DatetimeIndex(pd.to_datetime(table["days"]), name="day")
    return pd.DataFrame(table["figures"], index=index)


def last_reading_day(project: Project) -> date:
    """The latest local day holding a reading of any meter: the default as-of date (for a
    project of bill accounts only, the last day of the newest bill)."""
    lasts = project.last_reading_starts()
    if lasts:
        return max(lasts).tz_convert(project.timezone).date()
    bills = project.load_bills()
    if bills.empty:
        raise InputError("the project has no meters.", hint="Import meter files first.")
    return pd.Timestamp(bills["period_end"].max()).date()


def budget_project(
    project: Project,
    request: BudgetRequest,
    *,
    meters: Sequence[str] | None = None,
    workers: int | None = None,
    scheduler: str | None = None,
    progress: Progress | None = None,
    with_accounts: bool | None = None,
) -> ProjectBudget:
    """Budget the project's meters, each with its recommended model, from the as-of date.

    Everything after the as-of date is ignored. A meter's stored model choice is used; without
    one the fit wizard chooses on the readings before the as-of date (and stores its choice
    when no reading comes after it). Each meter's model is refitted
    before each of its last months (:func:`engine.budget.rolling_refits`): those refits give
    the past month-ahead budgets that check the range and the out-of-sample errors every
    budget draws its model error from. That modelling is kept in the project
    (:mod:`engine.steps.kept_models`), so a budget of unchanged data with another period, weather
    assumption or tariff reuses it; meters are modelled side by side (``workers`` local
    processes, by default one per core when the site is large enough to repay them, or the
    Dask scheduler at ``scheduler``).

    The project's bill accounts (:mod:`engine.accounts`) are budgeted beside the meters
    unless ``with_accounts`` is False (by default they are when no ``meters`` are named).
    """
    labels = meter_labels(project)
    progress = naming_progress(progress, labels)
    step(progress, 0.0, "preparing the meters")
    with_accounts = not meters if with_accounts is None else with_accounts
    site = prepare_site(project, meters or None)
    names = list(site.meters)
    cut = as_of_cut(request.as_of, project.timezone)
    hourly = site.hourly_before(cut)
    weather, no_weather = _weather(request, hourly, project.timezone)
    accounts = _accounts(project, request, hourly, weather, names) if with_accounts else Accounts()
    histories = {name: site.meter(name).history(cut, weather=not no_weather) for name in names}
    modelled, scorecards, failures = {}, {}, []
    if names:
        modelled, scorecards, failures = _meter_models(
            project, site, histories, cut, request, no_weather, hourly,
            workers=workers, scheduler=scheduler, progress=_share(progress, 0.05, 0.7),
        )  # fmt: skip
    names = [name for name in names if name in modelled]
    accounts.measured_by_only(names)  # a meter left out cannot stand in for its account
    prices = bill_prices(project)
    own = accounts.meter_rates()
    plans = [_plan(site.meter(name), modelled[name], histories[name], site, request,
                   _price(site.meter(name).utility, request, prices, own.get(name)))
             for name in names]  # fmt: skip
    if not plans and not accounts.plans:
        reason = accounts.failures[0].reason if accounts.failures else "it has no meters"
        raise InputError(f"the project has nothing to budget: {reason}.",
                         hint="Import meter readings or at least a year of bills.")  # fmt: skip
    past_pairs, past_calibrations = None, {}
    if plans:
        past = backtest_budget(
            plans_from_refits(plans, {name: modelled[name].refits for name in names}),
            histories,
            request.calibration_origins,
            weather=weather,
            levels=request.levels,
            paths=min(request.paths, 300),
            error_days=ERROR_DAYS,
            rng=request.rng,
            progress=_share(progress, 0.7, 0.9),
        )
        past_pairs, past_calibrations = past.pairs, past.calibrations()
        totals = simulate_paths(
            plans,
            request.months,
            request.as_of,
            weather,
            paths=request.paths,
            error_days=ERROR_DAYS,
            rng=request.rng,
            progress=_share(progress, 0.9, 1.0),
        )
    else:
        totals = bill_only_totals(request.months, request.as_of, weather, project.timezone,
                                  request.paths, np.random.default_rng(request.rng))  # fmt: skip
    totals.meters += account_totals(accounts, totals, request.rng)
    run = summarise(
        totals,
        levels=request.levels,
        calibration={**past_calibrations, **calibrations(accounts)},
    )
    if plans:
        run.assumptions.update(
            {
                "models": {name: modelled[name].model.label for name in names},
                "model settings": {name: modelled[name].model.settings() for name in names},
                "model error": "out-of-sample errors of each meter's model refitted before "
                f"each of the {ERROR_MONTHS} months before the as-of date (month-ahead, actual "
                "weather)",
                "calibration": f"the {request.calibration_origins} most recent past month-ahead "
                "budgets, each from the model and errors known before its month",
            }
        )
        if _rank_on(request) is not None:
            run.assumptions["model ranking"] = (
                "models the fit wizard chose here were ranked on their backtest under the "
                "weather that actually happened, as the budget is asked for a given weather"
            )
    stations = stations_sentence(site.station_hours)
    if stations:
        run.assumptions["weather stations"] = stations
    own_price = set(own) & {plan.name for plan in plans if plan.rate is not None}
    describe(run, accounts, own_price)
    if no_weather:
        run.cautions.append(no_weather)
    run.cautions += [
        f"Meter '{failure.name}' is left out of this budget: {failure.reason}"
        for failure in failures
    ]
    priced_by_bills = {p.utility for p in plans if p.rate is not None and p.name not in own_price}
    if priced_by_bills:
        run.assumptions["prices from bills"] = {
            utility: prices[utility].sentence(request.currency)
            for utility in sorted(priced_by_bills)
        }
    run.cautions = [with_shown_names(caution, labels) for caution in run.cautions]
    step(progress, 1.0, "budget ready")
    return ProjectBudget(
        run=run,
        quality={name: site.meter(name).quality() for name in names},
        steps=[s for name in names for s in site.meter(name).steps],
        scorecards=scorecards,
        data_range={name: _range(histories[name]) for name in names}
        | {plan.name: _bill_range(plan.bills) for plan in accounts.plans},
        past_budgets=past_pairs,
        plans=plans,
        weather=weather,
        calendar=site.calendar,
        accounts=accounts.plans,
    )


def _accounts(
    project: Project,
    request: BudgetRequest,
    hourly: pd.Series | None,
    weather: WeatherAssumption,
    names: list[str],
) -> Accounts:
    """The project's bill accounts made ready (their checks and models come before the meters'
    slower work, so a bad bill file stops the budget at once)."""
    bills = project.load_bills()
    if bills.empty:
        return Accounts()
    return plan_accounts(
        bills,
        request.as_of,
        hourly,
        project.timezone,
        with_weather=weather.kind != "none",
        levels=request.levels,
        currency=request.currency,
        metered_by=metered_by(meter_accounts(project), names),
        taken=names,
    )


def _meter_models(
    project: Project,
    site: PreparedSite,
    histories: dict[str, ModelInputs],
    cut: pd.Timestamp,
    request: BudgetRequest,
    no_weather: str,
    hourly: pd.Series | None,
    *,
    workers: int | None,
    scheduler: str | None,
    progress: Progress | None,
) -> tuple[dict[str, MeterModels], dict[str, dict], list[MeterFailure]]:
    """Each meter's model, fit and refits: kept ones where their inputs are unchanged, the
    others made side by side and kept; the backtest scores shown beside each model; and the
    meters that could not be modelled (the budget goes on without them and says so).

    A meter uses its stored model choice unless the budget drops the weather it was made with;
    otherwise the fit wizard chooses on the readings before the cut, and its choice is stored
    when no reading comes after the cut (same inputs as a fit of the whole history). A budget
    on a given weather ranks on the backtest under the weather that happened: a stored choice
    the wizard ranked otherwise is ranked again among the same families, and a choice made
    there is not stored as the meter's model.
    """
    refit_months = request.calibration_origins + ERROR_MONTHS
    modelled: dict[str, MeterModels] = {}
    scorecards: dict[str, dict] = {}
    jobs, keys = [], {}
    weather = None if no_weather or hourly is None else TypicalYears(hourly, site.timezone)
    rank_on = _rank_on(request)
    for name in histories:
        stored = project.last_result("model", name) if not no_weather else None
        choice = stored["body"] if stored else None
        families = None
        if choice and not _answers(choice, rank_on):  # rank the families it compared again
            families = tuple(row["model"] for row in choice["choice"]["ranking"]) or None
            choice = None
        job = MeterJob(
            name,
            histories[name],
            weather,
            _unfitted(choice) if choice else None,
            families=families,
            refit_months=refit_months,
            rank_on=rank_on,
        )
        keys[name] = job_key(job)
        found = kept(project, job, keys[name])
        if found is not None:
            modelled[name], scorecards[name] = found
        else:
            jobs.append(job)
        if choice:
            scorecards[name] = ranking_row(choice["choice"], choice["model"]["family"])
    wizard = [job.history for job in jobs if job.model is None]
    learn_typical_years(weather, wizard, DEFAULT_ORIGINS)
    results, failures = run_per_meter(
        model_meter, jobs, workers=workers, scheduler=scheduler, progress=progress
    )
    with project.transaction():
        for job in jobs:
            made = results.get(job.name)
            if made is None:
                continue
            if made.model is None:
                failures.append(MeterFailure(job.name, _no_choice(made), True))
                continue
            if made.comparison is None:
                keep(project, made, keys[job.name], scorecards[job.name])
            elif site.meter(job.name).inputs.index[-1] < cut and rank_on is None:
                keep_fit(project, made, job.history)
                scorecards[job.name] = keep_for_next_budget(project, made, job)
            else:
                scorecards[job.name] = chosen_scores(made)
                keep(project, made, keys[job.name], scorecards[job.name])
            modelled[job.name] = made
    if failures and not modelled:
        raise failures[0].error()
    return modelled, scorecards, failures


def _rank_on(request: BudgetRequest) -> str | None:
    """The backtest condition the fit wizard ranks on for this budget: the weather that
    happened when the budget is asked for a given weather (the question is then what that
    weather does to the meters), else the wizard's own default."""
    return ACTUAL_WEATHER if request.given_weather is not None else None


def _answers(stored: dict, rank_on: str | None) -> bool:
    """Whether a stored model choice answers this budget's question: always, unless the
    budget ranks on another condition than the wizard did and no person chose by hand (the
    wizard then ranks the families that choice compared again)."""
    choice = stored.get("choice", {})
    return rank_on is None or "recommendation" in choice or choice.get("condition") == rank_on


def _unfitted(choice: dict) -> dict:
    """The stored choice's settings as an unfitted model's JSON (its fit is not needed)."""
    stored = choice["model"]
    return MODEL_FAMILIES[stored["family"]](**stored.get("settings", {})).to_dict()


def _no_choice(made: MeterModels) -> str:
    warnings = made.comparison.choice.warnings if made.comparison is not None else ()
    return (
        "no model could be chosen from its readings before the as-of date: "
        f"{'; '.join(warnings) or 'every family failed'}."
    )


def _plan(
    ready: ReadyMeter,
    made: MeterModels,
    history: ModelInputs,
    site: PreparedSite,
    request: BudgetRequest,
    price: dict,
) -> MeterPlan:
    """The meter's budget plan: its model fitted on the history, its refits' errors, price."""
    return MeterPlan(
        ready.name,
        ready.utility,
        made.model,
        history,
        calendar=site.calendar,
        residuals=made.refits.errors,
        **price,
    )


def _price(
    utility: str, request: BudgetRequest, prices: dict[str, BillPrice], account: float | None
) -> dict:
    """How a meter of ``utility`` is costed: the rate card (electricity), else the bills of the
    account it belongs to, else its utility's bills, else not at all."""
    if utility == "electricity" and request.tariff is not None:
        return {"tariff": request.tariff}
    if account is not None:
        return {"rate": account, "currency": request.currency}
    if utility in prices:
        return {"rate": prices[utility].rate, "currency": request.currency}
    return {}


def _share(progress: Progress | None, start: float, stop: float) -> Progress | None:
    return progress.part(start, stop) if progress is not None else None


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


def _bill_range(bills: pd.DataFrame) -> tuple[str, str]:
    return (f"{bills['period_start'].iloc[0]:%Y-%m-%d}", f"{bills['period_end'].iloc[-1]:%Y-%m-%d}")


def _range(history: ModelInputs) -> tuple[str, str]:
    known = history.energy.dropna().index
    local = known.tz_convert(history.timezone)
    return (f"{local[0]:%Y-%m-%d}", f"{local[-1]:%Y-%m-%d}") if len(local) else ("", "")
