"""The profile tables of one or more meters in a workbook, one sheet per kind of table."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
from openpyxl import Workbook

from engine.export.saving import save_workbook
from engine.export.sheets import put, write_table
from engine.profile_run import ProjectMeterProfile

SHEETS = (
    "Key figures",
    "Typical days",
    "Monthly by year",
    "Duration curve",
    "Daily vs temperature",
    "Hour by date",
)


def write_profile_workbook(path: str | Path, profiles: list[ProjectMeterProfile]) -> Path:
    """Write every meter's profile tables to ``path`` (xlsx) and return the path."""
    book = Workbook()
    book.remove(book.active)
    sheets = {name: book.create_sheet(name) for name in SHEETS}
    rows = dict.fromkeys(SHEETS, 1)
    for profile in profiles:
        for name, frame in _tables(profile).items():
            if frame is None or frame.empty:
                continue
            sheet = sheets[name]
            put(sheet, rows[name], 1, f"{profile.meter.name} ({profile.meter.utility})")
            last, _ = write_table(sheet, frame, first_row=rows[name] + 1)
            rows[name] = last + 3
    for name, sheet in sheets.items():
        if rows[name] == 1:
            put(sheet, 1, 1, "No meter has data for this table.")
        sheet.freeze_panes = None
    return save_workbook(book, path, "profile workbook")


def _tables(profile: ProjectMeterProfile) -> dict[str, pd.DataFrame | None]:
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
                "figure": k,
                "value": _value(v),
                "unit": "",
                "how": "balance-point fit on working days",
            }
            for k, v in weather.items()
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


def _value(value):
    return value if isinstance(value, int | float | str) or value is None else str(value)
