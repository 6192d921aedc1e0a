"""Energy over longer spans: monthly totals year over year, and the load-duration curve."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.meters import MeterSeries
from engine.profiles._readings import covering_grid, expected_counts, local_readings


def monthly_totals_by_year(meter: MeterSeries) -> pd.DataFrame:
    """Energy per local calendar month, one pair of columns per year.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``month`` 1..12, with ``"<year> kWh"`` (sum of the readings present; NaN
        when there are none) and ``"<year> coverage %"`` (readings present as a share of the
        month's intervals, so partial months stand out) for each year touched.
    """
    readings = local_readings(meter)
    local = readings["local"].dt
    energy = readings["kWh"].groupby([local.year.to_numpy(), local.month.to_numpy()])
    expected = expected_counts(covering_grid(meter, "month"), meter.timezone, ["year", "month"])
    present = energy.size().reindex(expected.index, fill_value=0)
    coverage = (100.0 * present / expected).unstack(level=0)
    kwh = energy.sum().reindex(expected.index).unstack(level=0)
    months = pd.Index(range(1, 13), name="month")
    kwh, coverage = kwh.reindex(months), coverage.reindex(months).fillna(0.0)
    columns = {}
    for year in kwh.columns:
        columns[f"{year} kWh"] = kwh[year]
        columns[f"{year} coverage %"] = coverage[year]
    return pd.DataFrame(columns, index=months)


def duration_curve(meter: MeterSeries) -> np.ndarray:
    """Every interval demand (kW) present, sorted from highest to lowest."""
    readings = local_readings(meter)
    return np.sort(readings["kW"].to_numpy())[::-1]


def load_duration(meter: MeterSeries, *, max_points: int = 1000) -> pd.DataFrame:
    """Load-duration curve: demand against the share of time it is met or exceeded.

    Computed from every reading; for plotting, at most ``max_points`` evenly spaced ranks are
    returned, always including the highest and lowest demand.

    Returns
    -------
    pandas.DataFrame
        ``% of time`` (share of readings at or above the demand) and ``kW``, demand falling.
    """
    demand = duration_curve(meter)
    n = len(demand)
    ranks = np.unique(np.round(np.linspace(0, n - 1, min(max_points, n))).astype(np.int64))
    return pd.DataFrame({"% of time": 100.0 * (ranks + 1) / n, "kW": demand[ranks]})
