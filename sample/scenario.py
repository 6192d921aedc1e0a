"""The invented scenario: Orrinvale College in the town of Stellwick, and everything about it.

Every number here is ground truth for the sample files; ``sample/README.md`` explains them
and ``truth.json`` repeats them in machine-readable form. Nothing here describes a real place.
"""

from __future__ import annotations

from datetime import date, datetime

from sample.bills import Rates
from sample.faults import FaultSpec
from sample.gas import GasModel
from sample.loads import LoadModel
from sample.weather import Climate

CAMPUS = "Orrinvale College"
TOWN = "Stellwick"
METER_SYSTEM = "Orrinvale Campus Meter Gateway"
WEATHER_STATION = "Stellwick Airfield weather station"
SITE_TIMEZONE = "America/Chicago"

#: Local calendar days the meter data covers (inclusive).
FIRST_DAY = date(2023, 7, 1)
LAST_DAY = date(2026, 10, 31)
#: The calendar file runs further, so budgets for the coming fiscal year have it.
CALENDAR_LAST_DAY = date(2027, 8, 31)

#: The interval export was produced at this local time; workbook properties and zip entries
#: carry it so that reruns are byte-identical.
EXPORTED_AT = datetime(2026, 11, 2, 6, 0)

#: Every random draw comes from ``numpy.random.default_rng([STREAM_NUMBER, part])``.
STREAM_NUMBER = 20_231_701
STREAM_PARTS = {
    "weather": 1,
    "billing_periods": 2,
    "gas": 3,
    "electricity": 10,  # plus the building's position
    "chilled_water": 20,  # plus the meter's position
}

CLIMATE = Climate(
    mean_c=10.5,
    annual_amplitude_c=13.5,
    coldest_day=22,
    diurnal_amplitude_c=5.0,
    warmest_hour=15.0,
    standard_offset_hours=-6.0,
    anomaly_sd_winter_c=5.5,
    anomaly_sd_summer_c=3.0,
    anomaly_phi=0.985,
)


def _factors(
    weekday: float, weekend: float, holiday: float, break_: float, closure: float, summer: float
) -> dict[str, float]:
    return {
        "weekday": weekday,
        "weekend": weekend,
        "holiday": holiday,
        "break": break_,
        "closure": closure,
        "summer": summer,
    }


LIBRARY = LoadModel(
    name="Library",
    unit="kWh",
    base=55.0,
    occupied=120.0,
    opens=7.5,
    closes=23.5,
    ramp_hours=0.5,
    day_factors=_factors(1.0, 0.55, 0.1, 0.3, 0.03, 0.45),
    heating_balance_c=10.0,
    heating_slope=0.6,
    cooling_balance_c=16.0,
    cooling_slope=1.4,
    growth_per_year=0.01,
    noise_cv=0.05,
    noise_phi_hourly=0.75,
)
SCIENCE_LABS = LoadModel(
    name="Science Labs",
    unit="kWh",
    base=310.0,
    occupied=150.0,
    opens=8.0,
    closes=18.5,
    ramp_hours=0.75,
    day_factors=_factors(1.0, 0.3, 0.15, 0.45, 0.1, 0.6),
    heating_balance_c=8.0,
    heating_slope=2.2,
    cooling_balance_c=14.0,
    cooling_slope=3.5,
    growth_per_year=0.025,
    noise_cv=0.03,
    noise_phi_hourly=0.85,
)
RESIDENCE_HALL = LoadModel(
    name="Residence Hall",
    unit="kWh",
    base=40.0,
    occupied=140.0,
    opens=9.0,
    closes=17.0,
    ramp_hours=0.75,
    plateau=0.25,
    peaks=((7.5, 1.0, 0.45), (21.5, 2.0, 1.0)),
    day_factors=_factors(1.0, 1.05, 0.9, 0.15, 0.04, 0.55),
    heating_balance_c=5.0,
    heating_slope=1.0,
    cooling_balance_c=20.0,
    cooling_slope=11.0,
    growth_per_year=0.01,
    noise_cv=0.08,
    noise_phi_hourly=0.7,
)
ATHLETICS = LoadModel(
    name="Athletics Center",
    unit="kWh",
    base=30.0,
    occupied=95.0,
    opens=6.0,
    closes=22.0,
    ramp_hours=0.5,
    day_factors=_factors(1.0, 0.8, 0.35, 0.4, 0.02, 0.5),
    heating_balance_c=0.0,
    heating_slope=0.0,
    cooling_balance_c=17.0,
    cooling_slope=1.2,
    growth_per_year=0.005,
    noise_cv=0.07,
    noise_phi_hourly=0.7,
)
ADMINISTRATION = LoadModel(
    name="Administration",
    unit="kWh",
    base=22.0,
    occupied=80.0,
    opens=7.5,
    closes=17.5,
    ramp_hours=0.5,
    day_factors=_factors(1.0, 0.08, 0.05, 0.7, 0.04, 0.85),
    heating_balance_c=10.0,
    heating_slope=1.8,
    cooling_balance_c=17.0,
    cooling_slope=5.5,
    growth_per_year=0.015,
    noise_cv=0.06,
    noise_phi_hourly=0.7,
)
BUILDINGS = (LIBRARY, SCIENCE_LABS, RESIDENCE_HALL, ATHLETICS, ADMINISTRATION)

