"""A meter's readings laid out on the local clock, with calendar labels and expected counts.

Every profile starts here: :func:`local_readings` gives the present readings with demand, local
date and time of day and the calendar labels; :func:`expected_counts` says how many intervals a
local day, hour or month *should* hold, so partial days and months are seen rather than averaged
into the figures as if they were whole.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.errors import InputError
from engine.meters import MeterSeries

#: Label columns the profiles use from ``engine.calendar.label_intervals``.
LABEL_COLUMNS: tuple[str, ...] = ("day_type", "period", "occupied")
_HOUR = pd.Timedelta(hours=1)


def interval_hours(meter: MeterSeries) -> float:
    """Length of one interval in hours (kW = kWh per interval / this)."""
    return meter.interval / _HOUR


def require_interval_at_most(meter: MeterSeries, longest: pd.Timedelta, what: str) -> None:
    """Raise :class:`InputError` when the meter's interval is too coarse for ``what``."""
    if meter.interval > longest or longest % meter.interval != pd.Timedelta(0):
        raise InputError(
            f"meter '{meter.name}' has {meter.interval} intervals; {what} needs intervals that "
            f"divide {longest} evenly.",
            hint="Use interval data (e.g. 15-minute or hourly readings) for this profile.",
        )


def fallback_labels(index_utc: pd.DatetimeIndex, timezone: str) -> pd.DataFrame:
    """Labels used when no campus calendar is given.

    Day type comes from the local weekday alone (no holidays), there are no campus periods, and
    the occupied hours are Monday–Friday 07:00–19:00 local time (the calendar's default rule).
    """
    return label_intervals(index_utc, timezone, CampusCalendar())


def _aligned_labels(
    meter: MeterSeries, index: pd.DatetimeIndex, labels: pd.DataFrame | None
) -> pd.DataFrame:
    if labels is None:
        return fallback_labels(index, meter.timezone)
    missing_columns = [column for column in LABEL_COLUMNS if column not in labels.columns]
    if missing_columns:
        raise InputError(
            f"the interval labels for meter '{meter.name}' lack the columns {missing_columns}.",
            hint="Label the intervals with the campus calendar again.",
        )
    aligned = labels.reindex(index)
    unlabelled = aligned["day_type"].isna().to_numpy()
    if unlabelled.any():
        first = index[unlabelled][0].tz_convert(meter.timezone)
        raise InputError(
            f"{int(unlabelled.sum())} readings of meter '{meter.name}' have no calendar label, "
            f"the first at {first:%Y-%m-%d %H:%M} local time.",
            hint="Label the intervals with the campus calendar again after changing the data.",
        )
    return aligned


def _checked_values(meter: MeterSeries) -> pd.Series:
    values = meter.values.dropna()
    if values.empty:
        raise InputError(
            f"meter '{meter.name}' has no readings to profile.",
            hint="Import readings for this meter first.",
        )
    index = values.index
    if meter.interval >= pd.Timedelta(days=1):
        # daily readings start at local midnight: 23 or 25 h apart in UTC across clock changes
        index = index.tz_convert(meter.timezone).tz_localize(None)
    offset = (index - index[0]) % meter.interval
    off_grid = offset != pd.Timedelta(0)
    if off_grid.any():
        stamp = values.index[off_grid][0].tz_convert(meter.timezone)
        raise InputError(
            f"meter '{meter.name}' has readings off its {meter.interval} grid, the first at "
            f"{stamp:%Y-%m-%d %H:%M} local time.",
            hint="Align the readings to a regular interval in the cleaning step.",
        )
    return values


def local_readings(meter: MeterSeries, labels: pd.DataFrame | None = None) -> pd.DataFrame:
    """The present readings with demand, local clock fields and calendar labels.

    Parameters
    ----------
    meter : MeterSeries
        The meter; NaN readings are left out.
    labels : pandas.DataFrame, optional
        Output of ``engine.calendar.label_intervals`` covering the readings; when absent,
        :func:`fallback_labels` is used.

    Returns
    -------
    pandas.DataFrame
        Indexed by UTC interval start, with ``kWh``, ``kW``, ``local`` (naive local start),
        ``date`` (local midnight), ``minute`` (minute of the local day) and the label columns.
    """
    values = _checked_values(meter)
    local = values.index.tz_convert(meter.timezone).tz_localize(None)
    date = local.normalize()
    frame = pd.DataFrame(
        {
            "kWh": values.to_numpy(dtype=float),
            "kW": values.to_numpy(dtype=float) / interval_hours(meter),
            "local": local,
            "date": date,
            "minute": ((local - date) // pd.Timedelta(minutes=1)).to_numpy(),
        },
        index=values.index,
    )
    label_frame = _aligned_labels(meter, values.index, labels)
    for column in LABEL_COLUMNS:
        frame[column] = label_frame[column].to_numpy()
    return frame


def _local_midnight_utc(naive: pd.DatetimeIndex, timezone: str) -> pd.DatetimeIndex:
    """Local wall-clock stamps to UTC; a midnight skipped by a DST change moves forward."""
    return naive.tz_localize(timezone, ambiguous=True, nonexistent="shift_forward").tz_convert(
        "UTC"
    )


def covering_grid(meter: MeterSeries, whole: str = "day") -> pd.DatetimeIndex:
    """Every interval start (UTC) of the local days or months the readings touch.

    The grid keeps the readings' phase (e.g. starts at :00/:15/:30/:45), so a reading is on it
    exactly when it is on the meter's regular interval.
    """
    values = _checked_values(meter)
    local = values.index[[0, -1]].tz_convert(meter.timezone).tz_localize(None)
    if whole == "month":
        first = local[:1].to_period("M").to_timestamp()
        after = (local[1:].to_period("M") + 1).to_timestamp()
    else:
        first = local[:1].normalize()
        after = local[1:].normalize() + pd.Timedelta(days=1)
    start, stop = _local_midnight_utc(first.append(after), meter.timezone)
    anchor = values.index[0]
    start = anchor - ((anchor - start) // meter.interval) * meter.interval
    return pd.date_range(start, stop, freq=meter.interval, inclusive="left")


def expected_counts(grid: pd.DatetimeIndex, timezone: str, keys: list[str]) -> pd.Series:
    """How many grid intervals fall in each local ``date``/``hour``/``year``/``month`` key."""
    local = grid.tz_convert(timezone).tz_localize(None)
    parts = {
        "date": local.normalize(),
        "hour": local.hour,
        "year": local.year,
        "month": local.month,
    }
    grouped = pd.Series(np.zeros(len(grid))).groupby([np.asarray(parts[key]) for key in keys])
    return grouped.size().rename_axis(keys)


def complete_days(meter: MeterSeries, readings: pd.DataFrame) -> pd.DataFrame:
    """Energy of each local day whose every interval has a reading, with its day type.

    Returns a frame indexed by local ``date`` with ``kWh`` and ``day_type`` (the label of the
    day's first reading).
    """
    expected = expected_counts(covering_grid(meter), meter.timezone, ["date"])
    by_day = readings.groupby("date").agg(
        kWh=("kWh", "sum"), count=("kWh", "size"), day_type=("day_type", "first")
    )
    whole = by_day["count"].to_numpy() == expected.reindex(by_day.index).to_numpy()
    return by_day.loc[whole, ["kWh", "day_type"]]
