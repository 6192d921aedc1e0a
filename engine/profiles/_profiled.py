"""A meter's profiles with its weather response, and the key figures the command line prints."""

from __future__ import annotations

import math
from dataclasses import dataclass

import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.meters import MeterSeries
from engine.profiles._bundle import MeterProfiles
from engine.profiles._weather import TemperatureResponse

#: The weather response's change-point shapes in words.
SHAPE_WORDS = {"2P": "linear", "3PH": "heating", "3PC": "cooling", "4P": "both", "5P": "both"}


@dataclass
class ProfiledMeter:
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


def working_days(meter: MeterSeries, calendar: CampusCalendar | None) -> pd.DatetimeIndex:
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
