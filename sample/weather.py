"""Synthetic hourly dry-bulb temperature: annual and daily cycles plus AR(1) weather swings."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from sample.ar1 import unit_ar1

#: Mean length of a calendar year in days (Gregorian), so the annual cycle does not drift.
YEAR_DAYS = 365.2425
_JAN_FIRST = pd.Timestamp("2000-01-01", tz="UTC")


@dataclass(frozen=True)
class Climate:
    """An invented climate, in degrees Celsius.

    The temperature at a UTC instant is ``mean_c - annual_amplitude_c * cos(annual phase)``
    (coldest on ``coldest_day``, a day of the year counted from 1) plus
    ``diurnal_amplitude_c * cos(2 pi (h - warmest_hour) / 24)`` on local standard time ``h``,
    plus an AR(1) anomaly with lag-one-hour correlation ``anomaly_phi`` whose standard deviation
    moves between ``anomaly_sd_winter_c`` (coldest day) and ``anomaly_sd_summer_c``.
    """

    mean_c: float
    annual_amplitude_c: float
    coldest_day: float
    diurnal_amplitude_c: float
    warmest_hour: float
    standard_offset_hours: float
    anomaly_sd_winter_c: float
    anomaly_sd_summer_c: float
    anomaly_phi: float

    def annual_phase(self, instants: pd.DatetimeIndex) -> np.ndarray:
        """Radians since the coldest day; the cosine of it is 1 in midwinter."""
        days = (instants - _JAN_FIRST) / pd.Timedelta(days=1)
        return 2.0 * np.pi * (days - (self.coldest_day - 1.0)) / YEAR_DAYS

    def normal_c(self, instants: pd.DatetimeIndex) -> np.ndarray:
        """The expected temperature at each UTC instant (annual plus daily cycle, no anomaly)."""
        seasonal = self.mean_c - self.annual_amplitude_c * np.cos(self.annual_phase(instants))
        standard_hour = (instants - _JAN_FIRST) / pd.Timedelta(hours=1) + self.standard_offset_hours
        daily = self.diurnal_amplitude_c * np.cos(
            2.0 * np.pi * (standard_hour - self.warmest_hour) / 24.0
        )
        return seasonal + daily

    def anomaly_sd_c(self, instants: pd.DatetimeIndex) -> np.ndarray:
        """Standard deviation of the weather anomaly, largest in midwinter."""
        middle = 0.5 * (self.anomaly_sd_winter_c + self.anomaly_sd_summer_c)
        half_range = 0.5 * (self.anomaly_sd_winter_c - self.anomaly_sd_summer_c)
        return middle + half_range * np.cos(self.annual_phase(instants))


def simulate_weather(
    instants: pd.DatetimeIndex, climate: Climate, rng: np.random.Generator
) -> pd.Series:
    """Dry-bulb temperature in °C at evenly spaced hourly UTC instants.

    Parameters
    ----------
    instants : pandas.DatetimeIndex
        Tz-aware, one hour apart.
    climate : Climate
        The normals and the anomaly process.
    rng : numpy.random.Generator
        Source of the anomaly.

    Returns
    -------
    pandas.Series
        Float64 °C indexed by ``instants`` converted to UTC, named ``"temperature_c"``.
    """
    instants = instants.tz_convert("UTC")
    steps = np.diff(instants.asi8)
    if len(instants) > 1 and not np.all(steps == steps[0]):
        raise ValueError("weather instants must be evenly spaced")
    anomaly = climate.anomaly_sd_c(instants) * unit_ar1(len(instants), climate.anomaly_phi, rng)
    return pd.Series(climate.normal_c(instants) + anomaly, index=instants, name="temperature_c")


def interpolate_temperature(weather: pd.Series, instants: pd.DatetimeIndex) -> np.ndarray:
    """Linear interpolation of an hourly temperature series at arbitrary tz-aware instants.

    Instants outside the weather range take the nearest end value.
    """
    known = weather.index.as_unit("s").asi8
    wanted = instants.tz_convert("UTC").as_unit("s").asi8
    return np.interp(wanted, known, weather.to_numpy(dtype=float))
