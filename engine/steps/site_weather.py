"""The site's outdoor temperatures as the project holds them: one station, or several combined."""

from __future__ import annotations

import pandas as pd

from engine.project import Project
from engine.weather import combined_hours, hourly_stations


def site_temperatures(project: Project) -> pd.Series | None:
    """The project's temperatures in °C on a UTC index: its station's readings, or with several
    stations (a backup station, or one station's years in separate files) their hours combined
    (:func:`engine.weather.combined_hours`); None when the project has no weather."""
    return site_weather(project)[0]


def site_weather(project: Project) -> tuple[pd.Series | None, dict[str, int]]:
    """:func:`site_temperatures` and, when several stations make them, each station's hours in
    the order they are taken ({} otherwise), from one read of each station."""
    names = project.weather_stations()
    if len(names) <= 1:
        return (project.load_weather(names[0]) if names else None), {}
    hourly = hourly_stations({name: project.load_weather(name) for name in names})
    return combined_hours(hourly.values()), {name: len(hours) for name, hours in hourly.items()}


def stations_sentence(station_hours: dict[str, int]) -> str | None:
    """How the site's temperatures were made from several stations (``station_hours`` as
    :func:`site_weather` gives them), for a budget's assumptions: which station is taken as it
    is, which only fill its missing hours; None with one station or none."""
    if len(station_hours) <= 1:
        return None
    first, *others = station_hours
    fillers = ", then ".join(f"'{name}' ({station_hours[name]:,} hours)" for name in others)
    return (
        f"the site's hourly temperatures are station '{first}' ({station_hours[first]:,} hours) "
        f"as read, with the hours it lacks taken from {fillers}; stations are never averaged"
    )
