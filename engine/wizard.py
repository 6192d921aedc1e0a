"""The fit wizard's work on one meter, and everything a budget needs of one meter's model.

Pure functions of a meter's model inputs (no project file), so meters can be modelled in
worker processes or on a cluster (:mod:`engine.parallel`): the families' orders are tuned by a
short backtest, the families are compared in the rolling-origin backtest and one is
recommended (:func:`compare_models`); :func:`model_meter` then fits the chosen (or a given)
model on the whole history and, for a budget, refits it before each of the last months,
taking the months the backtest already fitted from the backtest itself.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass, replace

import pandas as pd
from threadpoolctl import threadpool_limits

from engine.backtest import (
    ACTUAL_WEATHER,
    NO_WEATHER,
    TYPICAL_WEATHER,
    BacktestResult,
    Fitted,
    Race,
    backtest_origins,
    run_backtest,
)
from engine.budget.refits import RollingRefits, rolling_refits
from engine.defaults import DEFAULT_ORIGINS
from engine.errors import InputError
from engine.models import MODEL_FAMILIES, EnergyModel, ModelInputs, model_from_dict
from engine.models.base import fresh
from engine.progress import Progress, step
from engine.selection import EXPLAINABLE_MARGIN, ModelChoice, recommend_model
from engine.weather import TypicalYears

#: Families the wizard tries unless told otherwise. The billing-period model needs bills and
#: the gradient-boosting challenger is less explainable and slower: both on request only.
#: "Same day last year, weather-adjusted" is the trade's own baseline (what finance would
#: budget without the tool), so it is always a candidate.
TRADE_BASELINE = "last_year_adjusted"
DEFAULT_FAMILIES: tuple[str, ...] = (
    "calendar_regression",
    "time_of_week_temperature",
    "daily_change_point",
    TRADE_BASELINE,
    "seasonal_naive",
    "daily_ets",
    "monthly_sarima",
    "mstl_ets",
)
#: Families whose settings the wizard chooses by backtest: orders (Fourier orders,
#: temperature knots) by hourly CV(RMSE) under the actual weather, and the share of last
#: year carried by "same day last year" by month totals (see :func:`tuned`).
TUNED_FAMILIES: tuple[str, ...] = (
    "calendar_regression",
    "time_of_week_temperature",
    TRADE_BASELINE,
)
#: Tuned families whose candidates differ in level rather than shape: compared on month
#: totals in the condition the wizard ranks on.
_TUNED_ON_MONTH_TOTALS = frozenset({TRADE_BASELINE})
#: Origins of the short backtest that chooses those settings (one-month-ahead).
TUNING_ORIGINS = 3
#: Slow, less explainable families that stop at the backtest origin from which they could no
#: longer be recommended (:class:`engine.backtest.Race`).
RACED_FAMILIES: frozenset[str] = frozenset(
    {"daily_ets", "monthly_sarima", "mstl_ets", "gradient_boosting"}
)

#: Families that make sense on daily readings (a daily register meter, say).
DAILY_FAMILIES: tuple[str, ...] = (
    "daily_change_point",
    "seasonal_naive",
    "daily_ets",
    "monthly_sarima",
    "mstl_ets",
)


def default_families(interval: pd.Timedelta) -> tuple[str, ...]:
    """The families the wizard tries on readings ``interval`` apart (daily or finer)."""
    return DAILY_FAMILIES if interval >= pd.Timedelta(hours=23) else DEFAULT_FAMILIES


def families_for(inputs: ModelInputs, names: Sequence[str] | None = None) -> list[EnergyModel]:
    """Fresh, unfitted models of the named families (default: those that suit the inputs)."""
    chosen = list(names) if names else list(default_families(inputs.interval))
    unknown = [n for n in chosen if n not in MODEL_FAMILIES]
    if unknown:
        raise InputError(
            f"unknown model family '{unknown[0]}'.",
            hint=f"Choose from: {', '.join(MODEL_FAMILIES)}.",
        )
    return [MODEL_FAMILIES[n]() for n in chosen]


@dataclass
class ModelComparison:
    """The wizard's backtest of the families, its recommendation and the tuned, unfitted models."""

    backtest: BacktestResult
    choice: ModelChoice
    models: dict[str, EnergyModel]


