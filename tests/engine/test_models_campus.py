"""A synthetic campus meter with known structure, shared by the model tests (and its own checks).

Invented scenario: the main teaching building of "Larkspur Vale College", a campus in an
invented continental climate on US Central time, with US public holidays and the college's own
terms, breaks and summer. Interval energy (kWh per hour) is built from documented parts:

* base load ``BASE`` kWh/h, growing ``TREND`` kWh/h per year;
* an occupancy bump ``OCCUPIED_BUMP[day type] · occ(hour)`` with ``occ`` a smooth 07:00–19:00
  plateau (logistic edges, ``EDGE_HOURS`` wide), on the local clock; holidays have none;
* campus periods shift the whole day: ``PERIOD_SHIFT[kind]`` kWh/h;
* heating ``HEATING_SLOPE · (HEATING_BASE − T)⁺`` and cooling
  ``COOLING_SLOPE · (T − COOLING_BASE)⁺`` on the hourly temperature T (degree-hours);
* Gaussian noise with standard deviation ``NOISE_CV`` times the mean load.

Temperature: an annual cycle (mean 10 °C, ±13 °C, coldest around 20 January), a daily cycle
(±4 °C, warmest at 15:00) and day-to-day weather (AR(1), sd 3 °C, lag-one correlation 0.7).
Other test modules import :func:`synthetic_campus` from here, and the :func:`one_thread`
fixture, which runs a module's tests with single-threaded BLAS and OpenMP.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd
import pytest
from scipy.signal import lfilter
from threadpoolctl import threadpool_limits

from engine.calendar import CampusCalendar, CampusPeriod, label_intervals
from engine.models.base import ModelInputs

ZONE = "America/Chicago"
BASE = 150.0
TREND = 3.0
OCCUPIED_BUMP = {"weekday": 90.0, "saturday": 25.0, "sunday": 25.0, "holiday": 0.0}
EDGE_HOURS = 0.6
PERIOD_SHIFT = {"term": 0.0, "break": -10.0, "summer": -20.0, "": 0.0}
HEATING_BASE, HEATING_SLOPE = 14.0, 3.0
COOLING_BASE, COOLING_SLOPE = 21.0, 5.0
NOISE_CV = 0.05


@pytest.fixture(scope="module", autouse=True)
def one_thread():
    """Run the module's tests with one BLAS/OpenMP thread.

    The model fits are small dense solves and tree fits that gain little from threads; on a
    shared two-core machine the threads of BLAS and OpenMP wait on one another and the same
    fits took ten to forty times longer (measured while other test runs were busy).
    """
    with threadpool_limits(limits=1):
        yield


def campus_calendar(first_year: int, last_year: int) -> CampusCalendar:
    """Larkspur Vale's terms, winter and spring breaks and summer for the given years."""
    periods = []
    for year in range(first_year, last_year + 1):
        periods += [
            CampusPeriod(f"winter break {year}", date(year, 1, 1), date(year, 1, 12), "break"),
            CampusPeriod(f"spring term {year}", date(year, 1, 13), date(year, 5, 9), "term"),
            CampusPeriod(f"spring break {year}", date(year, 3, 10), date(year, 3, 16), "break"),
            CampusPeriod(f"summer {year}", date(year, 5, 10), date(year, 8, 24), "summer"),
            CampusPeriod(f"autumn term {year}", date(year, 8, 25), date(year, 12, 19), "term"),
            CampusPeriod(f"winter break {year}b", date(year, 12, 20), date(year, 12, 31), "break"),
        ]
    return CampusCalendar(country="US", periods=tuple(periods))


def occupancy_plateau(hour: np.ndarray) -> np.ndarray:
    """Smooth 07:00–19:00 plateau from 0 to 1."""
    rise = 1 / (1 + np.exp(-(hour - 7.0) / EDGE_HOURS * 4))
    fall = 1 / (1 + np.exp((hour - 19.0) / EDGE_HOURS * 4))
    return rise * fall


