"""Profile the meters of a project: cleaned readings, calendar labels and weather together.

This ties :mod:`engine.profiles` to a project file: it replays the cleaning log, labels the
intervals with the project's campus calendar, adds the weather, and fits the weather response
(one change-point fit, on ordinary working days, for the table and the plot alike).
"""

from __future__ import annotations

from dataclasses import replace

from engine.calendar import label_intervals
from engine.profiles import ProfiledMeter, profile_meter, working_days
from engine.progress import Progress
from engine.project import Project
from engine.steps.cleaning import cleaned_meter
from engine.steps.site_weather import site_temperatures


def profile_project_meter(
    project: Project, name: str, progress: Progress | None = None
) -> ProfiledMeter:
    """Every profile of meter ``name`` on its cleaned readings (excluded ranges left out)."""
    raw, cleaned = cleaned_meter(project, name)
    keep = cleaned.values.notna() & ~cleaned.excluded
    meter = replace(raw, values=cleaned.values[keep])
    calendar = cleaned.calendar  # the project's, as the log was replayed with it
    labels = None
    if calendar is not None:
        labels = label_intervals(meter.values.index, meter.timezone, calendar)
    temps = site_temperatures(project)
    profiles = profile_meter(
        meter, labels, temps, progress=progress, weather_fit_days=working_days(meter, calendar)
    )
    note = "" if temps is not None else "no weather in the project"
    return ProfiledMeter(meter, profiles, note)