def compare_models(
    inputs: ModelInputs,
    weather: pd.Series | TypicalYears | None,
    *,
    families: Sequence[str] | None = None,
    origins: int = DEFAULT_ORIGINS,
    keep_fitted: bool = False,
    rank_on: str | None = None,
    progress: Progress | None = None,
) -> ModelComparison:
    """Tune the families' orders, backtest them on ``inputs`` and recommend one (the tuned
    families' fits at the tuning origins serve the backtest too).

    With ``keep_fitted`` the backtest keeps each model fitted at each origin
    (:attr:`BacktestResult.fitted`), for refits that reuse them. ``rank_on`` names the
    weather condition the models are ranked on (:data:`ACTUAL_WEATHER` for a budget on a
    given weather); by default typical weather, else none (:mod:`engine.selection`).
    """
    step(progress, 0.0, "choosing the models' orders")
    if isinstance(weather, pd.Series):  # one set of typical years for both backtests
        weather = TypicalYears(weather, inputs.timezone)
    wanted = families_for(inputs, families)
    tunings: dict[str, tuple[EnergyModel, dict[str, Fitted]]] = {}
    for model in wanted:
        if model.family != TRADE_BASELINE:
            tunings[model.family] = _tune(model, inputs, weather, rank_on)
    for model in wanted:
        if model.family == TRADE_BASELINE:
            tunings |= _tune_baseline(model, tunings, inputs, weather, rank_on, origins)
    tunings = {model.family: tunings[model.family] for model in wanted}
    models = {family: model for family, (model, _) in tunings.items()}
    part = progress.part(0.1, 1.0) if progress is not None else None
    backtest = run_backtest(
        models,
        inputs,
        origins=origins,
        weather_history=weather,
        keep_fitted=keep_fitted,
        race=Race(RACED_FAMILIES, EXPLAINABLE_MARGIN, rank_on),
        fitted={family: fitted for family, (_, fitted) in tunings.items()},
        progress=part,
    )
    choice = recommend_model(backtest, labels=inputs.labels, condition=rank_on)
    if choice.chosen == TRADE_BASELINE:
        choice = replace(choice, reasons=(*choice.reasons, _carried_words(models)))
    return ModelComparison(backtest, choice, models)


def _tune_baseline(
    model: EnergyModel,
    tunings: dict[str, tuple[EnergyModel, dict[str, Fitted]]],
    inputs: ModelInputs,
    weather: TypicalYears | None,
    rank_on: str | None,
    origins: int,
) -> dict[str, tuple[EnergyModel, dict[str, Fitted]]]:
    """ "Same day last year" tuned (:func:`tuned`) around the calendar regression the wizard
    tuned, so that its combination is with that model: the regression is fitted once per
    origin, and those fits serve the regression's own backtest and every share of last year
    (each fitted around them). Without a tuned regression, it is tuned on its own."""
    if "calendar_regression" not in tunings:
        return {model.family: _tune(model, inputs, weather, rank_on)}
    regression, known = tunings["calendar_regression"]
    starts = backtest_origins(inputs.index, inputs.timezone, origins, inputs.interval)
    months = {f"{start.tz_convert(inputs.timezone):%Y-%m}": start for start in starts}
    missing = {month: start for month, start in months.items() if month not in known}
    started = time.perf_counter()
    made = fresh(regression).fit_before_each(inputs, list(missing.values()))
    seconds = (time.perf_counter() - started) / max(len(missing), 1)
    fits = dict(known) | {
        month: (fit, seconds)
        for month, fit in zip(missing, made, strict=True)
        if not isinstance(fit, Exception)
    }
    settings = {**model.settings(), "regression": regression.settings()}
    family = type(model)
    candidates = {
        str(number): family(**{**settings, **extra})
        for number, extra in enumerate(family.candidate_settings())
    }
    first = next(iter(candidates.values()))
    shared = {
        month: (first.around(fit, inputs.window(end=months[month])), spent)
        for month, (fit, spent) in fits.items()
        if month in months
    }
    around = {
        key: {
            month: (fit.reweighted(candidate.weight), spent)
            for month, (fit, spent) in shared.items()
        }
        for key, candidate in candidates.items()
    }
    result = run_backtest(
        candidates, inputs, origins=TUNING_ORIGINS, horizons=(1,), weather_history=weather,
        fitted=around,
    )  # fmt: skip
    condition = _ranked_condition(result, rank_on)
    scored = [
        (card.month_total_mape, card.cv_rmse, key)
        for key in candidates
        if (card := result.scorecard(key, condition)) is not None
        and result.model_failures(key, condition).empty
    ]
    best = min(scored)[2] if scored else "0"
    return {
        "calendar_regression": (regression, fits),
        model.family: (candidates[best], around[best]),
    }


