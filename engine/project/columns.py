"""Conversions between pandas/numpy values and the plain values stored in a project file.

Times go in as whole seconds since the Unix epoch (UTC) and come back as a tz-aware UTC
``DatetimeIndex`` at microsecond resolution (pandas' default resolution). Floats go in as
Python floats from ``ndarray.tolist()`` (NaN is stored as NULL) and come back as float64.
Structured values are JSON text.
"""

from __future__ import annotations

import json
import math
import sqlite3
import time
from datetime import UTC, datetime, timedelta
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError

#: Ticks per second for each resolution a pandas datetime may have.
_TICKS_PER_SECOND = {"s": 1, "ms": 1_000, "us": 1_000_000, "ns": 1_000_000_000}
_RETURNED_UNIT = "us"
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)  # fromtimestamp() fails before 1970 on Windows


def epoch_seconds(times: pd.DatetimeIndex, what: str) -> np.ndarray:
    """Whole seconds since the epoch for tz-aware UTC ``times``; refuse anything lossy.

    ``what`` names the data for the message, e.g. ``"meter 'Hall A'"``.
    """
    if not isinstance(times, pd.DatetimeIndex) or str(times.tz) != "UTC":
        raise ValueError(f"{what}: times must be a tz-aware UTC DatetimeIndex")
    if times.hasnans:
        raise ValueError(f"{what}: times must not contain NaT")
    seconds, fraction = np.divmod(times.asi8, _TICKS_PER_SECOND[times.unit])
    if fraction.any():
        first = times[int(np.flatnonzero(fraction)[0])]
        raise InputError(
            f"{what} has a time with a fraction of a second ({first}).",
            hint="Round the times to whole seconds on import; project files store whole seconds.",
        )
    return seconds


def utc_times(seconds: np.ndarray) -> pd.DatetimeIndex:
    """A UTC ``DatetimeIndex`` (microsecond resolution) from epoch seconds."""
    index = pd.DatetimeIndex(np.asarray(seconds, dtype="int64").astype("datetime64[s]"), tz="UTC")
    return index.as_unit(_RETURNED_UNIT)


def iso_utc(seconds: int | None) -> str | None:
    """``2024-01-31T23:45:00Z`` for epoch seconds, or None."""
    if seconds is None:
        return None
    return (_EPOCH + timedelta(seconds=seconds)).strftime("%Y-%m-%dT%H:%M:%SZ")


def now_seconds() -> int:
    """The current time as whole epoch seconds."""
    return int(time.time())


def float_values(values: Any, what: str) -> np.ndarray:
    """Numbers as a float64 array (missing becomes NaN); refuse text or dates."""
    series = pd.Series(values, copy=False)
    if not (pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series)):
        raise ValueError(f"{what} must be numbers, got dtype {series.dtype}")
    return series.to_numpy(dtype="float64", na_value=np.nan)


def calendar_dates(values: Any, what: str) -> np.ndarray:
    """ISO ``YYYY-MM-DD`` strings for date-like values that carry no time of day."""
    dates = pd.to_datetime(pd.Series(values, copy=False))
    if isinstance(dates.dtype, pd.DatetimeTZDtype):
        raise ValueError(f"{what} must be calendar dates without a time zone")
    if dates.isna().any():
        raise ValueError(f"{what} has a missing date")
    if (dates != dates.dt.normalize()).any():
        raise ValueError(f"{what} must be dates without a time of day")
    return dates.dt.strftime("%Y-%m-%d").to_numpy(dtype=object)


def dates_from_iso(values: np.ndarray) -> pd.DatetimeIndex:
    """Naive midnight datetimes (microsecond resolution) from ISO date strings."""
    return pd.DatetimeIndex(pd.to_datetime(values, format="%Y-%m-%d")).as_unit(_RETURNED_UNIT)


def to_json(value: Any, what: str) -> str:
    """JSON text for a setting or parameter; numpy scalars become plain numbers."""
    try:
        return json.dumps(value, allow_nan=False, ensure_ascii=False, default=_plain)
    except (TypeError, ValueError) as error:
        raise ValueError(f"{what} cannot be stored as JSON: {error}") from error


