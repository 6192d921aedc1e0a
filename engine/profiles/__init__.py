"""Load profiles of a meter: typical days, heat map, monthly totals, duration curve, key figures.

Every function takes a :class:`engine.meters.MeterSeries` (and, where day types or occupancy
matter, the interval labels of ``engine.calendar.label_intervals``) and returns a plain pandas
table with units in its column names, ready to plot and to write to a workbook. Without labels,
day types come from the local weekday and occupied hours are Monday–Friday 07:00–19:00.
"""

from engine.profiles._bundle import MeterProfiles, profile_meter
from engine.profiles._figures import key_figures
from engine.profiles._profiled import SHAPE_WORDS, ProfiledMeter, working_days
from engine.profiles._readings import (
    complete_days,
    fallback_labels,
    interval_hours,
    local_readings,
    require_interval_at_most,
)
from engine.profiles._shapes import (
    ALL_DAYS,
    GROUPINGS,
    NO_PERIOD,
    heat_map,
    quantile_column,
    season_of_month,
    typical_day,
)
from engine.profiles._totals import duration_curve, load_duration, monthly_totals_by_year
from engine.profiles._weather import (
    TemperatureResponse,
    change_point_line,
    daily_mean_temperature,
    energy_vs_temperature,
)

__all__ = [
    "ALL_DAYS",
    "GROUPINGS",
    "NO_PERIOD",
    "SHAPE_WORDS",
    "MeterProfiles",
    "ProfiledMeter",
    "TemperatureResponse",
    "change_point_line",
    "complete_days",
    "daily_mean_temperature",
    "duration_curve",
    "energy_vs_temperature",
    "fallback_labels",
    "heat_map",
    "interval_hours",
    "key_figures",
    "load_duration",
    "local_readings",
    "monthly_totals_by_year",
    "profile_meter",
    "quantile_column",
    "require_interval_at_most",
    "season_of_month",
    "typical_day",
    "working_days",
]