def _carried_words(models: dict[str, EnergyModel]) -> str:
    """Why "same day last year" carries the share of last year it carries."""
    model = models[TRADE_BASELINE]
    weight = float(model.settings()["weight"])
    what = (
        "all of last year's departure from the regression (the trade's baseline: last year's "
        "actual adjusted for weather and calendar)"
        if weight == 1.0
        else f"{weight:.0%} of last year's departure from the regression (a combination of the "
        "trade's baseline with the regression alone)"
    )
    return (
        f"{model.label.capitalize()} carries {what}: of the shares tried, its month totals "
        f"were nearest the actual in the last {TUNING_ORIGINS} months' backtest."
    )


def tuned(
    model: EnergyModel, inputs: ModelInputs, weather: pd.Series | TypicalYears | None
) -> EnergyModel:
    """The family's candidate settings compared in a short backtest; the best one, unfitted.

    Only :data:`TUNED_FAMILIES` are tuned: the orders of their terms are chosen by how well
    each candidate forecast the last :data:`TUNING_ORIGINS` months with their actual weather
    (hourly CV(RMSE)), not by hand; the share of last year "same day last year" carries (all
    of it, or the even combination with the regression) by how near the candidates' month
    totals came to the actual under the weather the wizard ranks on (typical weather when it
    can be learned), since that share moves the level, not the shape. Other families come
    back as they are.
    """
    return _tune(model, inputs, weather)[0]


def _tune(
    model: EnergyModel,
    inputs: ModelInputs,
    weather: pd.Series | TypicalYears | None,
    rank_on: str | None = None,
) -> tuple[EnergyModel, dict[str, Fitted]]:
    """:func:`tuned`, with the chosen candidate's fits at the tuning origins (origin →
    model and fit seconds) for the main backtest to reuse."""
    if model.family not in TUNED_FAMILIES:
        return model, {}
    family = type(model)
    candidates: dict[str, EnergyModel] = {}
    for number, settings in enumerate([{}, *family.candidate_settings()]):
        candidate = family(**{**model.settings(), **settings})
        if all(candidate.settings() != kept.settings() for kept in candidates.values()):
            candidates[str(number)] = candidate  # the defaults are often a candidate too
    on_totals = model.family in _TUNED_ON_MONTH_TOTALS
    result = run_backtest(
        candidates,
        inputs,
        origins=TUNING_ORIGINS,
        horizons=(1,),
        weather_history=weather,
        keep_fitted=True,
        only_actual=not on_totals,
    )
    condition = ACTUAL_WEATHER if inputs.temperature is not None else NO_WEATHER
    if on_totals:
        condition = _ranked_condition(result, rank_on)
    scored = [
        ((card.month_total_mape, card.cv_rmse) if on_totals else (card.cv_rmse,), key)
        for key in candidates
        if (card := result.scorecard(key, condition)) is not None
        and result.model_failures(key, condition).empty
    ]
    if not scored:
        return model, {}
    best = min(scored)[1]
    fits = result.fits[result.fits["model"] == best].set_index("origin")["fit seconds"]
    fitted = {origin: (done, float(fits[origin])) for origin, done in result.fitted[best].items()}
    return candidates[best], fitted


