"""A campus calendar as read from a file, beside the other kinds of file.

One period per row: name, first day, last day (inclusive) and kind, under forgiving headers.
Dates are read day-first or month-first as the file shows; the calendar itself (holidays,
periods, occupancy) is :mod:`engine.calendar`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date, datetime
from pathlib import Path

import pandas as pd
from dateutil import parser as date_parser

from engine.calendar import PERIOD_KINDS, CampusCalendar, CampusPeriod
from engine.errors import InputError
from engine.reading.grid import read_headed_table


@dataclass
class CalendarFile:
    """The named campus periods of one file, with the public holidays of the setting."""

    path: Path
    calendar: CampusCalendar


#: Words calendar files commonly use for the kinds above.
KIND_SYNONYMS: dict[str, str] = {
    "semester": "term",
    "quarter": "term",
    "session": "term",
    "teaching": "term",
    "holiday": "break",
    "vacation": "break",
    "recess": "break",
    "shutdown": "closure",
    "closed": "closure",
    "summer session": "summer",
    "summer term": "summer",
}
_HEADER_WORDS: dict[str, tuple[str, ...]] = {
    "name": ("period", "name", "periodname", "label", "description", "event", "title"),
    "first_day": (
        "firstday",
        "first",
        "start",
        "startdate",
        "startday",
        "starts",
        "from",
        "begin",
        "begins",
        "fromdate",
    ),
    "last_day": (
        "lastday",
        "last",
        "end",
        "enddate",
        "endday",
        "ends",
        "to",
        "until",
        "through",
        "todate",
    ),
    "kind": ("kind", "type", "category", "periodkind", "periodtype"),
}
_COLUMN_TITLES = {
    "name": "Period",
    "first_day": "First Day",
    "last_day": "Last Day",
    "kind": "Kind",
}
_NUMERIC_DATE = re.compile(r"(\d{1,2})[/.\-](\d{1,2})[/.\-](\d{4})")


def _header_key(text: object) -> str:
    return re.sub(r"[^a-z]", "", str(text).lower())


def _find_columns(headers: list[object], path: Path, sheet: str | None) -> dict[str, object]:
    found: dict[str, object] = {}
    for header in headers:
        key = _header_key(header)
        for role, words in _HEADER_WORDS.items():
            if key in words and role not in found:
                found[role] = header
    missing = [role for role in _HEADER_WORDS if role not in found]
    if missing:
        titles = ", ".join(_COLUMN_TITLES[role] for role in missing)
        raise InputError(
            f"no column for {titles} among the headers {', '.join(str(h) for h in headers)}.",
            hint="The first row needs the headers Period, First Day, Last Day and Kind.",
            file=path,
            sheet=sheet,
        )
    return found


def _day_order(texts: list[str], day_first: bool | None, path: Path) -> bool:
    """Whether numeric dates like 03/04/2024 put the day first, judged from the whole file."""
    parts = [_NUMERIC_DATE.fullmatch(text) for text in texts]
    parts = [match for match in parts if match]
    day_first_seen = any(int(match[1]) > 12 for match in parts)
    month_first_seen = any(int(match[2]) > 12 for match in parts)
    if day_first_seen and month_first_seen:
        raise InputError(
            "the dates mix day-first (31/01/2025) and month-first (01/31/2025) writing.",
            hint="Write every date one way, best as 2025-01-31.",
            file=path,
        )
    if day_first_seen or month_first_seen:
        if day_first is not None and day_first != day_first_seen:
            raise InputError(
                "the dates do not follow the chosen day/month order.",
                hint="Check the day-first setting against the file.",
                file=path,
            )
        return day_first_seen
    if parts and day_first is None:
        raise InputError(
            f"dates such as {parts[0][0]} could be read day-first or month-first.",
            hint="Write the dates as YYYY-MM-DD, or say whether the day comes first.",
            file=path,
        )
    return bool(day_first)


def _parse_day(value: object, day_first: bool) -> date | None:
    """A calendar day from a spreadsheet cell, or None when it cannot be read."""
    if isinstance(value, datetime):  # pandas Timestamps included
        return value.date()
    if isinstance(value, date):
        return value
    text = str(value).strip()
    numeric = _NUMERIC_DATE.fullmatch(text)
    try:
        if numeric:
            first, second, year = (int(part) for part in numeric.groups())
            day, month = (first, second) if day_first else (second, first)
            return date(year, month, day)
        if re.fullmatch(r"\d{4}-\d{2}-\d{2}([ T]00:00(:00)?)?", text):
            return date.fromisoformat(text[:10])
        if re.search(r"[A-Za-z]{3}", text) and re.search(r"\d{4}", text):  # month as a word
            return date_parser.parse(text, dayfirst=day_first).date()
    except (ValueError, OverflowError):
        return None
    return None


def _read_table(path: Path) -> tuple[pd.DataFrame, str | None]:
    """The first sheet or the text table, through the importer's guarded file reading."""
    if path.suffix.lower() not in (".xlsx", ".xlsm", ".xls", ".ods", ".csv", ".txt"):
        raise InputError(
            f"calendar files of type {path.suffix.lower() or '(none)'} are not read.",
            hint="Save the calendar as .csv or .xlsx.",
            file=path,
        )
    return read_headed_table(path)


