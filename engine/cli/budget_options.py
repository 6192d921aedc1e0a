"""Turn the budget command's options into a budget request, checking each one."""

from __future__ import annotations

import argparse
from datetime import date
from pathlib import Path

from engine.budget import budget_months
from engine.budgeting import WEATHER_CHOICES, BudgetRequest, last_reading_day
from engine.errors import InputError
from engine.project import Project
from engine.reading import ReadOptions, read_weather_file
from engine.tariffs import read_tariff


def budget_request(args: argparse.Namespace, project: Project) -> BudgetRequest:
    """The request the options describe, for ``project``."""
    as_of = _as_of(args.as_of) if args.as_of else last_reading_day(project)
    given = None
    if args.weather not in WEATHER_CHOICES:
        if not Path(args.weather).exists():
            raise InputError(
                f"--weather '{args.weather}' is neither typical, past-years nor a file.",
                hint="Give typical, past-years, or the path of a temperature file.",
            )
        given = read_weather_file(args.weather, ReadOptions(timezone=project.timezone)).temps_c
    return BudgetRequest(
        months=_months(args),
        as_of=as_of,
        weather=args.weather,
        levels=_levels(args.levels),
        paths=_paths(args.paths),
        tariff=read_tariff(args.tariff) if args.tariff else None,
        given_weather=given,
    )


def _months(args: argparse.Namespace) -> list[str]:
    if args.fiscal_year is None:
        return budget_months(start=args.start, months=args.months or 1)
    start_month = int(args.start[5:7]) if len(args.start) == 7 else 0
    months = budget_months(fiscal_year=args.fiscal_year, fiscal_start_month=start_month)
    if months[0] != args.start:
        raise InputError(
            f"fiscal year {args.fiscal_year} beginning in month {start_month} starts in "
            f"{months[0]}, not {args.start}.",
            hint=f"Use --start {months[0]}, or the fiscal year that begins in {args.start}.",
        )
    return months


def _levels(text: str) -> tuple[int, ...]:
    try:
        levels = tuple(sorted(int(part) for part in text.split(",") if part.strip()))
    except ValueError:
        raise InputError(
            f"--levels '{text}' is not a list of whole percentages.", hint="e.g. --levels 10,50,90"
        ) from None
    if 50 not in levels or not all(0 < level < 100 for level in levels):
        raise InputError(
            f"--levels '{text}' must lie between 0 and 100 and include 50.",
            hint="e.g. --levels 10,50,90 or 5,50,95",
        )
    return levels


def _paths(paths: int) -> int:
    if paths < 100:
        raise InputError(f"--paths {paths} is too few for a range.", hint="Use 100 or more.")
    return paths


def _as_of(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise InputError(
            f"--as-of '{text}' is not a date.", hint="Write it as YYYY-MM-DD."
        ) from None
