"""Models for the meters of a project: the fit wizard run on the project's meters (side by
side, see :mod:`engine.parallel`) and the chosen model kept in the project file as plain JSON.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import pandas as pd

from engine.backtest import BacktestResult
from engine.budget.refits import REFIT_MONTHS
from engine.defaults import DEFAULT_ORIGINS
from engine.errors import InputError
from engine.meter_labels import naming_progress
from engine.models import MODEL_FAMILIES, EnergyModel, ModelInputs, RefitNeeded, model_from_dict
from engine.parallel import run_per_meter
from engine.progress import Progress, step
from engine.project import Project
from engine.selection import ModelChoice
from engine.steps.kept_models import keep_for_next_budget
from engine.steps.labels import meter_labels
from engine.steps.prepared_site import prepare_site
from engine.weather import TypicalYears
from engine.wizard import (
    MeterJob,
    MeterModels,
    learn_typical_years,
    model_meter,
)


@dataclass
class FitOutcome:
    """The backtest, the recommendation and the chosen model (fitted on all the history)."""

    meter: str
    backtest: BacktestResult
    choice: ModelChoice
    model: EnergyModel | None
    result_id: int | None
    inputs: ModelInputs  # what the models were fitted on, for explaining the chosen one


def meter_inputs(project: Project, name: str) -> ModelInputs:
    """One meter's cleaned energy with temperature and calendar labels, ready for a model."""
    return prepare_site(project, [name]).meter(name).inputs


def hourly_weather(project: Project) -> pd.Series | None:
    """The project's weather as hourly °C with short gaps filled; None without weather."""
    return prepare_site(project, []).hourly


def fit_meters(
    project: Project,
    names: Sequence[str] | None = None,
    *,
    families: Sequence[str] | None = None,
    origins: int = DEFAULT_ORIGINS,
    workers: int | None = None,
    scheduler: str | None = None,
    progress: Progress | None = None,
) -> list[FitOutcome]:
    """Backtest the families on each meter, recommend one, fit it on all data and keep it.

    The chosen model's refits before each of the last months, which a budget needs, are
    kept too (:func:`engine.steps.kept_models.keep_for_next_budget`; half of them come free from
    the backtest), so the first budget after a fit does not make them. Meters run side by
    side (``workers`` local processes, by default one per core when the site is large enough
    to repay them, or the Dask scheduler at ``scheduler``); every meter's result is kept in
    one save. A meter that fails is reported after the others are kept.
    """
    progress = naming_progress(progress, meter_labels(project))
    step(progress, 0.0, "preparing the meters")
    site = prepare_site(project, names)
    weather = None if site.hourly is None else TypicalYears(site.hourly, site.timezone)
    learn_typical_years(weather, [ready.inputs for ready in site.meters.values()], origins)
    jobs = [
        MeterJob(name, ready.inputs, weather, None, _tuple(families), origins, REFIT_MONTHS)
        for name, ready in site.meters.items()
    ]
    part = progress.part(0.05, 0.95) if progress is not None else None
    results, failures = run_per_meter(
        model_meter, jobs, workers=workers, scheduler=scheduler, progress=part
    )
    outcomes = []
    with project.transaction():
        for job in jobs:
            if job.name in results:
                outcomes.append(keep_fit(project, results[job.name], job.history))
                if results[job.name].model is not None:
                    keep_for_next_budget(project, results[job.name], job)
    step(progress, 1.0, "done")
    if failures:
        raise failures[0].error()
    return outcomes


def fit_meter(
    project: Project,
    name: str,
    *,
    families: Sequence[str] | None = None,
    origins: int = DEFAULT_ORIGINS,
    progress: Progress | None = None,
) -> FitOutcome:
    """:func:`fit_meters` for one meter, in this process."""
    (outcome,) = fit_meters(
        project, [name], families=families, origins=origins, workers=1, progress=progress
    )
    return outcome


def keep_fit(project: Project, made: MeterModels, inputs: ModelInputs) -> FitOutcome:
    """Store the wizard's backtest and the chosen model of one meter (when it chose one)."""
    comparison = made.comparison
    result_id = None
    if made.model is not None:
        with project.transaction():
            project.add_result(
                "backtest", made.name, "rolling-origin backtest", comparison.backtest.to_dict()
            )
            result_id = project.add_result(
                "model",
                made.name,
                made.model.label,
                {"model": made.model.to_dict(), "choice": comparison.choice.to_dict()},
            )
    return FitOutcome(
        made.name, comparison.backtest, comparison.choice, made.model, result_id, inputs
    )


def chosen_model(project: Project, name: str) -> tuple[EnergyModel, dict]:
    """The meter's most recently chosen model, refitted from the project's data if it must be.

    Returns the model and the stored recommendation.
    """
    body = _last_choice(project, name)
    try:
        model = model_from_dict(body["model"])
    except RefitNeeded as stored_unfitted:
        model = stored_unfitted.unfitted.fit(meter_inputs(project, name))
    return model, body["choice"]


