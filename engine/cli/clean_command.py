"""The ``clean`` command: review every meter's findings, log fixes, accepted findings and
rescales, or undo a step."""

from __future__ import annotations

import argparse

from engine.cleaning import Finding, accepted_step
from engine.cli import text
from engine.cli.output import emit, named, selected_meters
from engine.errors import InputError
from engine.project import Project
from engine.steps.cleaning import (
    MeterReview,
    SiteDrivers,
    apply_recommended,
    rescale_after_shift,
    review_meter,
)


def clean(args: argparse.Namespace) -> int:
    with Project.open(args.project) as project:
        names = selected_meters(project, args.meter)
        if args.undo is not None:
            _undo(project, args.undo)
        meters = []
        drivers = SiteDrivers.of(project)
        with project.transaction():  # every meter's fixes in one save
            _accept(project, names, args.accept, drivers)
            _rescale(project, names, args.rescale, drivers)
            reviews = [_reviewed(project, name, args.apply_recommended, drivers) for name in names]
        for name, (review, applied) in zip(names, reviews, strict=True):
            meters.append(
                {
                    "name": name,
                    "utility": review.meter.utility,
                    "timezone": review.meter.timezone,
                    "findings": [f.to_dict() for f in review.findings],
                    "applied": [s for s in review.steps if s["id"] in applied],
                    "steps": review.steps,
                    "quality": review.quality(),
                }
            )
        report = {"project": str(project.path), "meters": named(project, meters)}
    emit(args, report, text.clean_report)
    return 0


def _undo(project: Project, step_id: int) -> None:
    """Undo a step of the cleaning log; an id not in the log is refused."""
    known = {step["id"] for step in project.cleaning_steps(active_only=False)}
    if step_id not in known:
        raise InputError(
            f"{project.path.name}: the cleaning log has no step {step_id}.",
            hint="Take step ids from loadledger clean --json (each meter's steps).",
        )
    project.set_step_active(step_id, False)


def _accept(project: Project, names: list[str], ids: list[str], drivers: SiteDrivers) -> list[int]:
    """Log each finding of ``ids`` as accepted (:func:`accepted_step`); an id no meter of
    ``names`` shows now is refused before anything is saved."""
    if not ids:
        return []
    shown = _shown(project, names, ids, drivers)
    return [project.add_cleaning_step(accepted_step(shown[f][1]).to_dict()) for f in ids]


def _rescale(project: Project, names: list[str], asked: list[str], drivers: SiteDrivers) -> None:
    """Log each ``FINDING=FACTOR`` of ``asked`` as a rescale of that level shift's readings."""
    factors = dict(_finding_factor(text) for text in asked)
    shown = _shown(project, names, list(factors), drivers)
    for finding_id, factor in factors.items():
        review, finding = shown[finding_id]
        if finding.kind != "level_shift":
            raise InputError(
                f"finding {finding_id} is a {finding.kind.replace('_', ' ')}, not a level shift; "
                "only a level shift's readings are rescaled.",
                hint="Take the id of a level_shift finding from loadledger clean --json.",
                file=project.path,
            )
        rescale_after_shift(project, review, finding, factor)


def _finding_factor(text: str) -> tuple[str, float]:
    finding, _, factor = text.partition("=")
    try:
        value = float(factor)
    except ValueError:
        value = float("nan")
    if not finding or not (value > 0 and value != float("inf")):
        raise InputError(
            f"--rescale {text}: give a finding id and a positive factor as FINDING=FACTOR.",
            hint="e.g. --rescale 5cdae6112dc8116f=2 for a meter whose multiplier halved.",
        )
    return finding, value


def _shown(
    project: Project, names: list[str], ids: list[str], drivers: SiteDrivers
) -> dict[str, tuple[MeterReview, Finding]]:
    """The meter review and finding of each id in ``ids``; an id no meter of ``names`` shows
    now is refused before anything is saved."""
    if not ids:
        return {}
    reviews = [review_meter(project, name, drivers=drivers) for name in names]
    shown = {f.id: (review, f) for review in reviews for f in review.findings}
    unknown = [finding for finding in ids if finding not in shown]
    if unknown:
        raise InputError(
            f"no finding {', '.join(unknown)} is shown now on "
            f"{'meter ' + names[0] if len(names) == 1 else 'any meter'}.",
            hint="Take finding ids from loadledger clean --json (an accepted or fixed finding no "
            "longer shows).",
            file=project.path,
        )
    return shown


def _reviewed(project: Project, name: str, apply: bool, drivers: SiteDrivers) -> tuple:
    """The meter's review after logging its recommended fixes when ``apply``, and their ids."""
    review = review_meter(project, name, drivers=drivers)
    applied = apply_recommended(project, review) if apply else []
    again = review_meter(project, name, drivers=drivers) if applied else review
    return again, applied
