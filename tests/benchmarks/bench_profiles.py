"""Timing of the profile screen's engine work on large invented meters.

Run with ``.venv/bin/python tests/benchmarks/bench_profiles.py``; prints seconds per step.
Targets: every profile of five years of quarter-hour data within 3 s; MSTL of three years of
hourly data within 15 s. The meter is the invented Thornbury Annex of the Larchfield campus.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from datetime import date

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, CampusPeriod, OccupancyRule, label_intervals
from engine.decomposition import decompose_daily, decompose_hourly
from engine.meters import MeterSeries
from engine.profiles import (
    energy_vs_temperature,
    heat_map,
    key_figures,
    load_duration,
    monthly_totals_by_year,
    profile_meter,
    typical_day,
)

ZONE = "America/Chicago"


def invented_meter(years: int, interval: str) -> tuple[MeterSeries, pd.Series]:
    """A campus-like meter (daily, weekly and annual cycles, noise) and hourly temperatures."""
    local = pd.date_range("2020-01-01", periods=1, tz=ZONE)
    start = local[0].tz_convert("UTC")
    steps = int(years * 365.25 * pd.Timedelta(days=1) / pd.Timedelta(interval))
    index = pd.date_range(start, periods=steps, freq=interval)
    clock = index.tz_convert(ZONE)
    hour = np.asarray(clock.hour + clock.minute / 60.0)
    weekday = np.asarray(clock.day_of_week) < 5
    day_of_year = np.asarray(clock.day_of_year)
    temperature = 11.0 - 13.0 * np.cos(2 * np.pi * (day_of_year - 20) / 365.25)
    rng = np.random.default_rng(0)
    kw = (
        300.0
        + 250.0 * weekday * ((hour >= 7) & (hour < 19))
        + 9.0 * np.maximum(temperature - 18.0, 0.0)
        + 6.0 * np.maximum(12.0 - temperature, 0.0)
        + rng.normal(0.0, 20.0, steps)
    )
    hours = pd.Timedelta(interval) / pd.Timedelta(hours=1)
    values = pd.Series(kw * hours, index=index)
    temps = pd.Series(temperature, index=index).resample("h").first()
    meter = MeterSeries("Thornbury Annex", "electricity", values, pd.Timedelta(interval), ZONE)
    return meter, temps


def timed(label: str, work: Callable[[], object]) -> float:
    started = time.perf_counter()
    work()
    elapsed = time.perf_counter() - started
    print(f"  {label:<36} {elapsed:6.2f} s")
    return elapsed


def bench_all_profiles() -> None:
    meter, temps = invented_meter(5, "15min")
    print(f"Profiles, {len(meter.values):,} quarter-hour intervals (target ≤ 3 s in all):")
    timed("typical day by day type", lambda: typical_day(meter))
    timed(
        "typical day by season, 15-min slots",
        lambda: typical_day(meter, by="season", slot_minutes=15),
    )
    timed("heat map (kWh)", lambda: heat_map(meter))
    timed("monthly totals by year", lambda: monthly_totals_by_year(meter))
    timed("load-duration curve", lambda: load_duration(meter))
    timed("key figures", lambda: key_figures(meter))
    timed("energy vs temperature (best shape)", lambda: energy_vs_temperature(meter, temps))
    timed("ALL (profile_meter)", lambda: profile_meter(meter, temperatures=temps))


def bench_decomposition() -> None:
    meter, _ = invented_meter(3, "1h")
    print(f"Decomposition, {len(meter.values):,} hours (target ≤ 15 s for MSTL):")
    timed("MSTL hourly (24, 168)", lambda: decompose_hourly(meter))
    timed("MSTL daily (7, 365)", lambda: decompose_daily(meter))


def bench_labels() -> None:
    """Calendar labels of 50 years of quarter hours with a term a year (target ≤ 2 s)."""
    calendar = CampusCalendar(
        "US",
        "TX",
        tuple(
            CampusPeriod(f"Term {year}", date(year, 8, 25), date(year, 12, 12), "term")
            for year in range(2005, 2055)
        ),
    )
    index = pd.date_range("2005-01-01", periods=1_750_000, freq="15min", tz="UTC")
    print(f"Calendar labels, {len(index):,} quarter hours (target ≤ 2 s):")
    rule = OccupancyRule()
    timed("label_intervals", lambda: label_intervals(index, "America/Chicago", calendar, rule))


if __name__ == "__main__":
    bench_all_profiles()
    bench_decomposition()
    bench_labels()
