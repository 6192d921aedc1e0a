"""Make a project's meters ready once per request (see :mod:`engine.ready_meters`).

Building them replays the cleaning log, labels every hour with the campus calendar and fills the
weather, so they are built here once per request and handed down; nothing below the steps reads
the project file again for them.
"""

from __future__ import annotations

from collections.abc import Sequence

from engine.calendar import CampusCalendar
from engine.errors import InputError
from engine.project import Project
from engine.ready_meters import PreparedSite, ReadyMeter, model_inputs
from engine.steps.cleaning import cleaned_meter
from engine.steps.site_calendar import stored_calendar
from engine.steps.site_weather import site_weather
from engine.weather import fill_hourly


def prepare_site(project: Project, names: Sequence[str] | None = None) -> PreparedSite:
    """Make the named meters (None: all; an empty list: none) of ``project`` ready, each once."""
    calendar = stored_calendar(project) or CampusCalendar()
    temperatures, station_hours = site_weather(project)
    hourly = None if temperatures is None else fill_hourly(temperatures).hourly
    utilities = {name: utility for name, utility, _ in project.meter_descriptions()}
    chosen = list(names) if names is not None else project.meter_names()
    unknown = [name for name in chosen if name not in utilities]
    if unknown:
        raise InputError(
            f"the project has no meter '{unknown[0]}'.",
            hint=f"Choose one of: {', '.join(utilities)}.",
            file=project.path,
        )
    meters = {}
    for name in chosen:
        raw, cleaned = cleaned_meter(project, name)
        inputs = model_inputs(raw, cleaned, calendar, hourly)
        meters[name] = ReadyMeter(
            name, utilities[name], raw, cleaned, inputs, project.cleaning_steps(name)
        )
    return PreparedSite(
        str(project.path), project.timezone, calendar, temperatures, hourly, meters, station_hours
    )
