"""Gather what the Models screen shows about one meter's models from the engine — without Qt.

Two ways in, one report out: :func:`fit_report` runs the fit wizard
(:func:`engine.steps.fitting.fit_meter`), :func:`stored_report` reads the meter's last chosen
model and backtest from the project file without refitting. Both turn the engine's
recommendation (``ModelChoice.to_dict()``), its backtest and the chosen model into a
:class:`ModelReport`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from engine.backtest import BacktestResult
from engine.defaults import DEFAULT_ORIGINS
from engine.errors import ProjectError
from engine.fit_brief import ReadingsBrief, ranking_sentence, readings_brief, recommended
from engine.meter_labels import naming_progress
from engine.models import MODEL_FAMILIES, EnergyModel
from engine.progress import Progress, step
from engine.project import Project
from engine.steps.fitting import chosen_model, fit_meter, use_ranked_model
from engine.steps.labels import meter_labels, temperature_unit
from engine.steps.prepared_site import prepare_site
from engine.wizard import DEFAULT_FAMILIES, default_families

#: The residual groupings of the engine's diagnostics, with the words the screen uses.
RESIDUAL_GROUPINGS: dict[str, str] = {
    "hour": "hour of day",
    "weekday": "weekday",
    "month": "month",
}
_EPOCH = pd.Timestamp("1970-01-01")
_SECOND = pd.Timedelta(seconds=1)


@dataclass(frozen=True)
class FitRequest:
    """Which meter to fit, with which model families and how many backtest origins."""

    meter: str
    families: tuple[str, ...]
    origins: int = DEFAULT_ORIGINS


@dataclass(frozen=True)
class BacktestTrace:
    """Actual and one-month-ahead predicted energy over the backtest, ready to draw.

    ``x`` is local wall-clock time in Unix seconds (local times drawn as if they were UTC);
    ``resolution`` says what a point is ("hour", "day" or "month").
    """

    x: np.ndarray
    actual: np.ndarray
    predicted: np.ndarray
    resolution: str
    condition: str


@dataclass
class ModelReport:
    """Everything the Models screen shows about one meter's recommendation.

    ``ranking`` is the engine's ranking table; ``coefficients`` the chosen model's statements
    in physical units, or how it forecasts (None, with ``coefficients_note``, without a model);
    ``residuals`` maps each of :data:`RESIDUAL_GROUPINGS` to the recommended model's
    residual % by group (the engine's words on its largest systematic miss are among the
    ``reasons``).
    ``kept`` says when and where the model was stored; ``backtest`` is the engine's backtest
    (per-interval forecasts only when just fitted: the project keeps month totals).
    ``recommended`` is the wizard's own choice (``chosen`` differs after a choice by hand)
    and ``summary`` says it in one sentence with its numbers.
    """

    meter: str
    chosen: str | None
    chosen_label: str
    recommended: str | None
    recommended_label: str
    summary: str
    condition: str
    ranking: pd.DataFrame
    reasons: tuple[str, ...]
    warnings: tuple[str, ...]
    coefficients: pd.DataFrame | None = None
    coefficients_note: str = ""
    trace: BacktestTrace | None = None
    trace_note: str = ""
    residuals: dict[str, pd.Series] = field(default_factory=dict)
    residual_condition: str = ""
    kept: str = ""
    backtest: BacktestResult | None = None


@dataclass(frozen=True)
class MeterView:
    """What the fit walk-through shows of a meter on opening: its readings, its kept model."""

    readings: ReadingsBrief
    report: ModelReport | None


def ticked_families(interval: pd.Timedelta | None) -> tuple[str, ...]:
    """The families ticked by default: the wizard's own choice for the meter's resolution."""
    if interval is None:
        return DEFAULT_FAMILIES
    return default_families(interval)


def family_choices() -> list[tuple[str, str, bool]]:
    """Every model family as (identifier, label, explainable), in the engine's order."""
    return [(name, family.label, family.explainable) for name, family in MODEL_FAMILIES.items()]


def fit_report(
    project: Project, request: FitRequest, progress: Progress | None = None
) -> ModelReport:
    """Backtest and compare the requested families on the meter, keep the recommended model."""
    outcome = fit_meter(
        project,
        request.meter,
        families=list(request.families),
        origins=request.origins,
        progress=progress,
    )
    kept = f"Kept in {project.path.name}" if outcome.result_id is not None else ""
    choice = outcome.choice.to_dict()
    shown = temperature_unit(project)
    return _report(request.meter, choice, outcome.backtest, outcome.model, kept, shown)


def meter_view(project: Project, meter: str, progress: Progress | None = None) -> MeterView:
    """The meter's readings brief and its stored model (:func:`stored_report`)."""
    progress = naming_progress(progress, meter_labels(project))
    step(progress, 0.0, f"reading the cleaned readings of '{meter}'")
    readings = readings_brief(prepare_site(project, [meter]).meter(meter))
    part = progress.part(0.5, 1.0) if progress is not None else None
    return MeterView(readings, stored_report(project, meter, part))


