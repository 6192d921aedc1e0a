"""One function per command: read arguments, call the engine, print the result."""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from pathlib import Path

from engine.calendar_proposal import with_proposal
from engine.cleaning import Finding, accepted_step
from engine.cli import accounts_command, text
from engine.cli.budget_options import parse_as_of, request_from_args
from engine.cli.progress_line import terminal_progress
from engine.errors import InputError
from engine.export.finance_workbook import write_finance_workbook
from engine.export.profile_workbook import write_profile_workbook
from engine.export.tracking_workbook import write_tracking_workbook
from engine.meter_labels import Labels, shown_name
from engine.parallel import start_workers_early
from engine.project import Project
from engine.reading import ReadOptions, describe, read_file
from engine.reading.report import describe_calendar
from engine.steps import calendar_edit
from engine.steps.adopting import adopt_budget, check_name
from engine.steps.budgeting import budget_project, keep_budget
from engine.steps.cleaning import (
    MeterReview,
    SiteDrivers,
    apply_recommended,
    apply_recommended_everywhere,
    rescale_after_shift,
    review_meter,
)
from engine.steps.fitting import fit_meters, monthly_contributions
from engine.steps.importing import read_project_files
from engine.steps.labels import (
    meter_label,
    meter_labels,
    relabelled,
    set_temperature_unit,
    store_label,
    temperature_unit,
)
from engine.steps.profiling import profile_project_meter
from engine.steps.tracking import track_budget


def reading_options(args: argparse.Namespace) -> ReadOptions:
    """The reading settings given on the command line."""
    return ReadOptions(
        timezone=args.timezone,
        dayfirst=args.dayfirst,
        stamps=args.stamps,
        sheet=args.sheet,
        unit=args.unit,
        utility=args.utility,
        values=args.values,
        temperature_unit=args.temperature_unit,
        holidays=args.holidays,
    )


def inspect(args: argparse.Namespace) -> int:
    report = describe(read_file(args.file, reading_options(args), kind=args.kind))
    _emit(args, report, text.file_report)
    return 0


def new(args: argparse.Namespace) -> int:
    if not args.meters and not args.bills:
        raise InputError(
            "a project needs meter readings or bills.",
            hint="Give --meters FILE, --bills FILE, or both.",
        )
    options = reading_options(args)
    files = read_project_files(args.meters, args.bills, args.weather, options, args.calendar)
    project = accounts_command.create_with_accounts(
        args.project, files, args, overwrite=args.overwrite
    )
    with project:
        report = {"project": str(project.path), "files": files.reports(),
                  "summary": _summary(project)}  # fmt: skip
    _emit(args, report, text.new_report)
    return 0


def clean(args: argparse.Namespace) -> int:
    with Project.open(args.project) as project:
        names = _meters(project, args.meter)
        if args.undo is not None:
            project.set_step_active(args.undo, False)
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
        report = {"project": str(project.path), "meters": _named(project, meters)}
    _emit(args, report, text.clean_report)
    return 0


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


def profile(args: argparse.Namespace) -> int:
    with Project.open(args.project) as project:
        profiles = [profile_project_meter(project, name)
                    for name in _meters(project, args.meter)]  # fmt: skip
        meters = [
            {"name": p.meter.name, "utility": p.meter.utility, "figures": p.key_figures()}
            for p in profiles
        ]
        report = {"project": str(Path(args.project).resolve()), "meters": _named(project, meters)}
        labels, shown = meter_labels(project), temperature_unit(project)
    if args.xlsx:
        written = write_profile_workbook(
            args.xlsx, profiles, project=Path(args.project).stem, names=labels,
            temperature_unit=shown,
        )  # fmt: skip
        report["workbook"] = str(written.resolve())
    _emit(args, report, text.profile_report)
    return 0


def fit(args: argparse.Namespace) -> int:
    families = [f.strip() for f in args.models.split(",") if f.strip()] if args.models else None
    if args.origins < 1:
        raise InputError("--origins must be at least 1.", hint="The default is 12.")
    _start_workers(args)
    with Project.open(args.project) as project:
        meters = []
        outcomes = fit_meters(
            project,
            _meters(project, args.meter),
            families=families,
            origins=args.origins,
            **_parallel(args),
        )
        for outcome in outcomes:
            name = outcome.meter
            summary = outcome.backtest.summary()
            meters.append(
                {
                    "name": name,
                    "recommended": outcome.choice.chosen,
                    "reasons": list(outcome.choice.reasons),
                    "warnings": list(outcome.choice.warnings),
                    "ranking": outcome.choice.to_dict()["ranking"],
                    "scorecard": json.loads(summary.to_json(orient="records")),
                    "explanation": _explanation(outcome.model),
                    "contributions": _contributions(outcome),
                    "stored_as": outcome.result_id,
                }
            )
        report = {"project": str(project.path), "meters": _named(project, meters)}
    _emit(args, report, text.fit_report)
    return 0


