"""The clean simulation of the whole campus, before any fault: the sample's ground truth."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

import holidays
import numpy as np
import pandas as pd

from sample import scenario
from sample.bills import billing_periods, electric_bills
from sample.campus_calendar import campus_periods, day_types
from sample.gas import RegisterReads, heating_degree_days_f, register_reads, simulate_gas_daily
from sample.loads import IntervalDrivers, interval_drivers, simulate_load
from sample.weather import simulate_weather

ELECTRICITY_INTERVAL = pd.Timedelta(minutes=15)
CHILLED_WATER_INTERVAL = pd.Timedelta(hours=1)


def stream(part: str, offset: int = 0) -> np.random.Generator:
    """The random generator for one part of the scenario (see ``scenario.STREAM_PARTS``)."""
    return np.random.default_rng([scenario.STREAM_NUMBER, scenario.STREAM_PARTS[part] + offset])


def local_midnight(day: date) -> pd.Timestamp:
    """Start of a local calendar day at the site, in UTC."""
    return pd.Timestamp(day).tz_localize(scenario.SITE_TIMEZONE).tz_convert("UTC")


def interval_starts(interval: pd.Timedelta) -> pd.DatetimeIndex:
    """UTC interval starts covering the scenario's local days, first to last inclusive."""
    return pd.date_range(
        local_midnight(scenario.FIRST_DAY),
        local_midnight(scenario.LAST_DAY + timedelta(days=1)),
        freq=interval,
        inclusive="left",
    )


def campus_holidays() -> list[date]:
    """US federal holidays (with observed days) over the calendar's years."""
    years = range(scenario.FIRST_DAY.year, scenario.CALENDAR_LAST_DAY.year + 1)
    return sorted(holidays.US(years=years).keys())


@dataclass(frozen=True)
class CampusSimulation:
    """Everything simulated, clean; indexes are UTC interval starts unless said otherwise."""

    weather: pd.Series
    periods: pd.DataFrame
    day_type_by_day: pd.Series
    electricity: pd.DataFrame
    chilled_water: pd.DataFrame
    gas_use: pd.Series
    gas_reads: RegisterReads
    bills: pd.DataFrame


def account_energy(electricity: pd.DataFrame) -> pd.Series:
    """kWh per 15 minutes on the utility account: the buildings plus the unmetered load."""
    hours = ELECTRICITY_INTERVAL / pd.Timedelta(hours=1)
    return electricity.sum(axis=1) + scenario.UNMETERED_KW * hours


def simulate_campus() -> CampusSimulation:
    """Simulate the scenario from ``scenario``'s constants; the same every time."""
    timezone = scenario.SITE_TIMEZONE
    weather = simulate_weather(
        interval_starts(pd.Timedelta(hours=1)), scenario.CLIMATE, stream("weather")
    )
    periods = campus_periods(scenario.FIRST_DAY, scenario.CALENDAR_LAST_DAY)
    days = pd.date_range(scenario.FIRST_DAY, scenario.LAST_DAY, freq="D")
    day_type = pd.Series(day_types(days, periods, campus_holidays()), index=days, name="day_type")
    origin = local_midnight(scenario.FIRST_DAY)

    def drivers(interval: pd.Timedelta) -> IntervalDrivers:
        starts = interval_starts(interval)
        return interval_drivers(starts, interval, weather, day_type, timezone, origin)

    quarter_hours = drivers(ELECTRICITY_INTERVAL)
    electricity = pd.DataFrame(
        {
            model.column: simulate_load(model, quarter_hours, stream("electricity", position))
            for position, model in enumerate(scenario.BUILDINGS)
        }
    )
    hours = drivers(CHILLED_WATER_INTERVAL)
    chilled_water = pd.DataFrame(
        {
            model.name: simulate_load(model, hours, stream("chilled_water", position))
            for position, model in enumerate(scenario.CHILLED_WATER_METERS)
        }
    )

    degree_days = heating_degree_days_f(weather, timezone, scenario.GAS.balance_f)
    gas_use = simulate_gas_daily(scenario.GAS, degree_days, stream("gas"))
    reads = register_reads(
        gas_use,
        scenario.GAS_FIRST_READING,
        scenario.GAS_REPLACEMENT_DAY,
        scenario.GAS_NEW_METER_READING,
        scenario.GAS_REGISTER_DIGITS,
    )
    if len(reads.rollover_days) != 1:
        raise ValueError(f"the gas register should wrap once, not {len(reads.rollover_days)}")

    bill_periods = billing_periods(scenario.FIRST_DAY, scenario.LAST_DAY, stream("billing_periods"))
    bills = electric_bills(account_energy(electricity), bill_periods, timezone, scenario.TARIFF)
    return CampusSimulation(
        weather=weather,
        periods=periods,
        day_type_by_day=day_type,
        electricity=electricity,
        chilled_water=chilled_water,
        gas_use=gas_use,
        gas_reads=reads,
        bills=bills,
    )
