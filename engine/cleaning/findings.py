"""What the detectors report: one problem in a meter's readings, in plain words, with a fix."""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from engine.cleaning.steps import CleaningStep

SEVERITIES: tuple[str, ...] = ("info", "warning", "serious")

#: Every kind of finding, with what it means.
FINDING_KINDS: dict[str, str] = {
    "gap": "intervals with no reading",
    "catch_up": "missed energy delivered late in one interval after a gap or zero run",
    "duplicate": "the same time stamped more than once, copies agreeing",
    "conflict": "the same time stamped more than once, copies disagreeing",
    "dst_hole": "the hour skipped when clocks went forward (not a gap)",
    "dst_repeat": "the hour repeated when clocks went back (two real hours)",
    "dst_nonexistent": "readings stamped in the hour that clocks skipped",
    "dst_single": "the hour clocks repeat appears only once",
    "flat_line": "the same reading repeated for longer than plausible",
    "zero_run": "readings at or near zero when the meter is normally busy",
    "spike": "a reading far above typical for its hour of the week (and its weather, for a "
    "weather-driven meter) and for its own day",
    "dip": "a reading far below typical for its hour of the week (and its weather, for a "
    "weather-driven meter) and for its own day",
    "negative": "negative consumption",
    "register_reset": "a large negative reading: a register reset or rollover",
    "level_shift": "a lasting step change in daily energy",
    "low_day": "whole days below typical together: a day-level change, not a meter fault",
    "high_day": "whole days above typical together: a day-level change, not a meter fault",
}


@dataclass(frozen=True)
class Finding:
    """One problem found in a meter's readings.

    ``start``/``end`` are UTC and bound ``[start, end)``: from the first affected interval's start
    to the last one's end. ``energy_kwh`` is what the meter recorded in that range (missing
    readings count as nothing) and ``expected_kwh`` what its typical week expects there, with
    the weather for a weather-driven meter (NaN when unknown). ``measures`` holds the numbers
    and thresholds behind the finding. ``id`` is derived from meter, kind and range, so the
    same problem keeps its id from one run to the next.
    """

    meter: str
    kind: str
    start: pd.Timestamp
    end: pd.Timestamp
    severity: str
    explanation: str
    fix: CleaningStep | None
    intervals: int
    energy_kwh: float
    expected_kwh: float
    measures: dict[str, float] = field(default_factory=dict)
    id: str = field(init=False)

    def __post_init__(self) -> None:
        if self.kind not in FINDING_KINDS:
            raise ValueError(f"unknown finding kind {self.kind!r}")
        if self.severity not in SEVERITIES:
            raise ValueError(f"unknown severity {self.severity!r}")
        key = f"{self.meter}|{self.kind}|{self.start.isoformat()}|{self.end.isoformat()}"
        object.__setattr__(self, "id", hashlib.sha256(key.encode()).hexdigest()[:16])

    def to_dict(self) -> dict[str, Any]:
        """A JSON-safe dict (times as ISO text, unknown numbers as None)."""
        return {
            "id": self.id,
            "meter": self.meter,
            "kind": self.kind,
            "start": self.start.isoformat(),
            "end": self.end.isoformat(),
            "severity": self.severity,
            "explanation": self.explanation,
            "fix": self.fix.to_dict() if self.fix is not None else None,
            "intervals": self.intervals,
            "energy_kwh": _number(self.energy_kwh),
            "expected_kwh": _number(self.expected_kwh),
            "measures": {name: _number(value) for name, value in self.measures.items()},
        }


def _number(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None