def _ranked_condition(result: BacktestResult, rank_on: str | None) -> str:
    """The condition of a tuning backtest the main ranking would use: ``rank_on``, else
    typical weather where scored, else the actual weather (or none)."""
    scored = {card.condition for card in result.scorecards}
    for condition in (rank_on, TYPICAL_WEATHER, ACTUAL_WEATHER, NO_WEATHER):
        if condition in scored:
            return condition
    return NO_WEATHER


@dataclass(frozen=True)
class MeterJob:
    """One meter's modelling asked of :func:`model_meter`.

    ``model`` is a chosen model's JSON (its settings are used, not its fit); without one the
    wizard compares ``families`` (default: those that suit the readings) in a backtest from
    ``origins`` monthly origins, with ``weather`` (the site's hourly °C, with the typical
    years learned before each origin, :func:`learn_typical_years`) for its typical weather.
    ``refit_months`` > 0 also refits the model before each of that many last months.
    ``rank_on`` is the weather condition the wizard ranks on (see :func:`compare_models`).
    """

    name: str
    history: ModelInputs
    weather: TypicalYears | None = None
    model: dict | None = None
    families: tuple[str, ...] | None = None
    origins: int = DEFAULT_ORIGINS
    refit_months: int = 0
    rank_on: str | None = None

    @property
    def size(self) -> int:
        """Intervals of history: what the work grows with."""
        return len(self.history.index)


@dataclass
class MeterModels:
    """What :func:`model_meter` made: the chosen settings (unfitted), the model fitted on the
    whole history, the wizard's comparison when it chose, the refits when asked for.
    ``family`` and ``model`` are None when the wizard could recommend no family
    (``comparison.choice.warnings`` say why)."""

    name: str
    family: EnergyModel | None
    model: EnergyModel | None
    comparison: ModelComparison | None
    refits: RollingRefits | None
    seconds: float


def learn_typical_years(
    typical: TypicalYears | None, histories: Sequence[ModelInputs], origins: int
) -> None:
    """Learn, here and once, the typical years the backtests of these histories will ask
    for (the meters' jobs may run in other processes, each with its own copy)."""
    if typical is None:
        return
    for history in histories:
        typical.learn(backtest_origins(history.index, history.timezone, origins, history.interval))


def model_meter(job: MeterJob, progress: Progress | None = None) -> MeterModels:
    """Choose (or take) the meter's model, fit it on the history and refit it as asked.

    Runs with one BLAS thread, so a meter gives the same numbers in a worker process as in
    the caller's, and parallel meters do not compete for cores.
    """
    started = time.perf_counter()
    with threadpool_limits(limits=1):
        comparison, family = _choose(job, _part(progress, 0.0, 0.8))
        if family is None:
            return MeterModels(job.name, None, None, comparison, None, 0.0)
        step(progress, 0.8, f"fitting {family.label} on all the history of '{job.name}'")
        model = fresh(family).fit(job.history)
        refits = None
        if job.refit_months > 0:
            reuse = None
            if comparison is not None:
                chosen = comparison.choice.chosen
                reuse = RollingRefits.from_backtest(comparison.backtest, chosen)
                comparison = replace(comparison, backtest=replace(comparison.backtest, fitted={}))
            refits = rolling_refits(
                family, job.history, job.refit_months, reuse=reuse,
                progress=_part(progress, 0.85, 1.0),
            )  # fmt: skip
    step(progress, 1.0, f"'{job.name}' modelled")
    return MeterModels(job.name, family, model, comparison, refits, time.perf_counter() - started)


def _choose(
    job: MeterJob, progress: Progress | None
) -> tuple[ModelComparison | None, EnergyModel | None]:
    if job.model is not None:
        return None, fresh(model_from_dict(job.model))
    compared = compare_models(
        job.history,
        job.weather,
        families=job.families,
        origins=job.origins,
        keep_fitted=job.refit_months > 0,
        rank_on=job.rank_on,
        progress=progress,
    )
    if compared.choice.chosen is None:
        return compared, None
    return compared, compared.models[compared.choice.chosen]


def _part(progress: Progress | None, start: float, stop: float) -> Progress | None:
    return progress.part(start, stop) if progress is not None else None
