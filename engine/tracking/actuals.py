"""What happened in an adopted budget's months: metered energy per day, the adopted model's
prediction under the weather that happened, and what the metered energy cost.

The actual is what the meter recorded, as imported: the sum of the stored readings whose
interval starts in the local day (cleaning fixes are for modelling; finance compares the
budget with the metered energy). Days after the as-of date hold nothing.
"""

from __future__ import annotations

from dataclasses import replace
from datetime import timedelta

import numpy as np
import pandas as pd

from engine.budget import BudgetWindow, MeterPlan
from engine.budget.meter_grid import MeterGrid, predictions, simulation_step
from engine.budget.periods import local_midnight
from engine.budget.scenarios import WeatherScenarios
from engine.calendar import CampusCalendar
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.models import model_from_dict
from engine.ready_meters import ReadyMeter
from engine.tariffs import Tariff, cost


def daily_actuals(raw: MeterSeries, window: BudgetWindow, cut: pd.Timestamp) -> pd.DataFrame:
    """Per local day of ``window``: metered kWh (``kwh``, 0 when nothing was read) and how
    many readings it holds (``readings``), counting readings before ``cut`` only."""
    values = raw.values
    kept = values[(values.index >= window.start) & (values.index < cut)].dropna()
    days = kept.index.tz_convert(window.timezone).tz_localize(None).normalize()
    grouped = kept.groupby(days)
    frame = pd.DataFrame({"kwh": grouped.sum(), "readings": grouped.count()})
    return frame.reindex(window.days, fill_value=0)


def expected_readings(window: BudgetWindow, interval: pd.Timedelta) -> pd.Series:
    """Readings a complete local day of ``window`` holds at ``interval`` (23 to 25 hours)."""
    midnights = window.day_midnights().append(pd.DatetimeIndex([window.end]))
    lengths = np.diff(midnights.asi8) / interval.value
    return pd.Series(np.maximum(np.floor(lengths), 1), index=window.days)


def happened_weather(hourly: pd.Series | None, window: BudgetWindow) -> WeatherScenarios | None:
    """The weather that happened on the window's hours as one scenario (NaN where unknown)."""
    if hourly is None:
        return None
    values = hourly.reindex(window.hours).to_numpy(dtype=np.float64)
    return WeatherScenarios(("happened",), values[np.newaxis, :], "the weather that happened")


def happened_prediction(
    ready: ReadyMeter,
    adopted: dict,
    calendar: CampusCalendar,
    window: BudgetWindow,
    weather: WeatherScenarios | None,
) -> np.ndarray | None:
    """The adopted model's kWh per local day under the weather that happened (NaN on days
    whose weather is unknown); None when the model needs weather the project no longer has.
    """
    uses_temperature = bool(adopted["uses_temperature"])
    if uses_temperature and (weather is None or ready.inputs.temperature is None):
        return None
    history = ready.inputs if uses_temperature else replace(ready.inputs, temperature=None)
    plan = MeterPlan(
        ready.name,
        ready.utility,
        model_from_dict(adopted["model"]),
        history,
        calendar=calendar,
    )
    grid = MeterGrid.on(window, simulation_step(plan))
    scenario = weather if uses_temperature else WeatherScenarios(("none",), None, "none")
    predicted = predictions(plan, grid, window, scenario)[0]
    return np.add.reduceat(predicted, grid.day_starts)


def tariff_cost(
    raw: MeterSeries, window: BudgetWindow, month: int, tariff: Tariff
) -> float | InputError:
    """The month's metered energy priced by ``tariff``, or the reason it cannot be (a reading
    is missing, or the readings' interval does not suit the tariff)."""
    days = window.days[window.month_of_day() == month]
    start = local_midnight(days[0].date(), window.timezone)
    end = local_midnight(days[-1].date() + timedelta(days=1), window.timezone)
    values = raw.values[(raw.values.index >= start) & (raw.values.index < end)]
    try:
        return float(cost(values, raw.timezone, tariff, raw.interval)["total"].sum())
    except InputError as error:
        return error
