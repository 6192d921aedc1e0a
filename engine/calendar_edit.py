"""Changing a project's campus calendar: replace its periods, set its holidays, copy a year on."""

from __future__ import annotations

import re
from dataclasses import replace
from datetime import timedelta
from pathlib import Path

from engine.calendar import CampusCalendar, shift_to_year
from engine.project import Project
from engine.reading import ReadOptions, read_calendar
from engine.site_calendar import store_calendar, stored_calendar

YEAR_IN_NAME = re.compile(r"\b(19|20)\d{2}\b")


def with_file(calendar: CampusCalendar, path: str | Path, options: ReadOptions) -> CampusCalendar:
    """The periods of ``path`` in place of the current ones, keeping the holidays' country."""
    periods = read_calendar(path, options).calendar.periods
    return replace(calendar, periods=periods)


def with_holidays(calendar: CampusCalendar, code: str) -> CampusCalendar:
    """Public holidays of ``code`` ("US", "US-IL", or "none" for no public holidays)."""
    if code.lower() == "none":
        return CampusCalendar(periods=calendar.periods)
    country, _, region = code.partition("-")
    return CampusCalendar(country, region or None, calendar.periods)


def copied_forward(calendar: CampusCalendar) -> CampusCalendar:
    """The calendar plus a copy of its last year of periods, a year later on the same weekdays.

    The last year is every period that starts within 365 days of the latest first day; the copy
    moves them by whole weeks (see :func:`engine.calendar.shift_to_year`).
    """
    if not calendar.periods:
        return calendar
    latest = max(period.first_day for period in calendar.periods)
    last_year = [p for p in calendar.periods if p.first_day > latest - timedelta(days=365)]
    earliest = min(p.first_day for p in last_year)
    moved = shift_to_year(CampusCalendar(periods=tuple(last_year)), earliest.year + 1)
    renamed = tuple(replace(p, name=_years_on(p.name)) for p in moved.periods)
    return replace(calendar, periods=(*calendar.periods, *renamed))


def _years_on(name: str) -> str:
    """'Fall term 2026' becomes 'Fall term 2027': years written in a period's name move too."""
    return YEAR_IN_NAME.sub(lambda match: str(int(match.group()) + 1), name)


def current(project: Project) -> CampusCalendar:
    return stored_calendar(project) or CampusCalendar()


def store(project: Project, calendar: CampusCalendar) -> None:
    store_calendar(project, calendar)
