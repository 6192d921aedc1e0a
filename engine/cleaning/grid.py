"""The regular grid of interval starts a meter's readings live on, and runs in flag arrays."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.cleaning.wording import duration_text
from engine.errors import InputError


def check_canonical(values: pd.Series, meter: str) -> None:
    """Refuse readings that are not a sorted, unique, UTC-indexed series of interval starts."""
    index = values.index
    if not isinstance(index, pd.DatetimeIndex) or str(index.tz) != "UTC":
        raise InputError(
            f"meter '{meter}': the readings need a UTC time index of interval starts.",
            hint="Import the meter file again so the times are converted to UTC.",
        )
    if len(index) == 0:
        raise InputError(f"meter '{meter}' has no readings.", hint="Import a file with readings.")
    if not index.is_monotonic_increasing:
        raise InputError(
            f"meter '{meter}': the readings are not in time order.",
            hint="Import the meter file again; the importer sorts readings by time.",
        )
    if not index.is_unique:
        first = index[index.duplicated()][0]
        raise InputError(
            f"meter '{meter}': the time {first.isoformat()} appears more than once.",
            hint="Resolve duplicated readings at import (the clock check lists them).",
        )


def infer_interval(index: pd.DatetimeIndex) -> pd.Timedelta:
    """The most common step between consecutive times: the meter's interval."""
    steps = np.diff(index.as_unit("ns").asi8)
    steps = steps[steps > 0]
    if steps.size == 0:
        raise InputError(
            "cannot tell the meter's interval from fewer than two distinct readings.",
            hint="Give the interval explicitly or import more readings.",
        )
    values, counts = np.unique(steps, return_counts=True)
    return pd.Timedelta(int(values[np.argmax(counts)]), unit="ns")


def to_grid(
    values: pd.Series, interval: pd.Timedelta, meter: str, timezone: str | None = None
) -> pd.Series:
    """Readings placed on every interval start from the first to the last; missing ones NaN.

    Daily (and longer) intervals are local calendar days when ``timezone`` is given: their
    starts are local midnights, 23 or 25 hours apart in UTC across clock changes.

    Raises
    ------
    InputError
        When a reading does not sit on the grid, which would otherwise be lost.
    """
    check_canonical(values, meter)
    index = values.index
    if timezone is not None and interval >= pd.Timedelta(days=1):
        local = index.tz_convert(timezone)
        days = pd.DateOffset(days=interval.days)
        grid = pd.date_range(local[0], local[-1], freq=days).tz_convert("UTC")
        off_grid = ~index.isin(grid)
    else:
        grid = pd.date_range(index[0], index[-1], freq=interval, unit=index.unit)
        off_grid = (index - index[0]) % interval != pd.Timedelta(0)
    if off_grid.any():
        stamps = index[off_grid]
        raise InputError(
            f"meter '{meter}': {len(stamps):,} readings are not on the "
            f"{duration_text(interval)} grid that starts at {index[0].isoformat()}, "
            f"the first at {stamps[0].isoformat()}.",
            hint="Check the interval chosen at import, or resample the meter to one interval.",
        )
    return values.astype("float64").reindex(grid.as_unit(index.unit))


def runs(flags: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start positions and (exclusive) stop positions of each run of True in ``flags``."""
    edges = np.diff(np.concatenate(([0], flags.astype(np.int8), [0])))
    return np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
