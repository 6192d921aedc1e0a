"""The profile tables of one or more meters in a workbook, one sheet per kind of table.

Every sheet prints one page wide with its header row on each page (see
:mod:`engine.export.printing`). The sheets of chart data (typical-day shapes, the duration
curve, daily energy against temperature, the hour-by-date heat map) run to thousands of rows
per meter that are read as charts or on a screen, not on paper: they print only a note
saying so, while the key figures and the monthly table print in full.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
from openpyxl import Workbook
from openpyxl.worksheet.worksheet import Worksheet

from engine.export.finance_layout import NOTE_FONT, TITLE_FONT, paragraph
from engine.export.printing import PageLabels, set_up_printing
from engine.export.saving import save_workbook
from engine.export.sheets import put, write_table
from engine.meter_labels import Labels, in_temperature_unit, shown_name
from engine.meters import utility_words
from engine.profiles import ProfiledMeter

SHEETS = (
    "Key figures",
    "Typical days",
    "Monthly by year",
    "Duration curve",
    "Daily vs temperature",
    "Hour by date",
)
SCREEN_SHEETS = ("Typical days", "Duration curve", "Daily vs temperature", "Hour by date")
SCREEN_NOTE = (
    "Chart data for screens: {rows:,} rows. On paper this sheet prints this note only; the "
    "sheets 'Key figures' and 'Monthly by year' print in full."
)
PAPER_TITLE = "{sheet}: one table per meter"
NOTE_COLUMNS = 8  # the note wraps across at least this many columns
FIRST_TABLE_ROW = 3  # under the sheet's title or note
FIGURE_FORMAT = "#,##0.00"  # key figures: energies, ratios and slopes alike


def write_profile_workbook(
    path: str | Path,
    profiles: list[ProfiledMeter],
    project: str | None = None,
    names: Labels | None = None,
    temperature_unit: str = "°C",
) -> Path:
    """Write every meter's profile tables to ``path`` (xlsx) and return the path.

    ``project`` heads every printed page (None: the workbook's file name); meters are headed by
    their display names from ``names`` (:mod:`engine.meter_labels`; None: raw names); the
    weather response's temperatures are in ``temperature_unit`` (°C or °F).
    """
    book = Workbook()
    book.remove(book.active)
    sheets = {name: book.create_sheet(name) for name in SHEETS}
    starts: dict[str, list[int]] = {name: [] for name in SHEETS}  # each meter's title row
    counts = dict.fromkeys(SHEETS, 0)
    for profile in profiles:
        for name, frame in _tables(profile, temperature_unit).items():
            if frame is None or frame.empty:
                continue
            sheet = sheets[name]
            row = sheet.max_row + 3 if starts[name] else FIRST_TABLE_ROW
            starts[name].append(row)
            counts[name] += len(frame)
            shown = shown_name(names, profile.meter.name)
            put(sheet, row, 1, f"{shown} ({utility_words(profile.meter.utility)})")
            write_table(sheet, frame, first_row=row + 1, formats={"value": FIGURE_FORMAT})
    labels = PageLabels(project)
    for name, sheet in sheets.items():
        sheet.freeze_panes = None
        if not starts[name]:
            put(sheet, 1, 1, "No meter has data for this table.")
            set_up_printing(sheet, labels, title_rows=(1, 1))
        elif name in SCREEN_SHEETS:
            _screen_note(sheet, labels, counts[name])
        else:
            put(sheet, 1, 1, PAPER_TITLE.format(sheet=name)).font = TITLE_FONT
            set_up_printing(sheet, labels, title_rows=(1, 1), blocks=starts[name])
    return save_workbook(book, path, "profile workbook")


def _screen_note(sheet: Worksheet, labels: PageLabels, rows: int) -> None:
    """The note at the top of a sheet of chart data, and a print area of the note alone."""
    last_column = max(sheet.max_column, NOTE_COLUMNS)
    paragraph(sheet, 1, SCREEN_NOTE.format(rows=rows), last_column=last_column, font=NOTE_FONT)
    set_up_printing(sheet, labels, title_rows=(1, 1), last_row=1, last_column=last_column)


def _tables(profile: ProfiledMeter, shown: str) -> dict[str, pd.DataFrame | None]:
    profiles = profile.profiles
    figures = pd.DataFrame(
        [
            {
                "figure": name,
                "value": _value(entry.get("value")),
                "unit": entry.get("unit", ""),
                "how": entry.get("how", ""),
            }
            for name, entry in profile.key_figures().items()
            if name != "weather response"
        ]
    ).set_index("figure")
    weather = profile.key_figures()["weather response"]
    weather_rows = pd.DataFrame(
        [
            {
                "figure": figure,
                "value": _value(value),
                "unit": "",
                "how": f"change-point fit of daily energy on {weather.get('fitted on', '')}",
            }
            for figure, value in (_in_unit(k, v, shown) for k, v in weather.items())
        ]
    ).set_index("figure")
    typical = [frame.assign(grouping=name) for name, frame in profiles.typical_days.items()]
    response = profiles.temperature.daily if profiles.temperature is not None else None
    return {
        "Key figures": pd.concat([figures, weather_rows]),
        "Typical days": pd.concat(typical) if typical else None,
        "Monthly by year": profiles.monthly,
        "Duration curve": profiles.duration,
        "Daily vs temperature": response,
        "Hour by date": profiles.heat_map,
    }


def _in_unit(figure: str, value: object, shown: str) -> tuple[str, object]:
    """A weather-response figure named with its unit ("heating balance point °C", "heating
    slope kWh per °C-day") and its value, temperatures in ``shown``."""
    name, found, per = figure.partition(" kWh per ")
    unit = f"kWh per {per}" if found else ("°C" if figure.endswith(" °C") else "")
    if not unit:
        return figure, value
    number = value if isinstance(value, int | float) else 0.0  # None: no such term
    converted, unit = in_temperature_unit(number, unit, shown)
    return f"{name.removesuffix(' °C')} {unit}", converted if value is number else value


def _value(value):
    return value if isinstance(value, int | float | str) or value is None else str(value)
