"""The site's outdoor temperatures as the project holds them: one station, or several combined."""

from __future__ import annotations

import pandas as pd

from engine.project import Project
from engine.weather import combined_stations


def site_temperatures(project: Project) -> pd.Series | None:
    """The project's temperatures in °C on a UTC index: its station's readings, or with several
    stations (a backup station, or one station's years in separate files) their hours combined
    (:func:`engine.weather.combined_stations`); None when the project has no weather."""
    stations = project.weather_stations()
    if len(stations) <= 1:
        return project.load_weather(stations[0]) if stations else None
    return combined_stations(project.load_weather(station) for station in stations)
