"""Monthly utility bills for the main electric account, on billing periods that drift."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

import numpy as np
import pandas as pd

#: Read dates fall on these days of the month; periods last this many days (inclusive bounds).
READ_DAYS = range(3, 10)
PERIOD_DAYS = range(28, 34)


@dataclass(frozen=True)
class Rates:
    """One version of the (invented) general-service tariff."""

    effective_from: date
    customer_charge: float
    energy_per_kwh: float
    demand_per_kw: float

    def to_dict(self) -> dict:
        return {
            "applies_to_bills_ending_on_or_after": self.effective_from.isoformat(),
            "customer_charge_usd": self.customer_charge,
            "energy_usd_per_kwh": self.energy_per_kwh,
            "demand_usd_per_kw": self.demand_per_kw,
        }


def _next_month(day: date, day_of_month: int) -> date:
    year, month = (day.year + 1, 1) if day.month == 12 else (day.year, day.month + 1)
    return date(year, month, day_of_month)


def billing_periods(first_day: date, last_day: date, rng: np.random.Generator) -> pd.DataFrame:
    """Billing periods inside ``first_day .. last_day`` whose read dates drift.

    Each period starts on a read date between the 3rd and the 9th of a month and ends the
    day before the next read date, so periods are contiguous and last 28 to 33 days.

    Returns
    -------
    pandas.DataFrame
        ``service_from`` and ``service_to`` as ``datetime.date``, both inclusive.
    """
    start = date(first_day.year, first_day.month, int(rng.choice(READ_DAYS)))
    if start < first_day:
        start = _next_month(start, start.day)
    periods = []
    while True:
        allowed = [
            day for day in READ_DAYS if (_next_month(start, day) - start).days in PERIOD_DAYS
        ]
        following = _next_month(start, int(rng.choice(allowed)))
        if following - timedelta(days=1) > last_day:
            break
        periods.append((start, following - timedelta(days=1)))
        start = following
    return pd.DataFrame(periods, columns=["service_from", "service_to"])


def electric_bills(
    energy: pd.Series,
    periods: pd.DataFrame,
    timezone: str,
    rates: tuple[Rates, ...],
) -> pd.DataFrame:
    """Bills from the account's interval energy.

    Parameters
    ----------
    energy : pandas.Series
        kWh per interval on a UTC index of 15-minute interval starts (the whole account).
    periods : pandas.DataFrame
        From :func:`billing_periods`.
    timezone : str
        Billing days are local calendar days.
    rates : tuple of Rates
        Sorted by ``effective_from``; a bill uses the newest version in effect on its
        ``service_to`` day.

    Returns
    -------
    pandas.DataFrame
        ``service_from``, ``service_to``, ``kwh`` (whole kWh), ``max_demand_kw`` (highest
        15-minute average, 0.1 kW) and ``charges`` (dollars to the cent), computed from the
        rounded quantities as a utility would.
    """
    local_days = energy.index.tz_convert(timezone).tz_localize(None).normalize()
    day_numbers = local_days.to_numpy().astype("datetime64[D]")
    first = np.asarray(periods["service_from"].tolist(), dtype="datetime64[D]")
    last = np.asarray(periods["service_to"].tolist(), dtype="datetime64[D]")
    position = np.searchsorted(first, day_numbers, side="right") - 1
    inside = (position >= 0) & (day_numbers <= last[np.clip(position, 0, None)])
    hours = (energy.index[1] - energy.index[0]) / pd.Timedelta(hours=1)
    grouped = pd.Series(energy.to_numpy()[inside]).groupby(position[inside])
    if grouped.ngroups != len(periods):
        raise ValueError("every billing period needs interval energy")
    kwh = grouped.sum().round(0)
    demand = (grouped.max() / hours).round(1)
    bills = periods.copy()
    bills["kwh"] = kwh.to_numpy()
    bills["max_demand_kw"] = demand.to_numpy()
    starts = np.asarray([version.effective_from for version in rates], dtype="datetime64[D]")
    version = np.searchsorted(starts, last, side="right") - 1
    if (version < 0).any():
        raise ValueError("a bill ends before the first tariff version")
    pick = np.asarray([[r.customer_charge, r.energy_per_kwh, r.demand_per_kw] for r in rates])
    customer, per_kwh, per_kw = pick[version].T
    energy_charge = per_kwh * bills["kwh"].to_numpy()
    demand_charge = per_kw * bills["max_demand_kw"].to_numpy()
    bills["charges"] = np.round(customer + energy_charge + demand_charge, 2)
    return bills
