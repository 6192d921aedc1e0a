"""The shape of demand through the day: typical days by group, and the hour × date heat map."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.meters import MeterSeries
from engine.profiles._readings import (
    covering_grid,
    expected_counts,
    local_readings,
    require_interval_at_most,
)

#: Groupings a typical day can be split by.
GROUPINGS: tuple[str, ...] = ("day_type", "period", "season", "all")
#: Meteorological seasons in the north, indexed by ``month % 12`` (December first).
_NORTH_SEASONS = ("winter",) * 3 + ("spring",) * 3 + ("summer",) * 3 + ("autumn",) * 3
_SEASON_ORDER = ("winter", "spring", "summer", "autumn")
_SOUTH_SWAP = {"winter": "summer", "summer": "winter", "spring": "autumn", "autumn": "spring"}
#: Group name of readings outside every campus period.
NO_PERIOD = "outside campus periods"
ALL_DAYS = "all days"


def season_of_month(months: np.ndarray, hemisphere: str = "north") -> np.ndarray:
    """Meteorological season names (Dec–Feb winter in the north, summer in the south)."""
    if hemisphere not in ("north", "south"):
        raise InputError(f"unknown hemisphere {hemisphere!r}.", hint="Choose 'north' or 'south'.")
    names = _NORTH_SEASONS
    if hemisphere == "south":
        names = tuple(_SOUTH_SWAP[name] for name in names)
    return np.asarray(names, dtype=object)[np.asarray(months) % 12]


def _group_labels(readings: pd.DataFrame, by: str, hemisphere: str) -> tuple[np.ndarray, list]:
    """Each reading's group name and the display order of the groups."""
    if by == "day_type":
        labels = readings["day_type"].astype(str).to_numpy(dtype=object)
        order = ["weekday", "saturday", "sunday", "holiday"]
    elif by == "period":
        labels = readings["period"].astype(str).to_numpy(dtype=object)
        labels[labels == ""] = NO_PERIOD
        order = list(pd.unique(labels))
    elif by == "season":
        labels = season_of_month(readings["date"].dt.month.to_numpy(), hemisphere)
        order = list(_SEASON_ORDER)
    elif by == "all":
        labels = np.full(len(readings), ALL_DAYS, dtype=object)
        order = [ALL_DAYS]
    else:
        raise InputError(
            f"typical days cannot be grouped by {by!r}.", hint=f"Choose one of {GROUPINGS}."
        )
    return labels, order


def quantile_column(q: float) -> str:
    """Column name of a demand quantile, e.g. 0.1 → ``"P10 kW"``."""
    return f"P{100 * q:g} kW"


def typical_day(
    meter: MeterSeries,
    labels: pd.DataFrame | None = None,
    *,
    by: str = "day_type",
    slot_minutes: int = 60,
    quantiles: Sequence[float] = (0.1, 0.5, 0.9),
    hemisphere: str = "north",
) -> pd.DataFrame:
    """Average demand per local time-of-day slot with quantile bands, per group of days.

    Each day's demand in a slot is the mean of its readings there (kW); the table then gives,
    over the days of each group, the mean and the quantiles of those daily slot values.

    Parameters
    ----------
    meter : MeterSeries
        Interval energy in kWh; the interval must divide ``slot_minutes``.
    labels : pandas.DataFrame, optional
        Calendar labels (see :func:`engine.profiles.local_readings`).
    by : {"day_type", "period", "season", "all"}
        How days are grouped; seasons are meteorological (by month) for ``hemisphere``.
    slot_minutes : {15, 30, 60}
        Slot length: 96, 48 or 24 slots a day.
    quantiles : sequence of float
        Quantile bands, default P10/P50/P90.

    Returns
    -------
    pandas.DataFrame
        One row per group and slot: ``group``, ``slot``, ``time of day`` ("HH:MM"),
        ``hour`` (slot start in hours, for plotting), ``mean kW``, one column per quantile
        (e.g. ``P10 kW``) and ``days`` (days averaged).
    """
    if slot_minutes not in (15, 30, 60):
        raise InputError(
            f"a typical-day slot of {slot_minutes} minutes is not offered.",
            hint="Choose 15, 30 or 60 minutes.",
        )
    require_interval_at_most(meter, pd.Timedelta(minutes=slot_minutes), "this typical day")
    readings = local_readings(meter, labels)
    group, order = _group_labels(readings, by, hemisphere)
    slot = readings["minute"].to_numpy() // slot_minutes
    per_day = readings["kW"].groupby([group, readings["date"].to_numpy(), slot]).mean()
    per_day.index.names = ["group", "date", "slot"]
    by_slot = per_day.groupby(level=["group", "slot"])
    table = by_slot.mean().rename("mean kW").to_frame()
    bands = by_slot.quantile(list(quantiles)).unstack()
    for q in quantiles:
        table[quantile_column(q)] = bands[q]
    table["days"] = by_slot.size()
    table = table.reset_index()
    table["group"] = pd.Categorical(table["group"], categories=order)
    table = table.sort_values(["group", "slot"], ignore_index=True)
    table["group"] = table["group"].astype(str)
    minutes = table["slot"].to_numpy() * slot_minutes
    table.insert(2, "time of day", [f"{m // 60:02d}:{m % 60:02d}" for m in minutes])
    table.insert(3, "hour", minutes / 60.0)
    return table


def heat_map(meter: MeterSeries, *, unit: str = "kWh") -> pd.DataFrame:
    """Hour × date matrix of energy (kWh) or mean demand (kW) on the local clock.

    Rows are local dates from the first to the last reading, columns the local hours 0..23.
    A ``kWh`` cell is the energy of that local hour when every interval in it has a reading
    and NaN otherwise; a ``kW`` cell is the mean demand of the readings present. The hour
    repeated when clocks go back holds both hours; the hour skipped in spring is NaN.
    """
    if unit not in ("kWh", "kW"):
        raise InputError(f"a heat map in {unit!r} is not offered.", hint="Choose 'kWh' or 'kW'.")
    require_interval_at_most(meter, pd.Timedelta(hours=1), "the hour × date heat map")
    readings = local_readings(meter)
    keys = [readings["date"].to_numpy(), readings["local"].dt.hour.to_numpy()]
    cells = readings[unit].groupby(keys)
    if unit == "kW":
        values = cells.mean()
    else:
        expected = expected_counts(covering_grid(meter), meter.timezone, ["date", "hour"])
        counts = cells.size()
        whole = counts.to_numpy() == expected.reindex(counts.index).to_numpy()
        values = cells.sum().where(whole)
    matrix = values.unstack()
    dates = pd.date_range(readings["date"].iloc[0], readings["date"].iloc[-1], freq="D")
    matrix = matrix.reindex(index=dates, columns=range(24))
    matrix.index.name = "local date"
    matrix.columns.name = f"local hour ({unit})"
    return matrix