def _last_choice(project: Project, name: str) -> dict:
    """The meter's last stored model result (``model`` and ``choice``)."""
    stored = project.last_result("model", name)
    if stored is None:
        raise InputError(
            f"meter '{name}' has no fitted model yet.",
            hint=f"Run: loadledger fit {project.path.name} --meter '{name}'.",
            file=project.path,
        )
    return stored["body"]


def use_ranked_model(project: Project, name: str, model: str) -> tuple[EnergyModel, dict]:
    """Keep another model of the meter's last ranking as its choice, fitted on all the history
    with the settings its backtest ran (tuned orders included); no new backtest is run.

    The stored recommendation keeps its ranking and scores; ``chosen`` becomes ``model`` and
    the first reason says it was chosen over the recommendation (choosing the recommended
    model again restores the wizard's choice). Returns the model and choice.
    """
    choice = _last_choice(project, name)["choice"]  # the model itself is not needed
    ranked = {row["model"]: row for row in choice["ranking"]}
    if model not in ranked:
        raise InputError(
            f"'{model}' is not in the last ranking of meter '{name}' "
            f"({', '.join(ranked) or 'it ranks no model'}).",
            hint="Choose a model from the ranking, or fit again with that family ticked.",
            file=project.path,
        )
    backtest = project.last_result("backtest", name)
    info = BacktestResult.from_dict(backtest["body"]).models.get(model) if backtest else None
    if info is None:
        raise InputError(
            f"the backtest of meter '{name}' that ranked '{model}' is not kept.",
            hint="Fit the meter again to rank its models afresh.",
            file=project.path,
        )
    fitted = MODEL_FAMILIES[info.family](**info.settings).fit(meter_inputs(project, name))
    chosen = _hand_choice(choice, model, ranked)
    with project.transaction():
        project.add_result(
            "model", name, fitted.label, {"model": fitted.to_dict(), "choice": chosen}
        )
    return fitted, chosen


def _hand_choice(choice: dict, model: str, ranked: dict[str, dict]) -> dict:
    """The stored choice with ``model`` in use. The wizard's own recommendation (its model,
    reasons and residual diagnostics) is kept under ``recommendation``, so choosing the
    recommended model again gives the wizard's choice back as it was."""
    wizard = choice.get("recommendation") or {
        key: choice[key] for key in ("chosen", "reasons", "diagnostics")
    }
    if model == wizard["chosen"]:
        return {key: value for key, value in choice.items() if key != "recommendation"} | wizard
    recommended = ranked.get(wizard["chosen"], {}).get("name", wizard["chosen"])
    reason = (
        f"{ranked[model]['name']} was chosen by hand over the recommended {recommended}; "
        "the ranking and scores are the backtest's."
    )
    # The residual diagnostics were the recommended model's: they do not describe this one.
    return {
        **choice,
        "chosen": model,
        "reasons": [reason, *wizard["reasons"]],
        "diagnostics": None,
        "recommendation": wizard,
    }


@dataclass(frozen=True)
class ChoiceChange:
    """A model result kept by hand (:func:`use_ranked_model`), as stored, so the choice can be
    taken back (the meter's previous model is its choice again) and kept again."""

    meter: str
    stored: tuple  # the result as stored (``results_table.ROW_COLUMNS``)


def newest_model_id(project: Project, name: str) -> int | None:
    """The id of the meter's newest model result (its current choice), or None."""
    newest = project.last_result("model", name)
    return None if newest is None else int(newest["id"])


def choice_since(project: Project, name: str, before: int | None) -> ChoiceChange | None:
    """The model kept for ``name`` since the result ``before`` was its newest, or None."""
    now = newest_model_id(project, name)
    if now is None or now == before:
        return None
    return ChoiceChange(name, project.stored_result(now))


def take_back_choice(project: Project, change: ChoiceChange) -> None:
    """Undo a kept choice: the meter's model before it is its choice again."""
    project.take_result(change.stored[0])


def keep_choice_again(project: Project, change: ChoiceChange) -> None:
    """Redo a kept choice taken back with :func:`take_back_choice`."""
    project.put_back_result(change.stored)


def monthly_contributions(model: EnergyModel, inputs: ModelInputs, months: int = 12) -> list[dict]:
    """Each component's share of the model's energy in each of the last ``months`` local months.

    For families that split their prediction into components (base, daily, weekly, annual,
    calendar, heating, cooling, trend); an empty list for the others. Shares are percent of
    the month's predicted energy ("of January's energy, 31 % is heating").
    """
    if len(inputs.index) == 0:
        return []
    parts = model.components(inputs.without_energy())
    if parts.columns.empty:
        return []
    month = parts.index.tz_convert(inputs.timezone).tz_localize(None).to_period("M")
    totals = parts.groupby(month).sum().iloc[-months:]
    predicted = totals.sum(axis=1)
    rows = []
    for period, row in totals.iterrows():
        shares = (100 * row / predicted[period]).round(2)
        rows.append({"month": str(period), "kWh": float(predicted[period]), **shares.to_dict()})
    return rows


def _tuple(names: Sequence[str] | None) -> tuple[str, ...] | None:
    return tuple(names) if names else None