def campus_temperature(index: pd.DatetimeIndex, seed: int) -> np.ndarray:
    """Hourly outdoor temperature (°C) of the invented climate."""
    local = index.tz_convert(ZONE).tz_localize(None)
    day_of_year = np.asarray(local.day_of_year, dtype=float)
    hour = np.asarray(local.hour + local.minute / 60, dtype=float)
    days = np.asarray((local.normalize() - local.normalize()[0]).days)
    rng = np.random.default_rng(seed)
    shocks = rng.normal(0.0, 3.0 * np.sqrt(1 - 0.7**2), days.max() + 2)
    weather = lfilter([1.0], [1.0, -0.7], shocks)
    # Day-to-day weather varies smoothly through each day (linear between day centres).
    position = days + hour / 24.0 - 0.5
    anomaly = np.interp(position, np.arange(len(weather)), weather)
    return (
        10.0
        - 13.0 * np.cos(2 * np.pi * (day_of_year - 20.0) / 365.25)
        + 4.0 * np.cos(2 * np.pi * (hour - 15.0) / 24.0)
        + anomaly
    )


@dataclass(frozen=True)
class SyntheticCampus:
    """Inputs with energy, temperature and labels; the noise and noise-free load beside them."""

    inputs: ModelInputs
    noise: np.ndarray
    clean: np.ndarray


def synthetic_campus(
    start: str = "2021-01-01",
    end: str = "2024-03-01",
    *,
    step: str = "h",
    seed: int = 7,
    period_shift: dict[str, float] = PERIOD_SHIFT,
) -> SyntheticCampus:
    """The campus meter from local ``start`` to ``end`` (exclusive), interval ``step``.

    ``period_shift`` maps period kinds to their shift in kWh/h; pass ``{}`` for the college's
    administration building, which works through breaks and summer alike.
    """
    index = pd.date_range(
        pd.Timestamp(start, tz=ZONE), pd.Timestamp(end, tz=ZONE), freq=step, inclusive="left"
    ).tz_convert("UTC")
    calendar = campus_calendar(index[0].year - 1, index[-1].year + 1)
    labels = label_intervals(index, ZONE, calendar)
    local = labels["local"]
    hour = np.asarray(local.dt.hour + local.dt.minute / 60, dtype=float)
    temperature = campus_temperature(index, seed)
    years = np.asarray((index - index[0]) / pd.Timedelta(days=365.25), dtype=float)
    bump = labels["day_type"].astype(str).map(OCCUPIED_BUMP).to_numpy(dtype=float)
    kinds = labels["period_kind"].astype(str)
    shift = kinds.map(lambda kind: period_shift.get(kind, 0.0)).to_numpy(dtype=float)
    per_hour = (
        BASE
        + TREND * years
        + bump * occupancy_plateau(hour)
        + shift
        + HEATING_SLOPE * np.maximum(HEATING_BASE - temperature, 0.0)
        + COOLING_SLOPE * np.maximum(temperature - COOLING_BASE, 0.0)
    )
    hours = pd.to_timedelta(pd.tseries.frequencies.to_offset(step)) / pd.Timedelta(hours=1)
    clean = per_hour * hours
    rng = np.random.default_rng(seed + 1)
    noise = rng.normal(0.0, NOISE_CV * clean.mean(), len(index))
    inputs = ModelInputs(
        index=index,
        timezone=ZONE,
        energy=pd.Series(clean + noise, index=index),
        temperature=pd.Series(temperature, index=index),
        labels=labels,
    )
    return SyntheticCampus(inputs=inputs, noise=noise, clean=clean)


def test_the_noise_has_the_documented_size():
    campus = synthetic_campus("2022-01-01", "2023-01-01")
    energy = campus.inputs.energy.to_numpy()
    realised = np.std(energy - campus.clean) / energy.mean()
    assert abs(realised - NOISE_CV) < 0.002


def test_the_climate_needs_both_heating_and_cooling():
    temps = synthetic_campus("2022-01-01", "2023-01-01").inputs.temperature
    # Hours below the heating and above the cooling balance point both abound.
    assert (temps < HEATING_BASE - 5).mean() > 0.2
    assert (temps > COOLING_BASE + 3).mean() > 0.05


def test_daylight_saving_days_have_23_and_25_hours():
    campus = synthetic_campus("2022-03-01", "2022-12-01")
    local_days = campus.inputs.index.tz_convert(ZONE).tz_localize(None).normalize()
    per_day = pd.Series(1, index=local_days).groupby(level=0).size()
    # US rules (Energy Policy Act of 2005): second Sunday of March, first Sunday of November.
    assert per_day[pd.Timestamp("2022-03-13")] == 23
    assert per_day[pd.Timestamp("2022-11-06")] == 25
