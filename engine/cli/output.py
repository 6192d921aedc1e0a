"""What the commands share: the reading settings given, the meters asked for, meters' display
names, and printing a report as text or JSON."""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Callable

from engine.errors import InputError
from engine.meter_labels import Labels, shown_name
from engine.project import Project
from engine.reading import ReadOptions
from engine.steps.labels import meter_labels, temperature_unit


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


def selected_meters(project: Project, only: str | None) -> list[str]:
    """Every meter of the project, or only the one ``--meter`` names (refused if unknown)."""
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


def project_summary(project: Project) -> dict:
    """What the project holds, its meters with their display names, and the temperature unit."""
    report = project.summary()
    report["meters"] = named(project, report["meters"])
    return report | {"temperature_unit": temperature_unit(project)}


def named(project: Project, meters: list[dict]) -> list[dict]:
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


def emit(args: argparse.Namespace, report: dict, render: Callable[[dict], str]) -> None:
    """Print ``report``: as JSON with ``--json``, else as ``render`` words it."""
    if args.json:
        json.dump(report, sys.stdout, indent=2, ensure_ascii=False, allow_nan=False)
        sys.stdout.write("\n")
    else:
        sys.stdout.write(render(report))