def budget(args: argparse.Namespace) -> int:
    if bool(args.project) == bool(args.meters or args.bills):
        raise InputError(
            "give either a project file or --meters/--bills files for a one-shot budget.",
            hint="e.g. loadledger budget campus.loadledger --start 2027-01",
        )
    if args.adopt and not args.project:
        raise InputError(
            "a one-shot budget cannot be adopted: it keeps no project file.",
            hint="Create a project with loadledger new, then budget it with --adopt.",
        )
    if args.project and (args.bills or args.meter_account):
        raise InputError(
            "--bills and --meter-account go with a one-shot budget; a project keeps its own.",
            hint="Say which account a meter belongs to with loadledger accounts PROJECT.",
        )
    if args.replace and not args.adopt:
        raise InputError("--replace goes with --adopt NAME.", hint="e.g. --adopt FY2026 --replace")
    if args.project and (args.calendar or args.holidays):
        raise InputError(
            "--calendar and --holidays are for a one-shot budget; a project keeps its calendar.",
            hint=f"Change it with loadledger calendar {args.project} --file FILE --holidays CC.",
        )
    if args.project:
        with Project.open(args.project) as project:
            return _budget_report(args, project)
    _start_workers(args)  # a one-shot budget models every meter: import while the files are read
    with tempfile.TemporaryDirectory(prefix="loadledger-") as folder:
        options = ReadOptions(timezone=args.timezone)
        weather = [args.weather_file] if args.weather_file else []
        files = read_project_files(args.meters, args.bills, weather, options)
        path = Path(folder) / "one-shot.loadledger"
        with accounts_command.create_with_accounts(path, files, args) as project:
            apply_recommended_everywhere(project)
            calendar_words = calendar_edit.settle_one_shot(
                project,
                file=args.calendar,
                holidays=args.holidays,
                as_of=parse_as_of(args.as_of) if args.as_of else None,
                options=options,
            )
            return _budget_report(args, project, calendar_words)


def _budget_report(
    args: argparse.Namespace, project: Project, calendar_words: dict | None = None
) -> int:
    request = request_from_args(args, project)
    adopt_as = check_name(project, args.adopt, replace=args.replace) if args.adopt else None
    with project.transaction():  # the meters' modelling, the run and its adoption: one save
        outcome = budget_project(project, request, **_parallel(args))
        if calendar_words:
            outcome.run.assumptions["calendar"] = calendar_words
        keep_budget(project, outcome)
        if adopt_as:
            adopt_budget(project, adopt_as, outcome, request, replace=args.replace)
    labels = meter_labels(project)
    report = outcome.run.to_json()  # as kept in the project: the JSON stays the run's own
    if not args.json:  # the text names meters as the project does, in the units read in
        report["meters"] = [with_display_units(meter, labels) for meter in report["meters"]]
    if adopt_as:
        report["adopted"] = adopt_as
    if args.xlsx:
        written = write_finance_workbook(
            args.xlsx,
            outcome.run,
            quality=outcome.quality,
            steps=outcome.steps,
            scorecards=outcome.scorecards,
            data_range=outcome.data_range,
            project=project.path.stem if args.project else None,
            labels=labels,
        )
        report["workbook"] = str(written.resolve())
    _emit(args, report, text.budget_report)
    return 0


def track(args: argparse.Namespace) -> int:
    as_of = parse_as_of(args.as_of) if args.as_of else None
    with Project.open(args.project) as project:
        report = track_budget(project, args.budget, as_of=as_of, **_parallel(args))
        report["meters"] = _named(project, report["meters"])
    if args.xlsx:
        report["workbook"] = str(write_tracking_workbook(args.xlsx, report).resolve())
    _emit(args, report, text.track_report)
    return 0


def _summary(project: Project) -> dict:
    """What the project holds, its meters with their display names, and the temperature unit."""
    report = project.summary()
    report["meters"] = _named(project, report["meters"])
    return report | {"temperature_unit": temperature_unit(project)}


def _named(project: Project, meters: list[dict]) -> list[dict]:
    """Each meter's report with its display name added (``name`` stays the raw name)."""
    labels = meter_labels(project)
    return [meter | {"display_name": shown_name(labels, meter["name"])} for meter in meters]


