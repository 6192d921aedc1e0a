"""The one check that a site time zone is an IANA zone name this computer knows.

Readers, the project's settings, the timestamp model and cleaning steps all take a zone name
from the user or from a stored file; they ask here so that every refusal reads the same.
"""

from __future__ import annotations

from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from engine.errors import InputError


def require_zone(name: Any, what: str = "time zone") -> str:
    """``name`` as a string if it is a known IANA zone; otherwise an InputError.

    ``what`` says where the name came from ("the step's site time zone"), so the message points
    at it.
    """
    try:
        ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError, TypeError) as error:
        raise InputError(
            f"{what} {name!r} is not a known time zone.",
            hint="Give an IANA zone name such as 'America/Chicago', 'Europe/Berlin' or 'UTC'.",
        ) from error
    return str(name)
