"""Speed of the cleaning detectors: five years of 15-minute data for twenty meters.

Target: ``find_all`` over all twenty meters in at most 10 s on two cores. Run with
``.venv/bin/python tests/benchmarks/bench_cleaning.py``; it prints the figures and exits with
status 1 when the target is missed.

The meters are invented (the Brackenfold University estate, in the America/Chicago zone): a
weekday-and-season load shape with noise, and in each meter a handful of gaps, a catch-up, a
stuck run, spikes and a zero run so the detectors have work to do.
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd

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


def main() -> int:
    meters = [estate_meter(number) for number in range(METERS)]
    intervals = sum(len(meter.values) for meter in meters)
    started = time.perf_counter()
    findings = [find_all(meter) for meter in meters]
    detect_seconds = time.perf_counter() - started
    started = time.perf_counter()
    for meter, found in zip(meters, findings, strict=True):
        apply_steps(meter.values, recommended_steps(found), interval=meter.interval)
    replay_seconds = time.perf_counter() - started
    count = sum(len(found) for found in findings)
    print(f"meters: {METERS}, years each: {YEARS}, readings: {intervals:,}")
    print(f"find_all: {detect_seconds:.2f} s in total, {detect_seconds / METERS:.3f} s per meter")
    print(f"findings: {count:,}")
    print(f"apply recommended steps: {replay_seconds:.2f} s in total")
    met = detect_seconds <= TARGET_SECONDS
    print(f"target: find_all <= {TARGET_SECONDS:.0f} s: {'met' if met else 'MISSED'}")
    return 0 if met else 1


if __name__ == "__main__":
    sys.exit(main())
