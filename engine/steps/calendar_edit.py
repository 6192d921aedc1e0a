"""Changing a project's campus calendar: replace its periods, set its holidays, copy a year on,
or take what the readings propose."""

from __future__ import annotations

import re
from dataclasses import replace
from datetime import date, timedelta
from pathlib import Path

from engine.budget.periods import as_of_cut
from engine.calendar import CampusCalendar, shift_to_year, with_holidays
from engine.calendar_proposal import CalendarProposal, propose_for_site
from engine.project import Project
from engine.reading import ReadOptions, read_calendar
from engine.steps.budgeting import last_reading_day
from engine.steps.prepared_site import prepare_site
from engine.steps.site_calendar import store_calendar, stored_calendar

YEAR_IN_NAME = re.compile(r"\b(19|20)\d{2}\b")


def with_file(calendar: CampusCalendar, path: str | Path, options: ReadOptions) -> CampusCalendar:
    """The periods of ``path`` in place of the current ones, keeping the holidays' country."""
    periods = read_calendar(path, options).calendar.periods
    return replace(calendar, periods=periods)


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


def proposal(project: Project, as_of: date | None = None) -> CalendarProposal:
    """What the project's readings (up to the local day ``as_of``; default all) propose."""
    cut = None if as_of is None else as_of_cut(as_of, project.timezone)
    return propose_for_site(prepare_site(project), cut)


def settle_one_shot(
    project: Project,
    *,
    file: str | Path | None = None,
    holidays: str | None = None,
    as_of: date | None = None,
    options: ReadOptions | None = None,
) -> dict[str, str]:
    """Store the campus calendar a one-shot budget uses and say, in words, where it came from.

    The periods of ``file`` and the public holidays of ``holidays`` ("US-IL", "none") are taken
    as given; what neither gives is proposed from the readings up to ``as_of`` (so that a
    budget made as of a past day knows nothing the later readings show).
    """
    given = CampusCalendar()
    if file is not None:
        given = with_file(given, file, options or ReadOptions())
    if holidays is not None:
        given = with_holidays(given, holidays)
    said = {
        "periods": f"{len(given.periods)} from {Path(file).name}" if file is not None else "",
        "public holidays": f"given: {holidays}" if holidays is not None else "",
    }
    if file is not None and holidays is not None:
        store(project, given)
        return {"source": "given (--calendar and --holidays)", **said}
    found = proposal(project, as_of or last_reading_day(project))
    chosen = found.calendar()
    calendar = CampusCalendar(
        given.country if holidays is not None else chosen.country,
        given.subdivision if holidays is not None else chosen.subdivision,
        given.periods if file is not None else chosen.periods,
    )
    store(project, calendar)
    words = found.summary()
    return {
        "source": words["source"]
        if not (file or holidays)
        else "partly given, the rest proposed from the readings",
        "public holidays": said["public holidays"] or words["public holidays"],
        "periods": said["periods"] or words["periods"],
    }
