"""Lay the scenario's faults over the clean simulation and write the sample files.

File layouts are fixed (importer tests rely on them); ``sample/README.md`` documents each.
"""

from __future__ import annotations

from dataclasses import asdict, replace
from datetime import timedelta
from pathlib import Path

import numpy as np
import pandas as pd

from sample import scenario
from sample.campus import (
    CHILLED_WATER_INTERVAL,
    ELECTRICITY_INTERVAL,
    CampusSimulation,
    local_midnight,
    simulate_campus,
)
from sample.campus_calendar import DAY_TYPES
from sample.faults import Fault, apply_faults
from sample.files import fixed_decimals, write_csv, write_interval_workbook, write_json
from sample.gas import fahrenheit

ELECTRICITY_FILE = "electricity-15min.xlsx"
ELECTRICITY_SHEET = "Interval export"
GAS_FILE = "gas-boilerhouse-daily.csv"
GAS_READ_COLUMN = "Meter Reading (CCF)"
CHILLED_WATER_FILE = "chilled-water-plant.csv"
BILLS_FILE = "electric-bills.csv"
WEATHER_FILE = "weather-station.csv"
WEATHER_COLUMN = "Dry Bulb (°F)"
CALENDAR_FILE = "campus-calendar.csv"
TRUTH_FILE = "truth.json"
FAULTS_FILE = "faults.json"


def monthly_totals(values: pd.DataFrame, timezone: str, decimals: int = 3) -> dict:
    """Per column, the sum over each local calendar month ("YYYY-MM"), rounded."""
    index = values.index
    if index.tz is not None:
        index = index.tz_convert(timezone)
    months = index.strftime("%Y-%m")
    sums = values.groupby(months).sum().round(decimals)
    return {column: sums[column].to_dict() for column in sums.columns}


def _local_naive(instants: pd.DatetimeIndex) -> pd.DatetimeIndex:
    return instants.tz_convert(scenario.SITE_TIMEZONE).tz_localize(None)


def _iso_with_offset(instants: pd.DatetimeIndex) -> pd.Index:
    """ISO 8601 local time with a ``±hh:mm`` offset, e.g. ``2024-07-01T13:00:00-05:00``."""
    text = pd.Index(instants.tz_convert(scenario.SITE_TIMEZONE).strftime("%Y-%m-%dT%H:%M:%S%z"))
    return text.str[:-2] + ":" + text.str[-2:]


def _day_fault(kind: str, day, detail: dict) -> Fault:
    start = local_midnight(day)
    end = local_midnight(day + timedelta(days=1))
    return Fault(GAS_FILE, kind, (GAS_READ_COLUMN,), start, end, detail)


def _write_electricity(directory: Path, simulation: CampusSimulation) -> list[Fault]:
    faulted, faults = apply_faults(
        simulation.electricity,
        scenario.ELECTRICITY_FAULTS,
        scenario.SITE_TIMEZONE,
        ELECTRICITY_FILE,
    )
    exported = pd.Timestamp(scenario.EXPORTED_AT)
    saved_at = exported.tz_localize(scenario.SITE_TIMEZONE).tz_convert("UTC").tz_localize(None)
    write_interval_workbook(
        directory / ELECTRICITY_FILE,
        sheet=ELECTRICITY_SHEET,
        title_rows=[[scenario.METER_SYSTEM], [f"Exported {exported:%Y-%m-%d %H:%M}"], []],
        header=["Timestamp", *faulted.columns],
        stamps=_local_naive(faulted.index).to_pydatetime().tolist(),
        values=faulted.round(3).to_numpy(),
        author=scenario.METER_SYSTEM,
        saved_at=saved_at.to_pydatetime(),
    )
    return faults


def _write_chilled_water(directory: Path, simulation: CampusSimulation) -> list[Fault]:
    faulted, faults = apply_faults(
        simulation.chilled_water,
        scenario.CHILLED_WATER_FAULTS,
        scenario.SITE_TIMEZONE,
        CHILLED_WATER_FILE,
    )
    meters = len(faulted.columns)
    ends = _iso_with_offset(faulted.index + CHILLED_WATER_INTERVAL)
    table = pd.DataFrame(
        {
            "Meter ID": np.tile(faulted.columns.to_numpy(dtype=object), len(faulted)),
            "Reading Time (UTC offset)": np.repeat(ends.to_numpy(dtype=object), meters),
            "Ton-Hours": fixed_decimals(faulted.to_numpy().ravel(), 2),
        }
    )
    write_csv(directory / CHILLED_WATER_FILE, table)
    return [_with_file_stamps(fault, CHILLED_WATER_INTERVAL) for fault in faults]


def _with_file_stamps(fault: Fault, interval: pd.Timedelta) -> Fault:
    """The fault with the interval-end stamps its rows carry in the file."""
    starts = pd.date_range(fault.start, fault.end, freq=interval, inclusive="left")
    stamps = list(_iso_with_offset(starts + interval))
    return replace(fault, detail={**fault.detail, "stamps_in_file": stamps})


def _write_gas(directory: Path, simulation: CampusSimulation) -> list[Fault]:
    reads = simulation.gas_reads
    table = pd.DataFrame(
        {
            "Read Date": reads.reads.index.strftime("%m/%d/%Y"),
            GAS_READ_COLUMN: reads.reads.to_numpy(),
        }
    )
    write_csv(directory / GAS_FILE, table)
    modulus = 10**scenario.GAS_REGISTER_DIGITS
    replaced = scenario.GAS_REPLACEMENT_DAY
    last_old = int(reads.reads[pd.Timestamp(replaced - timedelta(days=1))])
    rollovers = [
        _day_fault("register_rollover", day, {"register_wraps_after": modulus - 1})
        for day in reads.rollover_days
    ]
    detail = {
        "last_read_of_old_meter": last_old,
        "new_meter_reading_at_fitting": scenario.GAS_NEW_METER_READING,
    }
    return [*rollovers, _day_fault("meter_replacement", replaced, detail)]


