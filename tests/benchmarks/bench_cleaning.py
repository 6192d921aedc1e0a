"""Speed of the cleaning detectors: five years of 15-minute data for twenty meters.

Target: ``find_all`` over all twenty meters in at most 10 s on two cores, with and without
the weather. Run with ``.venv/bin/python tests/benchmarks/bench_cleaning.py``; it prints the
figures and exits with status 1 when a target is missed.

The meters are invented (the Brackenfold University estate, in the America/Chicago zone): a
weekday-and-season load shape with noise, and in each meter a handful of gaps, a catch-up, a
stuck run, spikes and a zero run so the detectors have work to do. The same meters are then
given a response to the estate's invented hourly weather (cooling above 16 °C, heating below
8 °C) and checked twice: without the temperatures, as every meter was checked before the
detectors knew the weather, and with them (judged against the weather,
:mod:`engine.cleaning.weather_response`).
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd
from scipy.signal import lfilter

from engine.cleaning import apply_steps, find_all, recommended_steps
from engine.meters import MeterSeries

ZONE = "America/Chicago"
METERS = 20
YEARS = 5
TARGET_SECONDS = 10.0


def estate_meter(number: int) -> MeterSeries:
    generator = np.random.default_rng(1000 + number)
    start = pd.Timestamp("2019-01-07", tz=ZONE).tz_convert("UTC")
    index = pd.date_range(start, periods=YEARS * 52 * 7 * 96, freq="15min")
    local = index.tz_convert(ZONE)
    hour = local.hour.to_numpy()
    weekday = local.day_of_week.to_numpy() < 5
    size = 20.0 + 10.0 * generator.random()
    load = size * (1 + 1.5 * ((hour >= 7) & (hour < 20)) * np.where(weekday, 1.0, 0.3))
    season = 1 + 0.2 * np.cos(2 * np.pi * local.day_of_year.to_numpy() / 365.25)
    values = load * season * (1 + 0.05 * generator.standard_normal(index.size))
    for first in generator.integers(0, index.size - 2000, 30):
        values[first : first + generator.integers(1, 400)] = np.nan
    catch_up = int(generator.integers(5000, index.size - 5000))
    values[catch_up + 16] = np.nansum(values[catch_up : catch_up + 17])
    values[catch_up : catch_up + 16] = np.nan
    stuck = int(generator.integers(5000, index.size - 5000))
    values[stuck : stuck + 40] = values[stuck]
    values[generator.integers(0, index.size, 5)] *= 12
    zero = int(generator.integers(5000, index.size - 5000))
    values[zero : zero + 20] = 0.0
    readings = pd.Series(values, index=index).dropna()
    return MeterSeries(
        f"Brackenfold meter {number:02d}", "electricity", readings, pd.Timedelta("15min"), ZONE
    )


def estate_weather() -> pd.Series:
    """Hourly °C over the five years: seasons, a daily cycle and an AR(1) anomaly."""
    generator = np.random.default_rng(999)
    start = pd.Timestamp("2019-01-06", tz=ZONE).tz_convert("UTC")
    index = pd.date_range(start, periods=(YEARS * 52 * 7 + 2) * 24, freq="h")
    local = index.tz_convert(ZONE)
    day, hour = local.day_of_year.to_numpy(), local.hour.to_numpy()
    phi = 0.97
    anomaly = lfilter([np.sqrt(1 - phi**2)], [1, -phi], generator.standard_normal(index.size))
    temps = (
        11
        - 13 * np.cos(2 * np.pi * (day - 20) / 365.25)
        + 4.5 * np.cos(2 * np.pi * (hour - 15) / 24)
        + 3.5 * anomaly
    )
    return pd.Series(temps, index=index)


def weather_driven(meter: MeterSeries, weather: pd.Series, number: int) -> MeterSeries:
    """The meter plus a cooling and a heating response to the temperature of each interval."""
    stamps = meter.values.index.as_unit("ns").asi8
    temps = np.interp(stamps, weather.index.as_unit("ns").asi8, weather.to_numpy())
    cooling = 0.4 + 0.02 * number  # kWh per interval per °C above 16 °C
    response = cooling * np.maximum(temps - 16, 0) + 0.15 * np.maximum(8 - temps, 0)
    return MeterSeries(
        meter.name, meter.utility, meter.values + response, meter.interval, meter.timezone
    )


def timed(meters: list[MeterSeries], temperatures: pd.Series | None) -> tuple[float, list]:
    started = time.perf_counter()
    findings = [find_all(meter, temperatures=temperatures) for meter in meters]
    return time.perf_counter() - started, findings


def main() -> int:
    meters = [estate_meter(number) for number in range(METERS)]
    intervals = sum(len(meter.values) for meter in meters)
    detect_seconds, findings = timed(meters, None)
    started = time.perf_counter()
    for meter, found in zip(meters, findings, strict=True):
        apply_steps(meter.values, recommended_steps(found), interval=meter.interval)
    replay_seconds = time.perf_counter() - started
    count = sum(len(found) for found in findings)
    print(f"meters: {METERS}, years each: {YEARS}, readings: {intervals:,}")
    print(f"find_all: {detect_seconds:.2f} s in total, {detect_seconds / METERS:.3f} s per meter")
    print(f"findings: {count:,}")
    print(f"apply recommended steps: {replay_seconds:.2f} s in total")

    weather = estate_weather()
    driven = [weather_driven(meter, weather, n) for n, meter in enumerate(meters)]
    print("the same meters with a response to the weather:")
    for label, temperatures in (("without temperatures", None), ("with temperatures", weather)):
        seconds, found = timed(driven, temperatures)
        count = sum(len(f) for f in found)
        spikes = sum(f.kind in ("spike", "dip") for each in found for f in each)
        print(
            f"  find_all {label}: {seconds:.2f} s in total, {seconds / METERS:.3f} s per "
            f"meter; findings: {count:,} ({spikes:,} spikes and dips)"
        )
        detect_seconds = max(detect_seconds, seconds)
    met = detect_seconds <= TARGET_SECONDS
    print(f"target: find_all <= {TARGET_SECONDS:.0f} s: {'met' if met else 'MISSED'}")
    return 0 if met else 1


if __name__ == "__main__":
    sys.exit(main())
