"""Key figures of a meter's load: base load, peak, load factor, after-hours and weekend use."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.meters import MeterSeries
from engine.profiles._readings import complete_days, local_readings, require_interval_at_most

_WEEKEND = ("saturday", "sunday")


def _ratio(numerator: float, denominator: float) -> float:
    return numerator / denominator if denominator > 0 else float("nan")


def key_figures(
    meter: MeterSeries,
    labels: pd.DataFrame | None = None,
    *,
    base_quantile: float = 0.05,
    night_hours: tuple[int, int] = (0, 5),
) -> pd.DataFrame:
    """Headline figures of the load, each with its unit and how it was worked out.

    Base load is a low quantile (default P5) of the demand in the night hours (default
    00:00–05:00 local), so a few odd readings do not set it (common practice). After-hours
    share uses the ``occupied`` label (default Monday–Friday 07:00–19:00). The weekend ratio
    compares mean daily energy over whole Saturdays and Sundays with whole weekdays
    (holidays left out). Load factor is mean demand over peak demand for the whole record.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``figure``, with ``value``, ``unit`` and ``how``.
    """
    if not 0.0 <= base_quantile <= 1.0:
        raise InputError(
            f"base-load quantile {base_quantile} is outside 0..1.", hint="Use e.g. 0.05 for P5."
        )
    start, stop = night_hours
    if not 0 <= start < stop <= 24:
        raise InputError(
            f"night hours {start}–{stop} are not a span within one day.",
            hint="Give a start and end hour with 0 ≤ start < end ≤ 24, e.g. (0, 5).",
        )
    require_interval_at_most(meter, pd.Timedelta(hours=1), "base load and after-hours share")
    readings = local_readings(meter, labels)
    demand = readings["kW"].to_numpy()
    energy = readings["kWh"].to_numpy()
    hour = readings["minute"].to_numpy() // 60
    night = demand[(hour >= start) & (hour < stop)]
    base = float(np.quantile(night, base_quantile)) if len(night) else float("nan")
    peak = float(demand.max())
    mean = float(demand.mean())
    total = float(energy.sum())
    after_hours = float(energy[~readings["occupied"].to_numpy(dtype=bool)].sum())
    days = complete_days(meter, readings)
    day_type = days["day_type"].astype(str)
    weekend = days.loc[day_type.isin(_WEEKEND), "kWh"].mean()
    weekday = days.loc[day_type == "weekday", "kWh"].mean()
    base_label = f"P{100 * base_quantile:g}"
    rows = [
        ("total energy", total, "kWh", "sum of the readings present"),
        ("mean demand", mean, "kW", "mean of interval demand"),
        (
            "base load",
            base,
            "kW",
            f"{base_label} of interval demand between {start:02d}:00 and {stop:02d}:00 local",
        ),
        ("peak demand", peak, "kW", "highest interval demand"),
        ("P99 demand", float(np.quantile(demand, 0.99)), "kW", "99th percentile of demand"),
        ("base-to-peak ratio", _ratio(base, peak), "ratio", "base load / peak demand"),
        ("load factor", _ratio(mean, peak), "ratio", "mean demand / peak demand"),
        (
            "after-hours share",
            100.0 * _ratio(after_hours, total),
            "%",
            "energy in unoccupied intervals / total energy",
        ),
        (
            "weekend-to-weekday ratio",
            _ratio(float(weekend), float(weekday)),
            "ratio",
            "mean daily energy of whole weekend days / of whole weekdays",
        ),
    ]
    table = pd.DataFrame(rows, columns=["figure", "value", "unit", "how"])
    return table.set_index("figure")