def _write_bills(directory: Path, simulation: CampusSimulation) -> None:
    bills = simulation.bills
    table = pd.DataFrame(
        {
            "Service From": [day.isoformat() for day in bills["service_from"]],
            "Service To": [day.isoformat() for day in bills["service_to"]],
            "Billed kWh": bills["kwh"].astype(np.int64),
            "Max Demand kW": fixed_decimals(bills["max_demand_kw"], 1),
            "Total Charges ($)": fixed_decimals(bills["charges"], 2),
        }
    )
    write_csv(directory / BILLS_FILE, table)


def _write_weather(directory: Path, simulation: CampusSimulation) -> list[Fault]:
    observed = fahrenheit(simulation.weather).to_frame(WEATHER_COLUMN)
    faulted, faults = apply_faults(
        observed, scenario.WEATHER_FAULTS, scenario.SITE_TIMEZONE, WEATHER_FILE
    )
    table = pd.DataFrame(
        {
            "Observation Time (local)": _local_naive(faulted.index).strftime("%Y-%m-%d %H:%M"),
            WEATHER_COLUMN: fixed_decimals(faulted[WEATHER_COLUMN], 1),
        }
    )
    write_csv(directory / WEATHER_FILE, table)
    return faults


def _write_calendar(directory: Path, simulation: CampusSimulation) -> None:
    table = simulation.periods.copy()
    for column in ("First Day", "Last Day"):
        table[column] = [day.isoformat() for day in table[column]]
    write_csv(directory / CALENDAR_FILE, table)


def truth(simulation: CampusSimulation) -> dict:
    """The documented parameters and the clean monthly totals, as plain JSON."""
    timezone = scenario.SITE_TIMEZONE
    climate = scenario.CLIMATE
    weather = simulation.weather
    normal = pd.Series(climate.normal_c(weather.index), index=weather.index.tz_convert(timezone))
    electricity = monthly_totals(simulation.electricity, timezone)
    chilled_water = monthly_totals(simulation.chilled_water, timezone)
    gas = monthly_totals(simulation.gas_use.to_frame(), timezone)["gas_ccf"]
    weather_means = weather.groupby(weather.index.tz_convert(timezone).strftime("%Y-%m")).mean()
    return {
        "scenario": {
            "campus": scenario.CAMPUS,
            "town": scenario.TOWN,
            "timezone": timezone,
            "first_day": scenario.FIRST_DAY.isoformat(),
            "last_day": scenario.LAST_DAY.isoformat(),
            "calendar_last_day": scenario.CALENDAR_LAST_DAY.isoformat(),
            "stream_number": scenario.STREAM_NUMBER,
        },
        "climate": {
            **asdict(climate),
            "normal_month_mean_c": normal.groupby(normal.index.month).mean().round(2).to_dict(),
            "monthly_mean_c": weather_means.round(3).to_dict(),
        },
        "day_types": {
            "precedence": list(DAY_TYPES),
            "holidays": "US federal holidays from holidays.US, observed days included",
        },
        "electricity": {
            "file": ELECTRICITY_FILE,
            "interval_minutes": ELECTRICITY_INTERVAL // pd.Timedelta(minutes=1),
            "unmetered_kw": scenario.UNMETERED_KW,
            "buildings": {
                model.column: {**model.to_dict(), "monthly_kwh": electricity[model.column]}
                for model in scenario.BUILDINGS
            },
        },
        "chilled_water": {
            "file": CHILLED_WATER_FILE,
            "interval_minutes": CHILLED_WATER_INTERVAL // pd.Timedelta(minutes=1),
            "meters": {
                model.name: {**model.to_dict(), "monthly_ton_hours": chilled_water[model.name]}
                for model in scenario.CHILLED_WATER_METERS
            },
        },
        "gas": {
            "file": GAS_FILE,
            **scenario.GAS.to_dict(),
            "first_reading": scenario.GAS_FIRST_READING,
            "register_digits": scenario.GAS_REGISTER_DIGITS,
            "replacement_day": scenario.GAS_REPLACEMENT_DAY.isoformat(),
            "new_meter_reading": scenario.GAS_NEW_METER_READING,
            "monthly_ccf": gas,
        },
        "tariff": [rates.to_dict() for rates in scenario.TARIFF],
    }


def write_sample(directory: Path, simulation: CampusSimulation | None = None) -> list[Path]:
    """Write every sample file into ``directory`` and return their paths.

    Parameters
    ----------
    directory : pathlib.Path
        Created if missing; existing sample files are overwritten.
    simulation : CampusSimulation, optional
        A result of :func:`sample.campus.simulate_campus` to reuse; simulated when omitted.
    """
    if simulation is None:
        simulation = simulate_campus()
    directory.mkdir(parents=True, exist_ok=True)
    faults = [
        *_write_electricity(directory, simulation),
        *_write_gas(directory, simulation),
        *_write_chilled_water(directory, simulation),
        *_write_weather(directory, simulation),
    ]
    _write_bills(directory, simulation)
    _write_calendar(directory, simulation)
    write_json(directory / TRUTH_FILE, truth(simulation))
    write_json(directory / FAULTS_FILE, [fault.to_dict(scenario.SITE_TIMEZONE) for fault in faults])
    names = [ELECTRICITY_FILE, GAS_FILE, CHILLED_WATER_FILE, BILLS_FILE, WEATHER_FILE]
    return [directory / name for name in [*names, CALENDAR_FILE, TRUTH_FILE, FAULTS_FILE]]
