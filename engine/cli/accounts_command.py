"""The ``accounts`` command, and what ``--meter-account`` does for ``new`` and a one-shot
``budget``: which bill account each meter belongs to (then only the meter counts in roll-ups)."""

from __future__ import annotations

import argparse
from pathlib import Path

from engine.accounts.utility import account_utility
from engine.cli.output import emit
from engine.project import Project
from engine.steps.account_membership import meter_accounts, parse_pairs, set_meter_accounts
from engine.steps.importing import ImportedFiles, assemble_project, store_files


def create_with_accounts(
    path: str | Path, files: ImportedFiles, args: argparse.Namespace, *, overwrite: bool = False
) -> Project:
    """A new project from ``files`` with the meters' accounts set, in one atomic save."""
    pairs = parse_pairs(args.meter_account)

    def fill(project: Project) -> None:
        store_files(project, files)
        if pairs:
            set_meter_accounts(project, pairs)

    return assemble_project(path, fill, timezone=args.timezone, overwrite=overwrite)


def accounts(args: argparse.Namespace) -> int:
    """List the bill accounts and the meters that belong to them; change that with options."""
    with Project.open(args.project) as project:
        pairs = parse_pairs(args.meter_account)
        if pairs or args.forget:
            set_meter_accounts(project, pairs, clear=args.forget)
        report = {"project": str(project.path), **accounts_report(project)}
    emit(args, report, render)
    return 0


def accounts_report(project: Project) -> dict:
    """Each account with its bills' span and the meters that belong to it."""
    mapping = meter_accounts(project)
    bills = project.load_bills()
    rows = []
    for name, group in bills.groupby("account", sort=True):
        rows.append(
            {
                "name": str(name),
                "utility": account_utility(group),
                "unit_found": str(group["unit_found"].iloc[0]),
                "bills": len(group),
                "first_period_start": f"{group['period_start'].min():%Y-%m-%d}",
                "last_period_end": f"{group['period_end'].max():%Y-%m-%d}",
                "total_kwh": float(group["quantity_kwh"].sum()),
                "meters": sorted(m for m, a in mapping.items() if a == name),
            }
        )
    return {"accounts": rows, "meter_account": mapping}


def render(report: dict) -> str:
    lines = [f"Bill accounts in {report['project']}:"]
    for row in report["accounts"]:
        meters = ", ".join(row["meters"])
        counted = f"measured by {meters} (the meters count)" if meters else "counts in totals"
        lines.append(
            f"  {row['name']}: {row['utility'] or 'utility unknown'}, {row['bills']} bills "
            f"{row['first_period_start']} to {row['last_period_end']}, "
            f"{row['total_kwh']:,.0f} kWh; {counted}"
        )
    if not report["accounts"]:
        lines.append("  none (import bills with loadledger new --bills FILE)")
    return "\n".join(lines) + "\n"
