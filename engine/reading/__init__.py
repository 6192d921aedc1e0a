"""Reading users' files: meter exports, utility bills and weather-station files.

``read_file`` decides what kind of file it is (or is told), reads it completely and returns
what it understood, without storing anything. ``describe`` turns that into the plain,
JSON-ready report that ``loadledger inspect`` prints.
"""

from __future__ import annotations

from pathlib import Path

from engine.errors import InputError
from engine.reading.bill_file import BillFile, looks_like_bills, read_bill_file
from engine.reading.meter_file import MeterFile, MeterRead, read_meter_file
from engine.reading.options import ReadOptions
from engine.reading.report import describe
from engine.reading.sheets import choose_table
from engine.reading.weather_file import WeatherFile, looks_like_weather, read_weather_file

FILE_KINDS = ("meters", "bills", "weather")

__all__ = [
    "FILE_KINDS",
    "BillFile",
    "MeterFile",
    "MeterRead",
    "ReadOptions",
    "WeatherFile",
    "describe",
    "read_bill_file",
    "read_file",
    "read_meter_file",
    "read_weather_file",
]


def read_file(
    path: str | Path, options: ReadOptions | None = None, kind: str | None = None
) -> MeterFile | BillFile | WeatherFile:
    """Read ``path`` as ``kind`` ("meters", "bills", "weather"), or as what it looks like."""
    options = options or ReadOptions()
    if kind is not None and kind not in FILE_KINDS:
        raise InputError(f"unknown file kind '{kind}'.", hint=f"Use one of {FILE_KINDS}.")
    try:
        chosen = choose_table(path, options.sheet)
    except InputError as error:
        raise error.at_file(path) from None
    if kind is None:
        if looks_like_bills(chosen.table, chosen.facts):
            kind = "bills"
        elif looks_like_weather(chosen.facts):
            kind = "weather"
        else:
            kind = "meters"
    reader = {"meters": read_meter_file, "bills": read_bill_file, "weather": read_weather_file}
    return reader[kind](path, options, chosen)
