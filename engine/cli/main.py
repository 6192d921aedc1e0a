"""Parse the command line, run one command, print text or JSON, and exit 0 or 2.

Exit status: 0 success; 2 bad input or a project that cannot be used (one line on stderr naming
the file, sheet, row or column and what to do); 1 an internal error (a bug: a short message
naming the error report written to the user's log folder, and the traceback only when
LOADLEDGER_DEBUG is set).
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import traceback
from collections.abc import Callable, Sequence

from engine import __version__
from engine.crash_report import write_report
from engine.defaults import DEFAULT_ORIGINS, DEFAULT_PATHS, DEFAULT_WEATHER
from engine.errors import InputError, ProjectError

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="loadledger",
        description="Meter data to an energy budget. With no command, opens the window "
        "(--self-check: opens it, shows every step once and exits).",
    )
    parser.add_argument("--version", action="version", version=f"loadledger {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    inspect = sub.add_parser("inspect", help="show what the importer understands in a file")
    inspect.add_argument("file", help="meter export, bill file or weather file")
    inspect.add_argument(
        "--kind",
        choices=("meters", "bills", "weather", "calendar"),
        help="what the file is (default: detect)",
    )
    _reading_options(inspect)
    _json_option(inspect)
    inspect.set_defaults(run=_later("project_commands", "inspect"))

    new = sub.add_parser("new", help="create a project file from meter, bill and weather files")
    new.add_argument("project", help="the project file to create (.loadledger)")
    new.add_argument("--meters", action="append", default=[], metavar="FILE",
                     help="a meter export (repeat for several files)")  # fmt: skip
    new.add_argument("--bills", action="append", default=[], metavar="FILE",
                     help="a utility bill file (repeatable)")  # fmt: skip
    new.add_argument("--weather", action="append", default=[], metavar="FILE",
                     help="a weather-station file (repeatable)")  # fmt: skip
    new.add_argument("--calendar", metavar="FILE",
                     help="the campus calendar: named periods with first and last day")  # fmt: skip
    new.add_argument("--overwrite", action="store_true", help="replace an existing project file")
    _meter_account_option(new)
    _reading_options(new)
    _json_option(new)
    new.set_defaults(run=_later("project_commands", "new"))

    clean = sub.add_parser("clean", help="find data problems and apply or undo fixes")
    clean.add_argument("project")
    clean.add_argument("--meter", metavar="NAME", help="only this meter (default: every meter)")
    clean.add_argument(
        "--apply-recommended",
        action="store_true",
        help="log the recommended fixes (gaps, catch-up spikes, serious spikes, stuck days)",
    )
    clean.add_argument(
        "--undo", type=int, metavar="STEP", help="undo one logged step by its id (kept in the log)"
    )
    clean.add_argument(
        "--accept",
        action="append",
        default=[],
        metavar="FINDING",
        help="log that a finding (by its id) is expected: its readings stay as they are and it "
        "no longer shows (repeatable)",
    )
    clean.add_argument(
        "--rescale",
        action="append",
        default=[],
        metavar="FINDING=FACTOR",
        help="multiply the readings from a level shift (by its finding id) to the last reading "
        "by FACTOR, when the meter's multiplier or unit changed (repeatable)",
    )
    _json_option(clean)
    clean.set_defaults(run=_later("clean_command", "clean"))

    profile = sub.add_parser("profile", help="key figures and profile tables of the meters")
    profile.add_argument("project")
    profile.add_argument("--meter", metavar="NAME", help="only this meter (default: every meter)")
    profile.add_argument("--xlsx", metavar="OUT", help="write the profile tables to a workbook")
    _json_option(profile)
    profile.set_defaults(run=_later("modelling_commands", "profile"))

    fit = sub.add_parser("fit", help="backtest the model families and keep the recommended one")
    fit.add_argument("project")
    fit.add_argument("--meter", metavar="NAME", help="only this meter (default: every meter)")
    fit.add_argument(
        "--models",
        metavar="LIST",
        help="comma-separated model families (default: every family that suits the meter)",
    )
    fit.add_argument(
        "--origins",
        type=int,
        default=DEFAULT_ORIGINS,
        metavar="N",
        help=f"monthly backtest origins ({DEFAULT_ORIGINS})",
    )
    _parallel_options(fit)
    _json_option(fit)
    fit.set_defaults(run=_later("modelling_commands", "fit"))

    budget = sub.add_parser(
        "budget",
        help="monthly budget totals with P10/P50/P90 and cost (a project, or files in one go)",
    )
    budget.add_argument(
        "project", nargs="?", help="the project file (or give --meters files instead)"
    )
    budget.add_argument("--start", required=True, metavar="YYYY-MM", help="first budget month")
    span = budget.add_mutually_exclusive_group()
    span.add_argument("--months", type=int, metavar="N", help="number of months (default 1)")
    span.add_argument(
        "--fiscal-year",
        type=int,
        metavar="YYYY",
        help="the fiscal year ending in YYYY that begins in the --start month",
    )
    budget.add_argument(
        "--as-of", metavar="DATE", help="ignore readings after this day (default: the last one)"
    )
    budget.add_argument(
        "--weather",
        default=DEFAULT_WEATHER,
        metavar="past-years|typical|FILE",
        help="weather assumption: typical weather plus past days' departures from it, drawn "
        "per path (default), typical weather for every path, or a temperature file",
    )
    budget.add_argument("--tariff", metavar="FILE", help="rate card for the electricity meters")
    budget.add_argument(
        "--currency",
        metavar="CODE",
        help="currency of the bills' costs, which price the meters no rate card covers "
        "(default: the rate card's, else USD)",
    )
    budget.add_argument(
        "--levels", default="10,50,90", metavar="LIST", help="quantile levels in %% (10,50,90)"
    )
    budget.add_argument(
        "--paths", type=int, default=DEFAULT_PATHS, metavar="N", help=f"paths ({DEFAULT_PATHS})"
    )
    budget.add_argument("--xlsx", metavar="OUT", help="write the finance workbook")
    budget.add_argument("--meters", action="append", default=[], metavar="FILE",
                        help="one-shot: meter files to import, clean and model")  # fmt: skip
    budget.add_argument("--weather-file", metavar="FILE",
                        help="one-shot: the weather-station history")  # fmt: skip
    budget.add_argument("--timezone", metavar="TZ", help="one-shot: the site's time zone")
    budget.add_argument("--bills", action="append", default=[], metavar="FILE",
                        help="one-shot: a bill account's bills (repeatable)")  # fmt: skip
    _meter_account_option(budget)
    budget.add_argument("--calendar", metavar="FILE",
                        help="one-shot: the campus calendar (default: proposed from the "
                        "readings, as the assumptions say)")  # fmt: skip
    budget.add_argument("--holidays", metavar="CC[-SUB]",
                        help="one-shot: public holidays, e.g. US-IL or none (default: the "
                        "time zone's country where the readings confirm its holidays)")  # fmt: skip
    budget.add_argument(
        "--adopt",
        metavar="NAME",
        help="keep this budget in the project as adopted under NAME, with everything it "
        "assumed, to track it later (loadledger track)",
    )
    budget.add_argument(
        "--replace", action="store_true", help="with --adopt: replace a budget adopted as NAME"
    )
    _parallel_options(budget)
    _json_option(budget)
    budget.set_defaults(run=_later("modelling_commands", "budget"))

    track = sub.add_parser(
        "track",
        help="an adopted budget against the actuals: variance split into weather and usage, "
        "and the year-end outlook",
    )
    track.add_argument("project")
    track.add_argument("--budget", required=True, metavar="NAME", help="the adopted budget")
    track.add_argument(
        "--as-of", metavar="DATE", help="count readings up to this day (default: the last one)"
    )
    track.add_argument("--xlsx", metavar="OUT", help="write the tracking workbook")
    _parallel_options(track)
    _json_option(track)
    track.set_defaults(run=_later("modelling_commands", "track"))

    calendar = sub.add_parser("calendar", help="show or change the project's campus calendar")
    calendar.add_argument("project")
    calendar.add_argument("--file", metavar="FILE", help="replace the campus periods by a file's")
    calendar.add_argument(
        "--holidays", metavar="CC[-SUB]", help="public holidays, e.g. US-IL (or none)"
    )
    calendar.add_argument(
        "--copy-forward",
        action="store_true",
        help="add the last year's periods again a year later, on the same weekdays",
    )
    calendar.add_argument(
        "--propose",
        action="store_true",
        help="show the periods and public holidays the readings suggest, with their evidence",
    )
    calendar.add_argument(
        "--accept",
        action="store_true",
        help="with --propose: keep the proposal where the calendar has no periods or no "
        "public holidays (what it has stays)",
    )
    _date_order_options(calendar)
    _json_option(calendar)
    calendar.set_defaults(run=_later("calendar_command", "calendar"))

    meter = sub.add_parser(
        "meter",
        help="show or change how meters are named and the units figures are shown in",
        description="The raw column name stays each meter's key (and JSON's); the display name "
        "is what the window, the workbooks and this text output show.",
    )
    meter.add_argument("project")
    meter.add_argument("name", nargs="?", help="the meter to change (its raw column name)")
    meter.add_argument(
        "--display-name", metavar="TEXT", help="name shown for the meter ('' for its raw name)"
    )
    meter.add_argument(
        "--utility",
        help="utility the meter is filed under: electricity, natural_gas, chilled_water, steam "
        "or hot_water (roll-ups and bill prices follow it)",
    )
    meter.add_argument(
        "--read-unit",
        metavar="UNIT",
        help="unit the meter was read in, shown beside kWh (e.g. therm, ccf, ton-hour, MMBtu)",
    )
    meter.add_argument(
        "--temperature-unit",
        choices=("F", "C"),
        help="show the site's temperatures in °F or °C (every meter; stored in °C)",
    )
    _json_option(meter)
    meter.set_defaults(run=_later("project_commands", "meter"))

    accounts = sub.add_parser(
        "accounts", help="list the bill accounts and say which account each meter belongs to"
    )
    accounts.add_argument("project")
    _meter_account_option(accounts)
    accounts.add_argument(
        "--forget",
        action="append",
        default=[],
        metavar="METER",
        help="the meter no longer belongs to an account (repeatable)",
    )
    _json_option(accounts)
    accounts.set_defaults(run=_later("accounts_command", "accounts"))

    info = sub.add_parser("info", help="summarise a project file")
    info.add_argument("project")
    _json_option(info)
    info.set_defaults(run=_later("project_commands", "info"))
    return parser


def _later(module: str, command: str) -> Callable[[argparse.Namespace], int]:
    """The function ``command`` of ``engine.cli.<module>``, imported only when it runs: the
    modelling libraries take seconds to load, and ``info`` or ``meter`` need none of them."""

    def run(args: argparse.Namespace) -> int:
        return getattr(importlib.import_module(f"engine.cli.{module}"), command)(args)

    return run


def _meter_account_option(parser: argparse.ArgumentParser) -> None:
    """``--meter-account METER=ACCOUNT`` (repeatable)."""
    parser.add_argument(
        "--meter-account",
        action="append",
        default=[],
        metavar="METER=ACCOUNT",
        help="the meter measures (part of) the bill account's supply: the meter counts in "
        "utility and campus totals, the account does not (repeatable)",
    )


def _reading_options(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("reading settings (default: decided from the data)")
    group.add_argument(
        "--timezone",
        metavar="TZ",
        help="site time zone of naive stamps, IANA name, e.g. America/Chicago",
    )
    _date_order_options(group)
    group.add_argument(
        "--stamps",
        choices=("start", "end"),
        help="each stamp marks the start or the end of its interval",
    )
    group.add_argument("--sheet", help="the workbook sheet to read")
    group.add_argument("--unit", help="unit for value columns whose header names none, e.g. kWh")
    group.add_argument(
        "--utility",
        help="electricity, natural_gas, chilled_water, steam or "
        "hot_water (default: from the header, file name or unit)",
    )
    group.add_argument(
        "--values",
        choices=("interval", "register"),
        help="values per interval, or cumulative register reads",
    )
    group.add_argument(
        "--temperature-unit",
        choices=("F", "C"),
        help="unit of a temperature column whose header names none",
    )
    group.add_argument(
        "--holidays",
        metavar="CC[-SUB]",
        help="public holidays of a country and optional subdivision, e.g. US-IL",
    )


def _date_order_options(parser) -> None:
    """--day-first / --month-first, for files whose dates cannot settle the order."""
    order = parser.add_mutually_exclusive_group()
    order.add_argument("--day-first", dest="dayfirst", action="store_const", const=True,
                       help="dates are written day before month (31/01/2025)")  # fmt: skip
    order.add_argument("--month-first", dest="dayfirst", action="store_const", const=False,
                       help="dates are written month before day (01/31/2025)")  # fmt: skip


def _parallel_options(command: argparse.ArgumentParser) -> None:
    command.add_argument(
        "--workers",
        type=int,
        metavar="N",
        help="worker processes that model meters side by side (default: every core; 1: none)",
    )
    command.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="model the meters on the Dask cluster whose scheduler is at ADDRESS "
        "(e.g. tcp://10.0.0.5:8786) instead of local worker processes",
    )


def _json_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON")


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    command = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    args = parser.parse_args(command)
    if args.command is None:
        parser.print_help()
        return EXIT_OK
    try:
        return args.run(args)
    except (InputError, ProjectError) as error:  # one line, even if a name holds a line break
        print(f"loadledger: {' '.join(str(error).split())}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("loadledger: interrupted", file=sys.stderr)
        return EXIT_INTERNAL
    except Exception as error:  # a bug: say so plainly, keep a report, details on request
        if os.environ.get("LOADLEDGER_DEBUG"):
            traceback.print_exc()
        report = write_report(command, error)
        where = (
            f"a report for the developers is in {report}"
            if report
            else "no report could be written to the log folder"
        )
        print(
            f"loadledger: internal error ({type(error).__name__}: {error}). This is a bug; "
            f"{where} (set LOADLEDGER_DEBUG=1 to see the details here).",
            file=sys.stderr,
        )
        return EXIT_INTERNAL


if __name__ == "__main__":
    sys.exit(main())
