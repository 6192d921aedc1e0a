"""The site's outdoor temperatures as the project holds them: one station, or several combined."""

from __future__ import annotations

import pandas as pd

from engine.project import Project
from engine.weather import combined_stations, hourly_stations


def site_temperatures(project: Project) -> pd.Series | None:
    """The project's temperatures in °C on a UTC index: its station's readings, or with several
    stations (a backup station, or one station's years in separate files) their hours combined
    (:func:`engine.weather.combined_stations`); None when the project has no weather."""
    stations = project.weather_stations()
    if len(stations) <= 1:
        return project.load_weather(stations[0]) if stations else None
    return combined_stations(project.load_weather(station) for station in stations)


def stations_sentence(project: Project) -> str | None:
    """How the site's temperatures were made from several stations, for a budget's
    assumptions (which station is taken as it is, which only fill its missing hours); None
    with one station or none."""
    names = project.weather_stations()
    if len(names) <= 1:
        return None
    # The stations are read again here (a budget's site was prepared from their combination):
    # only for projects with several, and the order is the one combined_stations fills in.
    stations = hourly_stations({name: project.load_weather(name) for name in names})
    hours = {name: len(hourly) for name, hourly in stations.items()}
    first, *others = hours
    fillers = ", then ".join(f"'{name}' ({hours[name]:,} hours)" for name in others)
    return (
        f"the site's hourly temperatures are station '{first}' ({hours[first]:,} hours) as "
        f"read, with the hours it lacks taken from {fillers}; stations are never averaged"
    )