def read_calendar_file(
    path: str | Path,
    *,
    country: str | None = None,
    subdivision: str | None = None,
    day_first: bool | None = None,
) -> CampusCalendar:
    """Read campus periods from a CSV or spreadsheet, one period per row.

    The header row needs columns for the period name, first day, last day (inclusive) and
    kind; the wording is forgiving ("Start", "From", "Type" …). Numeric dates like
    03/04/2025 are read day-first or month-first as the file shows (a day above 12 settles
    it) or as ``day_first`` says. Blank rows are skipped.

    Raises
    ------
    InputError
        Naming file, row and column for an unreadable date, a last day before the first,
        an unknown kind (listing :data:`PERIOD_KINDS`) or a missing name.
    """
    path = Path(path)
    table, sheet = _read_table(path)
    columns = _find_columns(list(table.columns), path, sheet)
    table = table.fillna("")
    cells = table[[columns[role] for role in _HEADER_WORDS]].astype(object)
    cells.columns = list(_HEADER_WORDS)
    filled = cells.map(lambda value: bool(str(value).strip())).any(axis=1)
    cells = cells[filled]
    if cells.empty:
        raise InputError(
            "the calendar lists no periods.",
            hint="Add one row per period under the headers, or leave the calendar out.",
            file=path,
            sheet=sheet,
        )
    date_texts = [
        str(value).strip()
        for value in pd.concat([cells["first_day"], cells["last_day"]])
        if isinstance(value, str)
    ]
    day_first = _day_order(date_texts, day_first, path)

    periods = []
    for position, row in cells.iterrows():
        where = {"file": path, "sheet": sheet, "row": int(position) + 2}
        name = str(row["name"]).strip()
        if not name:
            raise InputError(
                "the period has no name.",
                hint="Give every period a name.",
                column=str(columns["name"]),
                **where,
            )
        days = {}
        for role in ("first_day", "last_day"):
            days[role] = _parse_day(row[role], day_first)
            if days[role] is None:
                raise InputError(
                    f"{str(row[role]).strip() or 'an empty cell'!r} is not a date.",
                    hint="Write dates as YYYY-MM-DD.",
                    column=str(columns[role]),
                    **where,
                )
        if days["last_day"] < days["first_day"]:
            raise InputError(
                f"the last day {days['last_day']} is before the first day {days['first_day']}.",
                hint="Swap the two dates or correct the one that is wrong.",
                column=str(columns["last_day"]),
                **where,
            )
        kind = str(row["kind"]).strip().lower()
        kind = KIND_SYNONYMS.get(kind, kind)
        if kind not in PERIOD_KINDS:
            raise InputError(
                f"{str(row['kind']).strip()!r} is not a period kind.",
                hint=f"Use one of: {', '.join(PERIOD_KINDS)}.",
                column=str(columns["kind"]),
                **where,
            )
        periods.append(CampusPeriod(name, days["first_day"], days["last_day"], kind))
    return CampusCalendar(country=country, subdivision=subdivision, periods=tuple(periods))
