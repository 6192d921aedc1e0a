"""The bundled sample: an invented college campus and the script that writes its files.

The building blocks (weather, calendar, loads, gas register, bills, faults) are importable so
that synthetic tests elsewhere can reuse them with known ground truth; ``sample/generate.py``
puts them together and writes ``sample/data/``.
"""

from sample.ar1 import lognormal_multiplier, unit_ar1
from sample.bills import Rates, billing_periods, electric_bills
from sample.campus import CampusSimulation, simulate_campus
from sample.campus_calendar import DAY_TYPES, campus_periods, day_types
from sample.export import write_sample
from sample.faults import Fault, FaultSpec, apply_faults
from sample.gas import GasModel, heating_degree_days_f, register_reads, simulate_gas_daily
from sample.loads import IntervalDrivers, LoadModel, interval_drivers, mean_power, simulate_load
from sample.weather import Climate, interpolate_temperature, simulate_weather

__all__ = [
    "DAY_TYPES",
    "CampusSimulation",
    "Climate",
    "Fault",
    "FaultSpec",
    "GasModel",
    "IntervalDrivers",
    "LoadModel",
    "Rates",
    "apply_faults",
    "billing_periods",
    "campus_periods",
    "day_types",
    "electric_bills",
    "heating_degree_days_f",
    "interpolate_temperature",
    "interval_drivers",
    "lognormal_multiplier",
    "mean_power",
    "register_reads",
    "simulate_campus",
    "simulate_gas_daily",
    "simulate_load",
    "simulate_weather",
    "unit_ar1",
    "write_sample",
]
