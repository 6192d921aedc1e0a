"""The ``calendar`` command: show or change the project's campus calendar, or propose one
from the readings."""

from __future__ import annotations

import argparse

from engine.calendar_proposal import with_proposal
from engine.cli import text
from engine.cli.output import emit
from engine.errors import InputError
from engine.project import Project
from engine.reading import ReadOptions
from engine.reading.report import describe_calendar
from engine.steps import calendar_edit


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
    emit(args, report, text.calendar_report)
    return 0