def with_display_units(meter: dict, labels: Labels) -> dict:
    """A budgeted meter with its display name and, when it was read in another unit than kWh,
    its period total's mean and quantiles in that unit."""
    label = labels.get(meter["name"])
    if label is None:
        return meter
    added: dict = {"display_name": label.shown}
    if label.other_unit is not None:
        total = meter["total"]
        added["in_read_unit"] = {
            "unit": label.read_unit,
            "mean": label.in_read_unit(total["mean"]),
            "quantiles": {k: label.in_read_unit(v) for k, v in total["quantiles"].items()},
        }
    return meter | added


def _parallel(args: argparse.Namespace) -> dict:
    """Where meters are modelled, and progress on stderr when it is a terminal."""
    if args.workers is not None and args.workers < 1:
        raise InputError("--workers must be at least 1.", hint="Leave it out to use every core.")
    return {
        "workers": args.workers,
        "scheduler": args.scheduler,
        "progress": terminal_progress(sys.stderr),
    }


def _start_workers(args: argparse.Namespace) -> None:
    """For a command that will model meters in local worker processes: let them import the
    modelling code while this process reads the project or the files."""
    if args.scheduler is None and args.workers != 1:
        start_workers_early()


def _contributions(outcome) -> list[dict]:
    if outcome.model is None:
        return []
    return monthly_contributions(outcome.model, outcome.inputs)


def _explanation(model) -> list[dict]:
    """The chosen model's statements: its effects in physical units, or how it forecasts."""
    if model is None:
        return []
    return json.loads(model.coefficients_table().to_json(orient="records"))


def _meters(project: Project, only: str | None) -> list[str]:
    names = project.meter_names()
    if only is None:
        return names
    if only not in names:
        raise InputError(
            f"the project has no meter '{only}'.",
            hint=f"Its meters are: {', '.join(names)}.",
            file=project.path,
        )
    return [only]


def calendar(args: argparse.Namespace) -> int:
    if args.accept and not args.propose:
        raise InputError("--accept goes with --propose.", hint="e.g. --propose --accept")
    with Project.open(args.project) as project:
        changed = current = calendar_edit.current(project)
        proposed = calendar_edit.proposal(project) if args.propose else None
        if args.accept:
            changed = with_proposal(changed, proposed)
        if args.file:
            options = ReadOptions(dayfirst=args.dayfirst)
            changed = calendar_edit.with_file(changed, args.file, options)
        if args.holidays:
            changed = calendar_edit.with_holidays(changed, args.holidays)
        if args.copy_forward:
            changed = calendar_edit.copied_forward(changed)
        if changed != current:
            calendar_edit.store(project, changed)
        report = {"project": str(project.path), "changed": changed != current,
                  **describe_calendar(changed)}  # fmt: skip
        if proposed is not None:
            report["proposal"] = proposed.to_dict()
    _emit(args, report, text.calendar_report)
    return 0


def meter(args: argparse.Namespace) -> int:
    changes = {
        "display_name": args.display_name,
        "utility": args.utility,
        "read_unit": args.read_unit,
    }
    asked = {key: value for key, value in changes.items() if value is not None}
    if asked and args.name is None:
        raise InputError(
            "say which meter to change.",
            hint="e.g. loadledger meter campus.loadledger 'Gas main' --read-unit therm",
        )
    with Project.open(args.project) as project:
        if args.name is not None:
            meter_label(project, args.name)  # an unknown meter is refused before any change
        with project.transaction():
            if asked:
                store_label(project, relabelled(project, args.name, **asked))
            if args.temperature_unit:
                set_temperature_unit(project, args.temperature_unit)
        labels = meter_labels(project)
        shown = [labels[args.name]] if args.name is not None else list(labels.values())
        report = {
            "project": str(project.path),
            "changed": bool(asked or args.temperature_unit),
            "temperature_unit": temperature_unit(project),
            "meters": [label.as_dict() for label in shown],
        }
    _emit(args, report, text.meter_report)
    return 0


def accounts(args: argparse.Namespace) -> int:
    return accounts_command.accounts(args, _emit)


def info(args: argparse.Namespace) -> int:
    with Project.open(args.project) as project:
        report = _summary(project)
        report["adopted_budgets"] = project.adopted_budget_names()
    _emit(args, report, text.project_report)
    return 0


def _emit(args: argparse.Namespace, report: dict, render) -> None:
    if args.json:
        json.dump(report, sys.stdout, indent=2, ensure_ascii=False, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(render(report))
