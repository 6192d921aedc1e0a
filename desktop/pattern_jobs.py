"""Gather one meter's profiles from the engine for the Patterns screen — without Qt.

Each profile is asked for on its own, so a meter that cannot give one (daily gas reads have no
hour-by-hour shape) still shows the others, with the engine's reason in place of the missing one.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.errors import InputError
from engine.profiles import (
    TemperatureResponse,
    energy_vs_temperature,
    heat_map,
    key_figures,
    load_duration,
    monthly_totals_by_year,
    typical_day,
)
from engine.progress import Progress, step
from engine.project import Project

#: Ways to group typical days offered on the screen (engine names).
DAY_GROUPINGS = ("day_type", "season")


@dataclass(frozen=True)
class PatternRequest:
    """Which meter to profile, against which weather station, with whose public holidays."""

    meter: str
    station: str | None = None
    holidays: str | None = None


@dataclass
class MeterPatterns:
    """The profiles of one meter; a profile the engine could not give is None with a note."""

    request: PatternRequest
    typical_days: dict[str, pd.DataFrame] | None = None
    heat_map: pd.DataFrame | None = None
    monthly: pd.DataFrame | None = None
    duration: pd.DataFrame | None = None
    figures: pd.DataFrame | None = None
    temperature: TemperatureResponse | None = None
    notes: dict[str, str] = field(default_factory=dict)


def compute_patterns(
    project: Project, request: PatternRequest, progress: Progress | None = None
) -> MeterPatterns:
    """Load the meter (and weather) from ``project`` and ask the engine for every profile."""
    step(progress, 0.0, f"loading meter '{request.meter}'")
    meter = project.load_meter(request.meter)
    labels = label_intervals(
        meter.values.index, meter.timezone, CampusCalendar(country=request.holidays)
    )
    temperatures = project.load_weather(request.station) if request.station else None
    found = MeterPatterns(request)
    pieces: dict[str, tuple[str, Callable[[], Any] | None]] = {
        "typical_days": (
            "typical days",
            lambda: {by: typical_day(meter, labels, by=by) for by in DAY_GROUPINGS},
        ),
        "heat_map": ("heat map", lambda: heat_map(meter)),
        "monthly": ("monthly totals", lambda: monthly_totals_by_year(meter)),
        "duration": ("load-duration curve", lambda: load_duration(meter)),
        "figures": ("key figures", lambda: key_figures(meter, labels)),
        "temperature": (
            "energy against temperature",
            None
            if temperatures is None
            else lambda: energy_vs_temperature(meter, temperatures, labels),
        ),
    }
    for done, (name, (words, make)) in enumerate(pieces.items()):
        step(progress, 0.2 + 0.8 * done / len(pieces), words)
        if make is None:
            found.notes[name] = (
                "No weather station chosen: import a weather file to see how this meter "
                "follows the outdoor temperature."
            )
            continue
        try:
            setattr(found, name, make())
        except InputError as error:
            found.notes[name] = error.message
    step(progress, 1.0, "profiles ready")
    return found