#: Site lighting, the gatehouse and car-park chargers: on the utility account, not sub-metered.
UNMETERED_KW = 18.0

CHILLED_WATER_EAST = LoadModel(
    name="PLANT-CHW-E",
    unit="ton-hours",
    base=38.0,
    occupied=25.0,
    opens=8.0,
    closes=19.0,
    ramp_hours=0.75,
    day_factors=_factors(1.0, 0.3, 0.15, 0.45, 0.1, 0.6),
    heating_balance_c=0.0,
    heating_slope=0.0,
    cooling_balance_c=12.0,
    cooling_slope=11.0,
    growth_per_year=0.01,
    noise_cv=0.06,
    noise_phi_hourly=0.8,
)
CHILLED_WATER_WEST = LoadModel(
    name="PLANT-CHW-W",
    unit="ton-hours",
    base=8.0,
    occupied=20.0,
    opens=7.0,
    closes=22.0,
    ramp_hours=0.75,
    day_factors=_factors(1.0, 0.7, 0.3, 0.4, 0.03, 0.5),
    heating_balance_c=0.0,
    heating_slope=0.0,
    cooling_balance_c=15.0,
    cooling_slope=8.0,
    growth_per_year=0.0,
    noise_cv=0.08,
    noise_phi_hourly=0.75,
)
CHILLED_WATER_METERS = (CHILLED_WATER_EAST, CHILLED_WATER_WEST)

GAS = GasModel(
    hot_water_ccf_per_day=20.0,
    ccf_per_degree_day_f=10.5,
    balance_f=60.0,
    noise_cv=0.05,
    noise_phi_daily=0.5,
)
GAS_FIRST_READING = 58_317.4
GAS_REPLACEMENT_DAY = date(2025, 5, 14)
GAS_NEW_METER_READING = 12.0
GAS_REGISTER_DIGITS = 5

TARIFF = (
    Rates(date(2000, 1, 1), customer_charge=385.0, energy_per_kwh=0.0712, demand_per_kw=13.80),
    Rates(date(2025, 7, 1), customer_charge=410.0, energy_per_kwh=0.0749, demand_per_kw=14.65),
)

ELECTRICITY_FAULTS = (
    FaultSpec("comms_gap_with_catch_up", "2024-02-13 09:00", "2024-02-13 15:00", (LIBRARY.column,)),
    FaultSpec("stuck_value", "2024-10-08 14:15", "2024-10-10 14:15", (RESIDENCE_HALL.column,)),
    FaultSpec("zero_run", "2025-03-20 03:00", "2025-03-20 08:00", (ATHLETICS.column,)),
    FaultSpec("spike", "2024-05-16 11:30", meters=(SCIENCE_LABS.column,), factor=9.0),
    FaultSpec("spike", "2025-12-03 16:45", meters=(LIBRARY.column,), factor=7.5),
    FaultSpec("multiplier_change", "2025-09-15 10:00", None, (ADMINISTRATION.column,), 0.5),
    FaultSpec("missing_rows", "2026-01-19 00:00", "2026-01-23 00:00"),
)
CHILLED_WATER_FAULTS = (FaultSpec("duplicate_rows", "2025-07-22 14:00", "2025-07-22 15:00"),)
WEATHER_FAULTS = (
    FaultSpec("missing_rows", "2023-09-14 03:00", "2023-09-14 04:00"),
    FaultSpec("missing_rows", "2024-01-27 22:00", "2024-01-27 23:00"),
    FaultSpec("missing_rows", "2024-04-10 06:00", "2024-04-10 18:00"),
    FaultSpec("missing_rows", "2024-08-05 11:00", "2024-08-05 12:00"),
    FaultSpec("missing_rows", "2025-06-02 17:00", "2025-06-02 18:00"),
    FaultSpec("missing_rows", "2025-11-20 08:00", "2025-11-20 09:00"),
    FaultSpec("missing_rows", "2026-07-16 02:00", "2026-07-16 03:00"),
)
