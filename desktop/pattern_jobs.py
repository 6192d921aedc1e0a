"""Gather one meter's profiles from the engine for the Patterns screen — without Qt.

The engine profiles the meter's CLEANED readings (the project's cleaning log replayed, ranges
left out of fitting dropped) with the project's campus calendar and weather, in one call
(:func:`engine.steps.profiling.profile_project_meter`). A profile the meter cannot give (daily gas
reads have no shape within the day) is None here, with a note saying why.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from engine.meter_labels import in_temperature_unit, naming_progress, shown_name
from engine.profiles import ProfiledMeter, TemperatureResponse
from engine.progress import Progress, step
from engine.project import Project
from engine.steps.labels import meter_labels, temperature_unit
from engine.steps.profiling import profile_project_meter
from engine.steps.site_calendar import stored_calendar
from engine.words import counted

#: Ways to group typical days offered on the screen (the engine's groupings). Grouping by
#: campus period is left out: the engine groups by period name, one line per term and break.
DAY_GROUPINGS = ("day_type", "season")

#: The weather response as the screen lists it: the engine's key, the figure's name, its unit
#: and the factor from the engine's number to the one shown. Temperatures and amounts per
#: degree-day are converted to the project's temperature unit apart (see weather_rows).
WEATHER_ROWS: tuple[tuple[str, str, str, float], ...] = (
    ("heating balance point °C", "heating balance point", "°C", 1.0),
    ("heating slope kWh per °C-day", "heating slope", "kWh per °C-day", 1.0),
    ("cooling balance point °C", "cooling balance point", "°C", 1.0),
    ("cooling slope kWh per °C-day", "cooling slope", "kWh per °C-day", 1.0),
    ("weather-independent kWh per day", "weather-independent use", "kWh per day", 1.0),
    ("R²", "R²", "ratio", 1.0),
    ("CV(RMSE)", "CV(RMSE)", "%", 100.0),
    ("days", "days fitted", "days", 1.0),
)
KIND_WORDS = {"both": "heating-and-cooling"}
FIGURE_COLUMNS = ["value", "unit", "how"]


@dataclass(frozen=True)
class PatternRequest:
    """Which meter to profile."""

    meter: str


@dataclass
class MeterPatterns:
    """The profiles of one meter; a profile the engine could not give is None with a note.

    ``weather`` lists the degree-day weather response like ``figures`` (empty, with a note,
    when there is none); ``basis`` says what the profiles were worked out from.
    """

    request: PatternRequest
    typical_days: dict[str, pd.DataFrame] | None = None
    heat_map: pd.DataFrame | None = None
    monthly: pd.DataFrame | None = None
    duration: pd.DataFrame | None = None
    figures: pd.DataFrame | None = None
    temperature: TemperatureResponse | None = None
    weather: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=FIGURE_COLUMNS))
    basis: str = ""
    notes: dict[str, str] = field(default_factory=dict)
    temperature_unit: str = "°C"  # the unit temperatures are shown in (the engine's are °C)


def compute_patterns(
    project: Project, request: PatternRequest, progress: Progress | None = None
) -> MeterPatterns:
    """Profile ``request.meter``'s cleaned readings with the project's calendar and weather."""
    progress = naming_progress(progress, meter_labels(project))
    step(progress, 0.0, f"profiling the cleaned readings of '{request.meter}'")
    found = profile_project_meter(project, request.meter, progress)
    profiles = found.profiles
    patterns = MeterPatterns(
        request,
        monthly=profiles.monthly,
        duration=profiles.duration,
        figures=profiles.figures,
        temperature=profiles.temperature,
        basis=_basis(project, request.meter),
        temperature_unit=temperature_unit(project),
    )
    if profiles.typical_days:
        patterns.typical_days = profiles.typical_days
        patterns.heat_map = profiles.heat_map
    else:
        words = (
            f"The readings of '{shown_name(meter_labels(project), request.meter)}' are "
            f"{_interval_words(found.meter.interval)} "
            "apart: typical days and the hour-by-date map need interval data of an hour or less."
        )
        patterns.notes.update(typical_days=words, heat_map=words)
    if profiles.temperature is None:
        patterns.notes["temperature"] = (
            "No weather in the project: import a weather station file to see how this meter "
            "follows the outdoor temperature."
        )
    patterns.weather, note = weather_rows(found, patterns.temperature_unit)
    if note:
        patterns.notes["weather"] = note
    step(progress, 1.0, "profiles ready")
    return patterns


def weather_rows(found: ProfiledMeter, shown: str = "°C") -> tuple[pd.DataFrame, str]:
    """The weather response as figure rows (temperatures in ``shown``, °C or °F), or no
    rows and the engine's reason; the same fit the plot draws."""
    response = found.key_figures()["weather response"]
    if "note" in response:
        return pd.DataFrame(columns=FIGURE_COLUMNS), str(response["note"])
    kind = KIND_WORDS.get(response["kind"], response["kind"])
    how = f"{kind} change-point fit of daily energy on {response['fitted on']}"
    rows = [
        (name, *in_temperature_unit(response[key] * factor, unit, shown), how)
        for key, name, unit, factor in WEATHER_ROWS
        if response.get(key) is not None
    ]
    table = pd.DataFrame(rows, columns=["figure", *FIGURE_COLUMNS]).set_index("figure")
    return table, ""


def _basis(project: Project, meter: str) -> str:
    """What the profiles are of: how many logged steps, and which calendar labels the days."""
    logged = len(project.cleaning_steps(meter))
    cleaning = (
        f"Cleaned readings: {counted(logged, 'logged step')} replayed, ranges left "
        "out of fitting dropped."
        if logged
        else "Readings as recorded: no cleaning steps logged for this meter."
    )
    calendar = stored_calendar(project)
    if calendar is None:
        days = (
            "No campus calendar in the project: days are weekdays and weekends only, with no "
            "holidays or campus periods."
        )
    else:
        holidays = f"{calendar.country} public holidays" if calendar.country else "no holidays"
        periods = len(calendar.periods)
        days = f"Days labelled by the campus calendar ({holidays}, {periods} periods)."
    return f"{cleaning} {days}"


def _interval_words(interval: pd.Timedelta) -> str:
    if interval % pd.Timedelta(days=1) == pd.Timedelta(0):
        days = interval // pd.Timedelta(days=1)
        return "a day" if days == 1 else f"{days} days"
    return f"{interval.total_seconds() / 3600:g} hours"