def stored_report(
    project: Project, meter: str, progress: Progress | None = None
) -> ModelReport | None:
    """The meter's last chosen model and backtest as stored; None when it has no model yet."""
    stored = project.last_result("model", meter)
    if stored is None:
        return None
    step(progress, 0.1, f"reading the model of '{meter}'")
    model, choice = chosen_model(project, meter)
    backtest = None
    last_backtest = project.last_result("backtest", meter)
    if last_backtest is not None:
        try:
            backtest = BacktestResult.from_dict(last_backtest["body"])
        except ProjectError:
            backtest = None
    kept = f"Fitted {stored['created_at'][:16].replace('T', ' ')} UTC, kept in the project"
    step(progress, 1.0, "model read")
    return _report(meter, choice, backtest, model, kept, temperature_unit(project))


def use_model_report(
    project: Project, meter: str, model: str, progress: Progress | None = None
) -> ModelReport | None:
    """Keep ``model`` of the meter's ranking as its choice (:func:`use_ranked_model`)."""
    progress = naming_progress(progress, meter_labels(project))
    step(progress, 0.1, f"fitting the chosen model of '{meter}' on all its history")
    use_ranked_model(project, meter, model)
    return stored_report(project, meter, progress)


def _report(
    meter: str,
    choice: dict,
    backtest: BacktestResult | None,
    model: EnergyModel | None,
    kept: str,
    temperature: str = "°C",
) -> ModelReport:
    """The report of a meter's choice; the model's statements with temperatures in
    ``temperature`` (the project's °C or °F)."""
    ranking = pd.DataFrame(choice["ranking"])
    chosen = choice["chosen"]
    labels = dict(zip(ranking.get("model", []), ranking.get("name", []), strict=True))
    wizard = recommended(choice)
    report = ModelReport(
        meter=meter,
        chosen=chosen,
        chosen_label=labels.get(chosen, chosen or ""),
        recommended=wizard,
        recommended_label=labels.get(wizard, wizard or ""),
        summary=ranking_sentence(choice, backtest),
        condition=choice["condition"],
        ranking=ranking,
        reasons=tuple(choice["reasons"]),
        warnings=tuple(choice["warnings"]),
        kept=kept,
        backtest=backtest,
    )
    if chosen is None:
        return report
    # The residual diagnostics are the recommended model's (kept aside after a hand choice).
    diagnostics = (choice.get("recommendation") or choice).get("diagnostics") or {}
    report.residual_condition = diagnostics.get("weather") or choice["condition"]
    _add_coefficients(report, model, temperature)
    _add_trace(report, backtest)
    _add_residuals(report, diagnostics)
    return report


def _add_coefficients(report: ModelReport, model: EnergyModel | None, temperature: str) -> None:
    if model is None:
        report.coefficients_note = "No fitted model is stored: fit again to see what it says."
        return
    report.coefficients = model.coefficients_table(temperature)


def _add_trace(report: ModelReport, backtest: BacktestResult | None) -> None:
    if backtest is None:
        report.trace_note = "No backtest is stored for this model: fit again to see one."
        return
    condition = report.residual_condition
    if backtest.forecasts is not None:
        frame = _lead_one(backtest.forecasts, report.chosen, condition)
        local = pd.DatetimeIndex(frame["start"]).tz_convert(backtest.timezone).tz_localize(None)
        resolution = "day" if backtest.interval >= pd.Timedelta(hours=23) else "hour"
    else:
        frame = _lead_one(backtest.months, report.chosen, condition)
        local = pd.PeriodIndex(frame["month"], freq="M").to_timestamp()
        resolution = "month"
    if frame.empty:
        report.trace_note = f"The backtest has no forecasts of this model under {condition}."
        return
    report.trace = BacktestTrace(
        x=((local - _EPOCH) / _SECOND).to_numpy(dtype=np.float64),
        actual=frame["actual kWh"].to_numpy(dtype=np.float64),
        predicted=frame["predicted kWh"].to_numpy(dtype=np.float64),
        resolution=resolution,
        condition=condition,
    )


def _lead_one(frame: pd.DataFrame, model: str, condition: str) -> pd.DataFrame:
    rows = frame[(frame["model"] == model) & (frame["weather"] == condition) & (frame["lead"] == 1)]
    order = "start" if "start" in rows else "month"
    return rows.sort_values(order)


def _add_residuals(report: ModelReport, diagnostics: dict | None) -> None:
    if not diagnostics:
        return
    for key in RESIDUAL_GROUPINGS:
        records = diagnostics.get(f"by_{key}") or []
        table = pd.DataFrame(records, columns=[key, "residual %"])
        report.residuals[key] = table.set_index(key)["residual %"].astype(np.float64)
