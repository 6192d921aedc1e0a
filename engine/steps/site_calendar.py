"""The campus calendar a project keeps: where it is stored and how it is read back.

One place for the setting's name and its reading, so the modules that need the site's
calendar (cleaning, profiles, modelling, budgets, calendar edits) ask here rather than
reaching into each other.
"""

from __future__ import annotations

from engine.calendar import CampusCalendar
from engine.errors import InputError
from engine.project import Project

#: The project setting holding the campus calendar (``CampusCalendar.to_dict``).
CALENDAR_SETTING = "calendar"


def stored_calendar(project: Project) -> CampusCalendar | None:
    """The campus calendar kept in the project's settings, or None when it has none."""
    stored = project.get_setting(CALENDAR_SETTING)
    if not stored:
        return None
    try:
        return CampusCalendar.from_dict(stored)
    except (KeyError, TypeError, ValueError, AttributeError) as error:
        raise InputError(
            f"the project's campus calendar cannot be read ({error}).",
            hint="Import the campus calendar file again.",
            file=project.path,
        ) from error


def store_calendar(project: Project, calendar: CampusCalendar) -> None:
    """Keep ``calendar`` as the project's campus calendar (in the caller's transaction)."""
    project.set_setting(CALENDAR_SETTING, calendar.to_dict())
