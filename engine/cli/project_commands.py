"""The quick commands: ``inspect`` a file, create a project (``new``), ``info`` on it, and
``meter`` names and units. They load no modelling code, so they answer in well under a second."""

from __future__ import annotations

import argparse

from engine.cli import text
from engine.cli.accounts_command import create_with_accounts
from engine.cli.output import emit, project_summary, reading_options
from engine.errors import InputError
from engine.project import Project
from engine.reading import describe, read_file
from engine.steps.importing import read_project_files
from engine.steps.labels import (
    meter_label,
    meter_labels,
    relabelled,
    set_temperature_unit,
    store_label,
    temperature_unit,
)


def inspect(args: argparse.Namespace) -> int:
    report = describe(read_file(args.file, reading_options(args), kind=args.kind))
    emit(args, report, text.file_report)
    return 0


def new(args: argparse.Namespace) -> int:
    if not args.meters and not args.bills:
        raise InputError(
            "a project needs meter readings or bills.",
            hint="Give --meters FILE, --bills FILE, or both.",
        )
    options = reading_options(args)
    files = read_project_files(args.meters, args.bills, args.weather, options, args.calendar)
    project = create_with_accounts(args.project, files, args, overwrite=args.overwrite)
    with project:
        report = {"project": str(project.path), "files": files.reports(),
                  "summary": project_summary(project)}  # fmt: skip
    emit(args, report, text.new_report)
    return 0


def info(args: argparse.Namespace) -> int:
    with Project.open(args.project) as project:
        report = project_summary(project)
        report["adopted_budgets"] = project.adopted_budget_names()
    emit(args, report, text.project_report)
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
    emit(args, report, text.meter_report)
    return 0
