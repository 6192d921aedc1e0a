"""The central boiler house gas meter: degree-day driven daily use and its cumulative register."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from sample.ar1 import lognormal_multiplier


def fahrenheit(celsius: np.ndarray | pd.Series) -> np.ndarray | pd.Series:
    """°C to °F (NIST SP 811, section B.9: t/°F = 1.8 t/°C + 32)."""
    return celsius * 1.8 + 32.0


def heating_degree_days_f(weather: pd.Series, timezone: str, balance_f: float) -> pd.Series:
    """Daily heating degree-days in °F-days: ``max(0, balance - mean of the day's hourly temps)``.

    Parameters
    ----------
    weather : pandas.Series
        Hourly °C on a UTC index.
    timezone : str
        Days are local calendar days in this zone.
    balance_f : float
        Balance-point temperature in °F.

    Returns
    -------
    pandas.Series
        Indexed by naive local midnight timestamps.
    """
    local_days = weather.index.tz_convert(timezone).tz_localize(None).normalize()
    daily_mean_f = fahrenheit(weather).groupby(local_days).mean()
    return (balance_f - daily_mean_f).clip(lower=0.0).rename("hdd_f")


@dataclass(frozen=True)
class GasModel:
    """Daily gas use in ccf: ``(hot_water_ccf + slope * HDD) * noise`` with AR(1) daily noise."""

    hot_water_ccf_per_day: float
    ccf_per_degree_day_f: float
    balance_f: float
    noise_cv: float
    noise_phi_daily: float

    def to_dict(self) -> dict:
        return {
            "unit": "ccf",
            "hot_water_ccf_per_day": self.hot_water_ccf_per_day,
            "ccf_per_heating_degree_day_f": self.ccf_per_degree_day_f,
            "balance_point_f": self.balance_f,
            "noise_cv": self.noise_cv,
            "noise_phi_daily": self.noise_phi_daily,
        }


def simulate_gas_daily(
    model: GasModel, degree_days_f: pd.Series, rng: np.random.Generator
) -> pd.Series:
    """Daily use in ccf for each day of ``degree_days_f``."""
    noise = lognormal_multiplier(len(degree_days_f), model.noise_cv, model.noise_phi_daily, rng)
    mean = model.hot_water_ccf_per_day + model.ccf_per_degree_day_f * degree_days_f.to_numpy()
    return pd.Series(mean * noise, index=degree_days_f.index, name="gas_ccf")


@dataclass(frozen=True)
class RegisterReads:
    """End-of-day register reads and the days on which the register wrapped to zero."""

    reads: pd.Series
    rollover_days: tuple[date, ...]


def register_reads(
    daily_use: pd.Series,
    first_reading: float,
    replacement_day: date,
    new_meter_reading: float,
    digits: int = 5,
) -> RegisterReads:
    """Whole-unit end-of-day reads of a register that wraps and is replaced once.

    The old register shows ``floor(first_reading + use so far) mod 10**digits``. At the start
    of ``replacement_day`` a new meter showing ``new_meter_reading`` takes over, so that day's
    read is ``floor(new_meter_reading + that day's use)``.

    Raises
    ------
    ValueError
        If the new meter would also wrap (the scenario promises one rollover).
    """
    modulus = 10**digits
    days = daily_use.index
    on_old = np.asarray(days < pd.Timestamp(replacement_day))
    use = daily_use.to_numpy()
    old = np.floor(first_reading + np.cumsum(use[on_old])) % modulus
    new = np.floor(new_meter_reading + np.cumsum(use[~on_old]))
    if new.size and new.max() >= modulus:
        raise ValueError("the replacement meter would wrap; lower its use or move the day")
    previous = np.concatenate([[np.floor(first_reading)], old[:-1]])
    rollover = days[on_old][old < previous]
    reads = pd.Series(np.concatenate([old, new]).astype(np.int64), index=days, name="read")
    return RegisterReads(reads=reads, rollover_days=tuple(day.date() for day in rollover))
