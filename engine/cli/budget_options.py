"""Turn the budget command's options into a budget request, checking each one."""

from __future__ import annotations

import argparse
from datetime import date

from engine.budget import budget_months
from engine.errors import InputError
from engine.project import Project
from engine.steps.budgeting import BudgetRequest, budget_request


def request_from_args(args: argparse.Namespace, project: Project) -> BudgetRequest:
    """The request the options describe, for ``project`` (checked by the engine)."""
    return budget_request(
        project,
        _months(args),
        as_of=parse_as_of(args.as_of) if args.as_of else None,
        weather=args.weather,
        levels=_levels(args.levels),
        paths=args.paths,
        tariff_file=args.tariff,
        currency=args.currency,
    )


def _months(args: argparse.Namespace) -> list[str]:
    if args.fiscal_year is None:
        return budget_months(start=args.start, months=args.months)
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
        return tuple(int(part) for part in text.split(",") if part.strip())
    except ValueError:
        raise InputError(
            f"--levels '{text}' is not a list of whole percentages.", hint="e.g. --levels 10,50,90"
        ) from None


def parse_as_of(text: str) -> date:
    """An --as-of option's date."""
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise InputError(
            f"--as-of '{text}' is not a date.", hint="Write it as YYYY-MM-DD."
        ) from None
