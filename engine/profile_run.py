"""Profile the meters of a project: cleaned readings, calendar labels and weather together.

This ties :mod:`engine.profiles` to a project file: it replays the cleaning log, labels the
intervals with the project's campus calendar, adds the weather, and fits the weather response
(one change-point fit, on ordinary working days, for the table and the plot alike).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.cleaning.project_log import cleaned_meter
from engine.meters import MeterSeries
from engine.profiles import MeterProfiles, TemperatureResponse, profile_meter
from engine.progress import Progress
from engine.project import Project
from engine.site_calendar import stored_calendar

#: The weather response's change-point shapes in words.
SHAPE_WORDS = {"2P": "linear", "3PH": "heating", "3PC": "cooling", "4P": "both", "5P": "both"}


@dataclass
class ProjectMeterProfile:
    """One meter's profiles with the weather response and the figures the command prints."""

    meter: MeterSeries
    profiles: MeterProfiles
    weather_note: str = ""  # why there is no weather response, when there is none

    def key_figures(self) -> dict:
        """Base load, peak, ratios and the weather response as plain numbers.

        The weather response is the one change-point fit the Patterns plot draws (fitted on
        ordinary working days when the calendar gives enough of them): balance points are its
        change points, slopes per °C-day its slopes (energy per day per degree).
        """
        figures = self.profiles.figures
        out = {
            name: {"value": _plain(row["value"]), "unit": row["unit"], "how": row["how"]}
            for name, row in figures.iterrows()
        }
        response = self.profiles.temperature
        if response is None:
            out["weather response"] = {"note": self.weather_note}
        else:
            out["weather response"] = _response_figures(response)
        return out


def _response_figures(response: TemperatureResponse) -> dict:
    model = response.model
    heating = model.heating_slope_ > 0
    cooling = model.cooling_slope_ > 0
    points = model.change_points_
    return {
        "kind": SHAPE_WORDS[model.kind],
        "heating balance point °C": points[0] if heating and points else None,
        "heating slope kWh per °C-day": model.heating_slope_ if heating else None,
        "cooling balance point °C": points[-1] if cooling and points else None,
        "cooling slope kWh per °C-day": model.cooling_slope_ if cooling else None,
        "weather-independent kWh per day": model.intercept_ if points else None,
        "R²": _finite(model.r2_),  # none when every day used the same
        "CV(RMSE)": _finite(model.cv_rmse_ / 100.0),
        "days": model.n_points_,
        "fitted on": response.basis,
    }


def profile_project_meter(
    project: Project, name: str, progress: Progress | None = None
) -> ProjectMeterProfile:
    """Every profile of meter ``name`` on its cleaned readings (excluded ranges left out)."""
    raw, cleaned = cleaned_meter(project, name)
    keep = cleaned.values.notna() & ~cleaned.excluded
    meter = replace(raw, values=cleaned.values[keep])
    calendar = stored_calendar(project)
    labels = None
    if calendar is not None:
        labels = label_intervals(meter.values.index, meter.timezone, calendar)
    temps = project.load_weather() if project.weather_stations() else None
    profiles = profile_meter(
        meter, labels, temps, progress=progress, weather_fit_days=_working_days(meter, calendar)
    )
    note = "" if temps is not None else "no weather in the project"
    return ProjectMeterProfile(meter, profiles, note)


def _working_days(meter: MeterSeries, calendar: CampusCalendar | None) -> pd.DatetimeIndex:
    """The meter's local dates that are weekdays, not public holidays and not in a break,
    closure or summer: the weather shows best on them (the calendar's swings do not hide it)."""
    local = meter.values.index.tz_convert(meter.timezone)
    days = pd.date_range(local[0].normalize(), local[-1].normalize(), freq="D").tz_localize(None)
    noon = (days + pd.Timedelta(hours=12)).tz_localize(meter.timezone).tz_convert("UTC")
    labels = label_intervals(noon, meter.timezone, calendar or CampusCalendar())
    ordinary = labels["period_kind"].astype(str).isin(("", "term"))
    working = (labels["day_type"].astype(str) == "weekday") & ordinary
    return days[working.to_numpy()]


def _finite(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def _plain(value):
    return float(value) if isinstance(value, int | float) else value
