"""Profile the meters of a project: cleaned readings, calendar labels and weather together.

This ties :mod:`engine.profiles` to a project file: it replays the cleaning log, labels the
intervals with the project's campus calendar, adds the weather, and fits the balance point.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.cleaning.project_log import cleaned_meter
from engine.degree_days import BalancePointFit, balance_point
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.profiles import MeterProfiles, profile_meter
from engine.progress import Progress
from engine.project import Project
from engine.site_calendar import stored_calendar
from engine.weather import daily_stats

#: Fewest working days for a balance point fitted on working days alone.
MIN_WORKING_DAYS = 60


@dataclass
class ProjectMeterProfile:
    """One meter's profiles with the weather response and the figures the command prints."""

    meter: MeterSeries
    profiles: MeterProfiles
    balance: BalancePointFit | None
    balance_note: str

    def key_figures(self) -> dict:
        """Base load, peak, ratios and the weather response as plain numbers."""
        figures = self.profiles.figures
        out = {
            name: {"value": _plain(row["value"]), "unit": row["unit"], "how": row["how"]}
            for name, row in figures.iterrows()
        }
        if self.balance is not None:
            fit = self.balance
            out["weather response"] = {
                "kind": fit.kind,
                "heating balance point °C": fit.heating_base,
                "heating slope kWh per °C-day": fit.heating_slope,
                "cooling balance point °C": fit.cooling_base,
                "cooling slope kWh per °C-day": fit.cooling_slope,
                "weather-independent kWh per day": fit.intercept,
                "R²": fit.r_squared,
                "CV(RMSE)": fit.cv_rmse,
                "days": fit.days,
            }
        else:
            out["weather response"] = {"note": self.balance_note}
        return out


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
    profiles = profile_meter(meter, labels, temps, progress=progress)
    balance, note = _weather_response(meter, temps, calendar)
    return ProjectMeterProfile(meter, profiles, balance, note)


def _weather_response(
    meter: MeterSeries, temps: pd.Series | None, calendar: CampusCalendar | None
) -> tuple[BalancePointFit | None, str]:
    """The best of a heating, cooling, or heating-and-cooling balance-point fit (by R²).

    The fit uses ordinary working days (weekdays in term, not holidays) so that the calendar's
    own swings do not hide the weather's; with too few such days it uses every day.
    """
    if temps is None:
        return None, "no weather in the project"
    daily_energy = _daily_energy(meter)
    working = _working_days(daily_energy.index, meter.timezone, calendar)
    if working.sum() >= MIN_WORKING_DAYS:
        daily_energy = daily_energy[working]
    daily_temps = daily_stats(temps, meter.timezone)
    fits = []
    for kind in ("heating", "cooling", "both"):
        try:
            fits.append(balance_point(daily_energy, daily_temps, kind))
        except InputError as error:
            note = error.problem
    if not fits:
        return None, note
    best = max(fits, key=lambda fit: _adjusted_r2(fit))
    return best, f"best of {len(fits)} balance-point fits by adjusted R²"


def _working_days(
    days: pd.DatetimeIndex, timezone: str, calendar: CampusCalendar | None
) -> pd.Series:
    """True for weekdays that are not public holidays and not in a break, closure or summer."""
    noon = (days + pd.Timedelta(hours=12)).tz_localize(timezone).tz_convert("UTC")
    labels = label_intervals(noon, timezone, calendar or CampusCalendar())
    ordinary = labels["period_kind"].astype(str).isin(("", "term"))
    working = (labels["day_type"].astype(str) == "weekday") & ordinary
    return pd.Series(working.to_numpy(), index=days)


def _daily_energy(meter: MeterSeries) -> pd.Series:
    """Energy of each complete local day."""
    local = meter.values.tz_convert(meter.timezone)
    days = local.index.normalize().tz_localize(None)
    totals = local.groupby(days).agg(["sum", "count"])
    expected = pd.Timedelta(days=1) / meter.interval
    return totals.loc[totals["count"] >= expected - 1, "sum"]


def _adjusted_r2(fit: BalancePointFit) -> float:
    parameters = 1 + 2 * (fit.heating_slope is not None) + 2 * (fit.cooling_slope is not None)
    return 1 - (1 - fit.r_squared) * (fit.days - 1) / max(fit.days - parameters, 1)


def _plain(value):
    return float(value) if isinstance(value, int | float) else value
