"""Models for the meters of a project: inputs from the stored data, the fit wizard's backtest
and recommendation, and the chosen model kept in the project file as plain JSON.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import pandas as pd

from engine.backtest import ACTUAL_WEATHER, NO_WEATHER, BacktestResult, run_backtest
from engine.calendar import CampusCalendar, label_intervals
from engine.cleaning.project_log import cleaned_meter, stored_calendar
from engine.errors import InputError
from engine.models import MODEL_FAMILIES, EnergyModel, ModelInputs, RefitNeeded, model_from_dict
from engine.models.base import fresh
from engine.progress import Progress, step
from engine.project import Project
from engine.selection import ModelChoice, recommend_model
from engine.weather import fill_hourly

#: Families the wizard tries unless told otherwise. The billing-period model needs bills and
#: the gradient-boosting challenger is less explainable and slower: both on request only.
DEFAULT_FAMILIES: tuple[str, ...] = (
    "calendar_regression",
    "time_of_week_temperature",
    "daily_change_point",
    "seasonal_naive",
    "daily_ets",
    "monthly_sarima",
    "mstl_ets",
)
#: Families whose orders (Fourier orders, temperature knots) the wizard chooses by backtest.
TUNED_FAMILIES: tuple[str, ...] = ("calendar_regression", "time_of_week_temperature")
#: Origins of the short backtest that chooses those orders (one-month-ahead, actual weather).
TUNING_ORIGINS = 3

#: Families that make sense on daily readings (a daily register meter, say).
DAILY_FAMILIES: tuple[str, ...] = (
    "daily_change_point",
    "seasonal_naive",
    "daily_ets",
    "monthly_sarima",
    "mstl_ets",
)
HOUR = pd.Timedelta(hours=1)


@dataclass
class FitOutcome:
    """The backtest, the recommendation and the chosen model (fitted on all the history)."""

    meter: str
    backtest: BacktestResult
    choice: ModelChoice
    model: EnergyModel | None
    result_id: int | None
    inputs: ModelInputs  # what the models were fitted on, for explaining the chosen one


def meter_inputs(project: Project, name: str, *, as_of: pd.Timestamp | None = None) -> ModelInputs:
    """One meter's cleaned energy with temperature and calendar labels, ready for a model.

    Sub-hourly readings are summed to hours (an hour with any interval missing is missing);
    daily readings stay daily. Excluded ranges are missing. With ``as_of`` only the data
    before it is used.
    """
    meter, cleaned = cleaned_meter(project, name)
    energy = cleaned.values.where(~cleaned.excluded)
    if as_of is not None:
        energy = energy[energy.index < as_of]
    if meter.interval < HOUR:
        per_hour = int(HOUR / meter.interval)
        grouped = energy.resample("h")
        energy = grouped.sum(min_count=1).where(grouped.count() == per_hour)
    index = _regular_index(energy.index, meter.timezone, meter.interval >= pd.Timedelta(days=1))
    energy = energy.reindex(index)
    calendar = stored_calendar(project) or CampusCalendar()
    labels = label_intervals(index, meter.timezone, calendar)
    temperature = project_temperature(project, index, meter.timezone, as_of=as_of)
    return ModelInputs(index, meter.timezone, energy, temperature, labels)


def project_temperature(
    project: Project,
    index: pd.DatetimeIndex,
    timezone: str,
    *,
    as_of: pd.Timestamp | None = None,
) -> pd.Series | None:
    """The project's weather on ``index``: hourly °C with short gaps filled, or daily means."""
    hourly = hourly_weather(project, as_of=as_of)
    if hourly is None:
        return None
    if len(index) > 1 and (index[1] - index[0]) >= pd.Timedelta(hours=23):
        local_days = hourly.tz_convert(timezone).index.normalize()
        daily = hourly.groupby(local_days).mean()
        daily.index = daily.index.tz_convert("UTC")
        return daily.reindex(index)
    return hourly.reindex(index)


def hourly_weather(project: Project, *, as_of: pd.Timestamp | None = None) -> pd.Series | None:
    """The project's weather as hourly °C with short gaps interpolated; None without weather."""
    if not project.weather_stations():
        return None
    temps = project.load_weather()
    if as_of is not None:
        temps = temps[temps.index < as_of]
    return fill_hourly(temps).hourly


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
    weather: pd.Series | None,
    *,
    families: Sequence[str] | None = None,
    origins: int = 12,
    progress: Progress | None = None,
) -> ModelComparison:
    """Tune the families' orders, backtest them on ``inputs`` and recommend one."""
    step(progress, 0.0, "choosing the models' orders")
    models = {m.family: tuned(m, inputs, weather) for m in families_for(inputs, families)}
    part = progress.part(0.1, 1.0) if progress is not None else None
    backtest = run_backtest(models, inputs, origins=origins, weather_history=weather, progress=part)
    return ModelComparison(backtest, recommend_model(backtest, labels=inputs.labels), models)


