"""The commands that model: ``profile``, ``fit``, ``budget`` (of a project, or one-shot from
files) and ``track``. Only these load the modelling libraries."""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from pathlib import Path

from engine.cli import text
from engine.cli.accounts_command import create_with_accounts
from engine.cli.budget_options import parse_as_of, request_from_args
from engine.cli.output import emit, named, selected_meters, with_display_units
from engine.cli.progress_line import terminal_progress
from engine.errors import InputError
from engine.export.finance_workbook import write_finance_workbook
from engine.export.profile_workbook import write_profile_workbook
from engine.export.tracking_workbook import write_tracking_workbook
from engine.parallel import start_workers_early
from engine.project import Project
from engine.reading import ReadOptions
from engine.steps import calendar_edit
from engine.steps.adopting import adopt_budget, check_name
from engine.steps.budgeting import budget_project, keep_budget
from engine.steps.cleaning import apply_recommended_everywhere
from engine.steps.fitting import fit_meters, monthly_contributions
from engine.steps.importing import read_project_files
from engine.steps.labels import meter_labels, temperature_unit
from engine.steps.profiling import profile_project_meter
from engine.steps.tracking import track_budget


def profile(args: argparse.Namespace) -> int:
    with Project.open(args.project) as project:
        profiles = [profile_project_meter(project, name)
                    for name in selected_meters(project, args.meter)]  # fmt: skip
        meters = [
            {"name": p.meter.name, "utility": p.meter.utility, "figures": p.key_figures()}
            for p in profiles
        ]
        report = {"project": str(Path(args.project).resolve()), "meters": named(project, meters)}
        labels, shown = meter_labels(project), temperature_unit(project)
    if args.xlsx:
        written = write_profile_workbook(
            args.xlsx, profiles, project=Path(args.project).stem, names=labels,
            temperature_unit=shown,
        )  # fmt: skip
        report["workbook"] = str(written.resolve())
    emit(args, report, text.profile_report)
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
            selected_meters(project, args.meter),
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
        report = {"project": str(project.path), "meters": named(project, meters)}
    emit(args, report, text.fit_report)
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
        with create_with_accounts(path, files, args) as project:
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
    emit(args, report, text.budget_report)
    return 0


def track(args: argparse.Namespace) -> int:
    as_of = parse_as_of(args.as_of) if args.as_of else None
    with Project.open(args.project) as project:
        report = track_budget(project, args.budget, as_of=as_of, **_parallel(args))
        report["meters"] = named(project, report["meters"])
    if args.xlsx:
        report["workbook"] = str(write_tracking_workbook(args.xlsx, report).resolve())
    emit(args, report, text.track_report)
    return 0


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
