"""One logged cleaning decision, stored as a plain dict in the project file.

A step names what to do (``kind``), to which meter, with JSON-safe ``params`` and the user's
``note``. Times in params are ISO 8601 strings in UTC; a range runs from ``start`` (the first
interval start it touches) up to but not including ``end``.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from engine.errors import InputError

#: What each step kind does; the fix functions live in :mod:`engine.cleaning.fixes`.
STEP_KINDS: dict[str, str] = {
    "interpolate": "fill with a straight line between the readings either side",
    "profile_fill": "fill from the meter's typical week, scaled to the level around the range",
    "spread": "share the energy recorded in the range over all its intervals",
    "remove": "drop the readings (they become missing)",
    "cap": "limit readings to a low and/or high value",
    "exclude": "keep the readings but leave them out of model fitting",
    "rescale": "multiply the readings by a factor: a meter multiplier or unit that changed",
    "accept": "keep the readings as they are: the finding is expected (e.g. a planned shutdown)",
}


@dataclass(frozen=True)
class CleaningStep:
    """A cleaning decision: ``kind`` (see :data:`STEP_KINDS`), ``meter``, ``params``, ``note``."""

    kind: str
    meter: str
    params: dict[str, Any] = field(default_factory=dict)
    note: str = ""

    def __post_init__(self) -> None:
        if self.kind not in STEP_KINDS:
            raise InputError(
                f"unknown cleaning step '{self.kind}' for meter '{self.meter}'.",
                hint=f"Use one of: {', '.join(STEP_KINDS)}.",
            )
        try:
            json.dumps(self.params, allow_nan=False)
        except (TypeError, ValueError) as error:
            raise InputError(
                f"cleaning step '{self.kind}' for meter '{self.meter}' has settings that cannot "
                f"be stored ({error}).",
                hint="Give times as ISO text and numbers as plain finite numbers.",
            ) from error

    def to_dict(self) -> dict[str, Any]:
        """The plain dict the project file stores."""
        return {
            "kind": self.kind,
            "meter": self.meter,
            "params": json.loads(json.dumps(self.params)),
            "note": self.note,
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> CleaningStep:
        """Read a stored step; other keys (such as an active flag) are left to the caller."""
        missing = [key for key in ("kind", "meter", "params") if key not in data]
        if missing:
            raise InputError(
                f"a stored cleaning step lacks {', '.join(missing)}.",
                hint="Remove the damaged step and add it again.",
            )
        if not isinstance(data["params"], Mapping):
            raise InputError(
                f"cleaning step '{data['kind']}' has params that are not a mapping.",
                hint="Remove the damaged step and add it again.",
            )
        return cls(
            kind=str(data["kind"]),
            meter=str(data["meter"]),
            params=dict(data["params"]),
            note=str(data.get("note", "")),
        )


def range_step(
    kind: str, meter: str, start: pd.Timestamp, end: pd.Timestamp, note: str, **extra: Any
) -> CleaningStep:
    """A step acting on ``[start, end)``, with times written as UTC ISO text."""
    params = {"start": _iso(start), "end": _iso(end), **extra}
    return CleaningStep(kind=kind, meter=meter, params=params, note=note)


def step_range(index: pd.DatetimeIndex, params: Mapping[str, Any]) -> tuple[int, int]:
    """Grid positions ``[first, stop)`` that a step's ``start``/``end`` cover.

    Raises
    ------
    InputError
        When the times are missing, unreadable, reversed or outside the meter's readings.
    """
    try:
        start = pd.Timestamp(params["start"])
        end = pd.Timestamp(params["end"])
    except (KeyError, ValueError, TypeError) as error:
        raise InputError(
            f"the step's start and end times are missing or unreadable ({error}).",
            hint="Give start and end as ISO 8601 times in UTC.",
        ) from error
    if start.tzinfo is None or end.tzinfo is None:
        raise InputError(
            f"the step's times {params['start']} and {params['end']} carry no time zone.",
            hint="Give times in UTC, ending in +00:00.",
        )
    if end <= start:
        raise InputError(
            f"the step ends ({params['end']}) before it starts ({params['start']}).",
            hint="Swap start and end.",
        )
    first = int(index.searchsorted(start, side="left"))
    stop = int(index.searchsorted(end, side="left"))
    if stop <= first:
        raise InputError(
            f"the step's range {params['start']} to {params['end']} holds no interval of the "
            "meter's readings.",
            hint="Check the range against the meter's first and last readings.",
        )
    return first, stop


def _iso(stamp: pd.Timestamp) -> str:
    return stamp.tz_convert("UTC").isoformat()
