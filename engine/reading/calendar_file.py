"""A campus calendar as read from a file, beside the other kinds of file."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from engine.calendar import CampusCalendar


@dataclass
class CalendarFile:
    """The named campus periods of one file, with the public holidays of the setting."""

    path: Path
    calendar: CampusCalendar
