"""Reading users' files: meter exports, utility bills and weather-station files.

``read_file`` decides what kind of file it is (or is told), reads it completely and returns
what it understood, without storing anything. ``describe`` turns that into the plain,
JSON-ready report that ``loadledger inspect`` prints.
"""

from __future__ import annotations

from pathlib import Path

from engine.errors import InputError
from engine.reading.bill_file import BillFile, looks_like_bills, read_bill_file
from engine.reading.calendar_file import CalendarFile, read_calendar_file
from engine.reading.columns import is_numeric_column, is_stamp_column
from engine.reading.meter_file import MeterFile, MeterRead, read_meter_file
from engine.reading.options import ReadOptions
from engine.reading.report import describe
from engine.reading.sheets import choose_table
from engine.reading.weather_file import WeatherFile, looks_like_weather, read_weather_file

FILE_KINDS = ("meters", "bills", "weather", "calendar")

__all__ = [
    "FILE_KINDS",
    "BillFile",
    "CalendarFile",
    "MeterFile",
    "MeterRead",
    "ReadOptions",
    "WeatherFile",
    "describe",
    "guess_kind",
    "read_bill_file",
    "read_calendar",
    "read_file",
    "read_meter_file",
    "read_weather_file",
]


def read_file(
    path: str | Path, options: ReadOptions | None = None, kind: str | None = None
) -> MeterFile | BillFile | WeatherFile | CalendarFile:
    """Read ``path`` as one of :data:`FILE_KINDS`, or as what it looks like."""
    options = options or ReadOptions()
    if kind is not None and kind not in FILE_KINDS:
        raise InputError(f"unknown file kind '{kind}'.", hint=f"Use one of {FILE_KINDS}.")
    chosen = _chosen_table(path, options)
    kind = kind or _kind_of(chosen)
    if kind == "calendar":
        return read_calendar(path, options)
    reader = {"meters": read_meter_file, "bills": read_bill_file, "weather": read_weather_file}
    return reader[kind](path, options, chosen)


def guess_kind(path: str | Path, options: ReadOptions | None = None) -> str:
    """Which of :data:`FILE_KINDS` :func:`read_file` takes ``path`` for when not told, so that
    a file that fails to read can say what it was read as."""
    return _kind_of(_chosen_table(path, options or ReadOptions()))


def _chosen_table(path: str | Path, options: ReadOptions):
    try:
        return choose_table(path, options.sheet)
    except InputError as error:
        raise error.at_file(path) from None


def _kind_of(chosen) -> str:
    if _looks_like_calendar(chosen):
        return "calendar"
    if looks_like_bills(chosen.table, chosen.facts):
        return "bills"
    if looks_like_weather(chosen.facts):
        return "weather"
    return "meters"


def read_calendar(path: str | Path, options: ReadOptions | None = None) -> CalendarFile:
    """Read a campus calendar file (named periods) with the public holidays of the setting."""
    options = options or ReadOptions()
    country, _, region = (options.holidays or "").partition("-")
    try:
        calendar = read_calendar_file(
            path, country=country or None, subdivision=region or None, day_first=options.dayfirst
        )
    except InputError as error:
        raise error.at_file(path) from None
    return CalendarFile(Path(path), calendar)


def _looks_like_calendar(chosen) -> bool:
    """Dated rows with no quantities: two date columns and no numbers besides."""
    table, facts = chosen.table, chosen.facts
    dates = [f for f in facts if is_stamp_column(f, table.data[f.position])]
    numbers = [f for f in facts if f not in dates and is_numeric_column(f)]
    return len(dates) >= 2 and not numbers
