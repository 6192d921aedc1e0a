"""The load model: base load, occupancy by day type, weather response, growth and noise.

One model serves electricity (kW, kWh per interval) and chilled water (tons, ton-hours per
interval); only the unit differs. Average power over an interval is

    (base + occupied * day_factor[day type] * shape(local hour)
     + heating_slope * max(0, heating_balance_c - T)
     + cooling_slope * max(0, T - cooling_balance_c)) * (1 + growth_per_year * years)

and the interval's energy is that times the interval length times a lognormal AR(1)
multiplier with mean 1 (see :func:`sample.ar1.lognormal_multiplier`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.special import expit

from sample.ar1 import lognormal_multiplier
from sample.campus_calendar import DAY_TYPES
from sample.weather import interpolate_temperature


@dataclass(frozen=True)
class LoadModel:
    """Ground-truth parameters of one metered load.

    Attributes
    ----------
    name : str
        The building or meter name.
    unit : str
        Energy unit per interval (``"kWh"`` or ``"ton-hours"``); power is that per hour.
    base : float
        Always-on power.
    occupied : float
        Power added at full occupancy (shape 1, day factor 1).
    opens, closes : float
        Local clock hours where the occupied plateau rises and falls (logistic midpoints).
    ramp_hours : float
        Logistic scale of the rise and fall, in hours.
    plateau : float
        Height of the plateau on the shape.
    peaks : tuple of (hour, width, height)
        Gaussian bumps added to the shape (centre hour, standard deviation in hours, height),
        wrapping around midnight.
    day_factors : dict
        Multiplier of the occupied power for each day type in
        :data:`sample.campus_calendar.DAY_TYPES`.
    heating_balance_c, heating_slope : float
        Power added per °C below the heating balance point.
    cooling_balance_c, cooling_slope : float
        Power added per °C above the cooling balance point.
    growth_per_year : float
        Linear growth of the whole load, as a fraction per year since the growth origin.
    noise_cv : float
        Coefficient of variation of the multiplicative noise on each interval.
    noise_phi_hourly : float
        Correlation of the log noise one hour apart; per interval it is
        ``noise_phi_hourly ** interval_hours``.
    """

    name: str
    unit: str
    base: float
    occupied: float
    opens: float
    closes: float
    ramp_hours: float
    day_factors: dict[str, float]
    heating_balance_c: float
    heating_slope: float
    cooling_balance_c: float
    cooling_slope: float
    growth_per_year: float
    noise_cv: float
    noise_phi_hourly: float
    plateau: float = 1.0
    peaks: tuple[tuple[float, float, float], ...] = ()

    def __post_init__(self) -> None:
        if set(self.day_factors) != set(DAY_TYPES):
            raise ValueError(f"{self.name}: day_factors needs exactly the keys {DAY_TYPES}")

    @property
    def column(self) -> str:
        """The header a meter export gives this load, e.g. ``"Library (kWh)"``."""
        return f"{self.name} ({self.unit})"

    def shape(self, local_hour: np.ndarray) -> np.ndarray:
        """Occupancy shape over the local clock hour (0 to 24)."""
        rise = expit((local_hour - self.opens) / self.ramp_hours)
        fall = expit((self.closes - local_hour) / self.ramp_hours)
        shape = self.plateau * rise * fall
        for centre, width, height in self.peaks:
            offset = (local_hour - centre + 12.0) % 24.0 - 12.0
            shape = shape + height * np.exp(-0.5 * (offset / width) ** 2)
        return shape

    def to_dict(self) -> dict:
        """Plain numbers for ``truth.json``."""
        return {
            "unit": self.unit,
            "base_power": self.base,
            "occupied_power": self.occupied,
            "opens_hour": self.opens,
            "closes_hour": self.closes,
            "ramp_hours": self.ramp_hours,
            "plateau": self.plateau,
            "peaks_hour_width_height": [list(peak) for peak in self.peaks],
            "day_factors": dict(self.day_factors),
            "heating_balance_c": self.heating_balance_c,
            "heating_slope_per_c": self.heating_slope,
            "cooling_balance_c": self.cooling_balance_c,
            "cooling_slope_per_c": self.cooling_slope,
            "growth_per_year": self.growth_per_year,
            "noise_cv": self.noise_cv,
            "noise_phi_hourly": self.noise_phi_hourly,
        }


@dataclass(frozen=True)
class IntervalDrivers:
    """What the load model needs to know about each interval, computed once per grid."""

    starts: pd.DatetimeIndex
    hours: float
    local_hour: np.ndarray
    day_type: np.ndarray
    temperature_c: np.ndarray
    years: np.ndarray


def interval_drivers(
    starts: pd.DatetimeIndex,
    interval: pd.Timedelta,
    weather: pd.Series,
    day_type_by_day: pd.Series,
    timezone: str,
    growth_origin: pd.Timestamp,
) -> IntervalDrivers:
    """Drivers for intervals starting at ``starts`` (tz-aware).

    The local hour and the temperature are taken at each interval's midpoint; the day type
    is that of the local day the interval starts in.

    Parameters
    ----------
    starts : pandas.DatetimeIndex
        Interval starts, tz-aware.
    interval : pandas.Timedelta
        Interval length.
    weather : pandas.Series
        Hourly temperature in °C on a UTC index (see :func:`sample.weather.simulate_weather`).
    day_type_by_day : pandas.Series
        Day type per local day, indexed by naive midnight timestamps.
    timezone : str
        The site's IANA zone.
    growth_origin : pandas.Timestamp
        Where the growth trend is zero.
    """
    starts = starts.tz_convert("UTC")
    midpoints = starts + interval / 2
    local_mid = midpoints.tz_convert(timezone)
    local_hour = (local_mid.hour + local_mid.minute / 60.0 + local_mid.second / 3600.0).to_numpy()
    local_days = starts.tz_convert(timezone).tz_localize(None).normalize()
    day_type = day_type_by_day.reindex(local_days).to_numpy(dtype=object)
    if pd.isna(day_type).any():
        raise ValueError("some intervals fall on days with no day type")
    return IntervalDrivers(
        starts=starts,
        hours=interval / pd.Timedelta(hours=1),
        local_hour=local_hour,
        day_type=day_type,
        temperature_c=interpolate_temperature(weather, midpoints),
        years=((starts - growth_origin) / pd.Timedelta(days=365.25)).to_numpy(),
    )


def mean_power(model: LoadModel, drivers: IntervalDrivers) -> np.ndarray:
    """Noise-free average power over each interval (kW or tons)."""
    day_factor = np.select(
        [drivers.day_type == kind for kind in DAY_TYPES],
        [model.day_factors[kind] for kind in DAY_TYPES],
    )
    temperature = drivers.temperature_c
    power = (
        model.base
        + model.occupied * day_factor * model.shape(drivers.local_hour)
        + model.heating_slope * np.maximum(model.heating_balance_c - temperature, 0.0)
        + model.cooling_slope * np.maximum(temperature - model.cooling_balance_c, 0.0)
    )
    return power * (1.0 + model.growth_per_year * drivers.years)


def simulate_load(
    model: LoadModel, drivers: IntervalDrivers, rng: np.random.Generator
) -> pd.Series:
    """Energy per interval (kWh or ton-hours) with noise, on the drivers' UTC interval starts.

    Returns
    -------
    pandas.Series
        Float64, indexed by the UTC interval starts, named after the model.
    """
    noise = lognormal_multiplier(
        len(drivers.starts), model.noise_cv, model.noise_phi_hourly**drivers.hours, rng
    )
    energy = mean_power(model, drivers) * drivers.hours * noise
    return pd.Series(energy, index=drivers.starts, name=model.name)
