"""A meter's budget modelling kept in the project file between runs, keyed by what it used.

A budget's slow part is per meter and does not depend on the budget's period, weather
assumption or tariff: the model choice, its fit on the history and its refits before each past
month with their out-of-sample errors. They are kept in the project's ``kept_models`` table under a
key that digests everything they were computed from: the model inputs (readings after the
cleaning log, the calendar's labels, the temperatures), the weather history the wizard used,
the model settings, the number of refitted months, and the engine's version. A later budget
whose key matches reuses them; any change to one of those gives another key, so nothing stale
is ever used. Only the newest :data:`KEEP_PER_METER` entries of a meter are kept.
"""

from __future__ import annotations

from dataclasses import replace
from importlib.metadata import PackageNotFoundError, version

from engine.budget.refits import RollingRefits
from engine.errors import ProjectError
from engine.models import RefitNeeded, model_from_dict
from engine.project import Project
from engine.ready_meters import fingerprint
from engine.wizard import MeterJob, MeterModels

#: Layout of the kept document; a change of layout or of the engine makes old entries misses.
LAYOUT = 1
KEEP_PER_METER = 3


def job_key(job: MeterJob) -> str:
    """The digest of everything :func:`engine.wizard.model_meter` computes ``job`` from."""
    wizard = job.model is None
    return fingerprint(
        job.history,
        job.weather.hourly if wizard and job.weather is not None else None,
        {
            "model": job.model,
            "families": list(job.families or ()) if wizard else None,
            "origins": job.origins if wizard else None,
            "ranking": job.rank_on if wizard else None,
            "refit months": job.refit_months,
            "layout": LAYOUT,
            "engine": _engine_version(),
        },
    )


def kept(project: Project, job: MeterJob, key: str) -> tuple[MeterModels, dict] | None:
    """The meter's kept modelling under ``key`` and the scores kept beside it, or None
    (never a stale one)."""
    body = project.find_kept(job.name, key)
    if body is None:
        return None
    try:
        made = MeterModels(
            name=job.name,
            family=model_from_dict(body["family"]),
            model=model_from_dict(body["model"]),
            comparison=None,
            refits=RollingRefits.from_dict(body["refits"]),
            seconds=0.0,
        )
    except (RefitNeeded, ProjectError, KeyError, TypeError, ValueError):
        return None
    return made, dict(body.get("scorecard", {}))


def keep(project: Project, made: MeterModels, key: str, scorecard: dict) -> None:
    """Keep ``made`` under ``key`` with the backtest scores the budget shows beside it;
    older entries of the meter beyond :data:`KEEP_PER_METER` are dropped."""
    body = {
        "layout": LAYOUT,
        "family": made.family.to_dict(),
        "model": made.model.to_dict(),
        "refits": made.refits.to_dict(),
        "scorecard": scorecard,
    }
    project.put_kept(made.name, key, body, KEEP_PER_METER)


def keep_for_next_budget(project: Project, made: MeterModels, job: MeterJob) -> dict:
    """Keep the fit wizard's work for the budgets that start from its (now stored) choice:
    under the key of a job that names the chosen model. Returns the scores kept beside it."""
    scorecard = chosen_scores(made)
    if made.refits is not None:
        keep(project, made, job_key(replace(job, model=made.family.to_dict())), scorecard)
    return scorecard


def chosen_scores(made: MeterModels) -> dict:
    """The chosen model's row of the wizard's ranking."""
    return ranking_row(made.comparison.choice.to_dict(), made.model.family)


def ranking_row(choice: dict, family: str) -> dict:
    """A family's row of a stored recommendation's ranking ({} when it has none)."""
    return {row["model"]: row for row in choice.get("ranking", [])}.get(family, {})


def _engine_version() -> str:
    try:
        return version("loadledger")
    except PackageNotFoundError:
        return "unknown"
