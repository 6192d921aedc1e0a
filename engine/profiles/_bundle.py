"""Every profile of one meter in one call, for the profile screen and the workbook."""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from engine.meters import MeterSeries
from engine.profiles._figures import key_figures
from engine.profiles._shapes import heat_map, typical_day
from engine.profiles._totals import load_duration, monthly_totals_by_year
from engine.profiles._weather import TemperatureResponse, energy_vs_temperature
from engine.progress import Progress, step

#: Readings coarser than this (daily register reads, say) have no shape within the day.
INTRADAY = pd.Timedelta(hours=1)

#: Groupings computed by :func:`profile_meter`.
BUNDLED_GROUPINGS: tuple[str, ...] = ("day_type", "period", "season")


@dataclass(frozen=True)
class MeterProfiles:
    """All profiles of one meter; ``temperature`` is None when no weather was given."""

    typical_days: dict[str, pd.DataFrame]
    heat_map: pd.DataFrame
    monthly: pd.DataFrame
    duration: pd.DataFrame
    figures: pd.DataFrame
    temperature: TemperatureResponse | None


def profile_meter(
    meter: MeterSeries,
    labels: pd.DataFrame | None = None,
    temperatures: pd.Series | None = None,
    *,
    hemisphere: str = "north",
    progress: Progress | None = None,
    weather_fit_days: pd.DatetimeIndex | None = None,
) -> MeterProfiles:
    """Compute every profile of ``meter`` with default settings.

    Typical days are hourly, grouped by day type, campus period and season; the heat map is
    in kWh; the weather response is fitted on ``weather_fit_days`` when given. See the
    individual functions for the settings.
    """
    if meter.interval > INTRADAY:
        return _coarse_profiles(meter, temperatures, labels, progress, weather_fit_days)
    typical_days = {}
    for done, grouping in enumerate(BUNDLED_GROUPINGS):
        words = grouping.replace("_", " ")  # "day type", not the key "day_type"
        step(progress, 0.5 * done / len(BUNDLED_GROUPINGS), f"typical days by {words}")
        typical_days[grouping] = typical_day(meter, labels, by=grouping, hemisphere=hemisphere)
    step(progress, 0.5, "heat map")
    matrix = heat_map(meter)
    step(progress, 0.6, "monthly totals")
    monthly = monthly_totals_by_year(meter)
    step(progress, 0.7, "load-duration curve")
    duration = load_duration(meter)
    step(progress, 0.8, "key figures")
    figures = key_figures(meter, labels)
    response = None
    if temperatures is not None:
        step(progress, 0.9, "energy against temperature")
        response = energy_vs_temperature(meter, temperatures, labels, fit_days=weather_fit_days)
    step(progress, 1.0, "profiles ready")
    return MeterProfiles(typical_days, matrix, monthly, duration, figures, response)


def _coarse_profiles(
    meter: MeterSeries,
    temperatures: pd.Series | None,
    labels: pd.DataFrame | None,
    progress: Progress | None,
    weather_fit_days: pd.DatetimeIndex | None,
) -> MeterProfiles:
    """Daily or coarser readings: monthly totals, duration and weather response only."""
    step(progress, 0.3, "monthly totals")
    monthly = monthly_totals_by_year(meter)
    step(progress, 0.6, "load-duration curve")
    duration = load_duration(meter)
    response = None
    if temperatures is not None:
        step(progress, 0.8, "energy against temperature")
        response = energy_vs_temperature(meter, temperatures, labels, fit_days=weather_fit_days)
    step(progress, 1.0, "profiles ready")
    figures = pd.DataFrame(
        {
            "value": [float(meter.values.sum()), float(meter.values.mean())],
            "unit": ["kWh", f"kWh per {_interval_text(meter.interval)}"],
            "how": ["sum of the readings present", "mean of the readings present"],
        },
        index=pd.Index(["total energy", "mean energy per interval"], name="figure"),
    )
    return MeterProfiles({}, pd.DataFrame(), monthly, duration, figures, response)


def _interval_text(interval: pd.Timedelta) -> str:
    return "day" if interval == pd.Timedelta(days=1) else str(interval)