def json_records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows as plain dicts, NaN as None, for the project file."""
    return [
        {
            key: None if isinstance(value, float) and math.isnan(value) else value
            for key, value in row.items()
        }
        for row in frame.to_dict(orient="records")
    ]


def frame_to_columns(frame: pd.DataFrame) -> dict[str, list[Any]]:
    """A table as JSON-ready column lists: NaN as null, time stamps as ISO 8601 text."""
    columns: dict[str, list[Any]] = {}
    for name in frame.columns:
        column = frame[name]
        if isinstance(column.dtype, pd.DatetimeTZDtype):
            columns[name] = [stamp.isoformat() for stamp in column]
        else:
            columns[name] = [
                None if isinstance(value, float) and math.isnan(value) else value
                for value in column.tolist()
            ]
    return columns


def frame_from_columns(columns: dict[str, list[Any]], stamps: tuple[str, ...] = ()) -> pd.DataFrame:
    """Undo :func:`frame_to_columns`; a column of nulls only is read back as NaN numbers."""
    frame = pd.DataFrame(
        {
            name: [math.nan] * len(values) if all(v is None for v in values) else values
            for name, values in columns.items()
        }
    )
    for name in stamps:
        frame[name] = pd.to_datetime(frame[name], utc=True)
    return frame


def _plain(value: Any) -> Any:
    if isinstance(value, np.generic):
        return value.item()
    raise TypeError(f"{type(value).__name__} is not a JSON value")


class DamagedValue(ValueError):
    """A stored value this version cannot read back: the file was changed outside Loadledger.

    The message names the value; the project layer adds the file and what to do.
    """


def from_json(text: str, what: str, expect: type | None = None) -> Any:
    """The value stored by :func:`to_json`, refusing what :func:`to_json` never writes.

    ``what`` names the value for the message (e.g. ``"setting 'calendar'"``); ``expect`` is
    the type the value must have, if any. Non-finite numbers, numbers beyond Python's digit
    limit and nesting beyond the recursion limit raise :class:`DamagedValue`.
    """
    try:
        value = json.loads(text, parse_float=_finite, parse_constant=_refused_constant)
    except RecursionError:
        raise DamagedValue(f"{what} is nested too deeply") from None
    except (ValueError, TypeError) as error:
        reason = "a number too long to read" if "digits" in str(error) else str(error)[:80]
        raise DamagedValue(f"{what} is not valid JSON ({reason})") from None
    if expect is not None:
        require_type(value, what, expect)
    return value


def require_type(value: Any, what: str, expect: type) -> None:
    """Refuse (:class:`DamagedValue`) a decoded JSON value that is not of type ``expect``."""
    if not isinstance(value, expect):
        raise DamagedValue(f"{what} holds {_kind(type(value))} where {_kind(expect)} belongs")


def _kind(kind: type) -> str:
    """A JSON reader's word for a decoded value's type."""
    words = {dict: "an object", list: "a list", str: "text", bool: "true or false"}
    return words.get(kind, "null" if kind is type(None) else "a number")


def _finite(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):  # math, not numpy: called once per stored number
        raise ValueError("a number too large to read")
    return value


def _refused_constant(name: str) -> float:
    raise ValueError(f"{name} is not a number JSON allows")


def fetch_columns(cursor: sqlite3.Cursor, dtypes: tuple[str, ...]) -> list[np.ndarray]:
    """All rows of ``cursor`` as one numpy array per column (NULL becomes NaN in float columns)."""
    rows = cursor.fetchall()
    if not rows:
        return [np.empty(0, dtype=dtype) for dtype in dtypes]
    if all(np.dtype(dtype).kind in "if" for dtype in dtypes):
        # One pass in C for numbers (None becomes NaN); whole numbers below 2**53 (times in
        # seconds, row numbers) come back exactly.
        table = np.array(rows, dtype=np.float64)
        if table.shape[1] == len(dtypes) and _exact(table, dtypes):
            return [table[:, i].astype(dtype) for i, dtype in enumerate(dtypes)]
    by_column = zip(*rows, strict=True)
    return [np.array(column, dtype=dtype) for column, dtype in zip(by_column, dtypes, strict=True)]


def _exact(table: np.ndarray, dtypes: tuple[str, ...]) -> bool:
    """Whether the whole-number columns of ``table`` hold whole numbers float64 keeps exactly."""
    for i, dtype in enumerate(dtypes):
        if np.dtype(dtype).kind == "i":
            column = table[:, i]
            if not (np.isfinite(column).all() and np.abs(column).max() < 2**53):
                return False
    return True