def fit_meter(
    project: Project,
    name: str,
    *,
    families: Sequence[str] | None = None,
    origins: int = 12,
    progress: Progress | None = None,
) -> FitOutcome:
    """Backtest the families on one meter, recommend one, fit it on all data and keep it."""
    inputs = meter_inputs(project, name)
    part = progress.part(0.0, 0.9) if progress is not None else None
    compared = compare_models(
        inputs, hourly_weather(project), families=families, origins=origins, progress=part
    )
    backtest, choice = compared.backtest, compared.choice
    model, result_id = None, None
    if choice.chosen is not None:
        step(progress, 0.95, f"fitting {choice.chosen} on all the history")
        model = fresh(compared.models[choice.chosen]).fit(inputs)
        with project.transaction():
            project.add_result("backtest", name, "rolling-origin backtest", backtest.to_dict())
            result_id = project.add_result(
                "model",
                name,
                model.label,
                {"model": model.to_dict(), "choice": choice.to_dict()},
            )
    step(progress, 1.0, "done")
    return FitOutcome(name, backtest, choice, model, result_id, inputs)


def tuned(model: EnergyModel, inputs: ModelInputs, weather: pd.Series | None) -> EnergyModel:
    """The family's candidate settings compared in a short backtest; the best one, unfitted.

    Only :data:`TUNED_FAMILIES` are tuned: the orders of their terms are chosen by how well
    each candidate forecast the last :data:`TUNING_ORIGINS` months with their actual weather
    (hourly CV(RMSE)), not by hand. Other families come back as they are.
    """
    if model.family not in TUNED_FAMILIES:
        return model
    family = type(model)
    candidates = {str(i): family(**s) for i, s in enumerate([{}, *family.candidate_settings()])}
    result = run_backtest(
        candidates, inputs, origins=TUNING_ORIGINS, horizons=(1,), weather_history=weather
    )
    condition = ACTUAL_WEATHER if inputs.temperature is not None else NO_WEATHER
    scored = [
        (card.cv_rmse, key)
        for key in candidates
        if (card := result.scorecard(key, condition)) is not None
        and result.model_failures(key, condition).empty
    ]
    if not scored:
        return model
    return candidates[min(scored)[1]]


def chosen_model(project: Project, name: str) -> tuple[EnergyModel, dict]:
    """The meter's most recently chosen model, refitted from the project's data if it must be.

    Returns the model and the stored recommendation.
    """
    stored = project.results("model", name)
    if not stored:
        raise InputError(
            f"meter '{name}' has no fitted model yet.",
            hint=f"Run: loadledger fit {project.path.name} --meter '{name}'.",
            file=project.path,
        )
    body = stored[-1]["body"]
    try:
        model = model_from_dict(body["model"])
    except RefitNeeded:
        family = body["model"]["family"]
        settings = body["model"].get("settings", {})
        model = MODEL_FAMILIES[family](**settings).fit(meter_inputs(project, name))
    return model, body["choice"]


def _regular_index(index: pd.DatetimeIndex, timezone: str, daily: bool) -> pd.DatetimeIndex:
    """Every interval start from the first to the last (local midnights for daily data)."""
    if len(index) == 0:
        raise InputError("the meter has no readings to model.", hint="Import readings first.")
    if daily:
        local = index.tz_convert(timezone)
        days = pd.date_range(local[0], local[-1], freq=pd.DateOffset(days=1))
        return days.tz_convert("UTC")
    return pd.date_range(index[0], index[-1], freq="h")


def monthly_contributions(model: EnergyModel, inputs: ModelInputs, months: int = 12) -> list[dict]:
    """Each component's share of the model's energy in each of the last ``months`` local months.

    For families that split their prediction into components (base, daily, weekly, annual,
    calendar, heating, cooling, trend); an empty list for the others. Shares are percent of
    the month's predicted energy ("of January's energy, 31 % is heating").
    """
    components = getattr(model, "components", None)
    if components is None or len(inputs.index) == 0:
        return []
    parts = components(inputs.without_energy())
    month = parts.index.tz_convert(inputs.timezone).tz_localize(None).to_period("M")
    totals = parts.groupby(month).sum().iloc[-months:]
    predicted = totals.sum(axis=1)
    rows = []
    for period, row in totals.iterrows():
        shares = (100 * row / predicted[period]).round(2)
        rows.append({"month": str(period), "kWh": float(predicted[period]), **shares.to_dict()})
    return rows
