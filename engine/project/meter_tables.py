"""Meters: their description, every reading as read, and the canonical interval energy.

``raw_readings`` keeps each reading exactly as the importer read it (duplicates included, in
file order); ``readings`` holds the interval energy in kWh that cleaning and models start from.
Cleaning never rewrites either table: it is a list of steps applied on top.
"""

from __future__ import annotations

import sqlite3

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.meters import UTILITIES, MeterSeries
from engine.progress import Progress
from engine.project import documents
from engine.project.bulk import insert_columns
from engine.project.columns import (
    epoch_seconds,
    fetch_columns,
    float_values,
    utc_times,
)
from engine.project.source_table import require_source

RAW_COLUMNS = ("t", "raw_value", "source_row")


def add_meter(
    conn: sqlite3.Connection,
    meter: MeterSeries,
    raw: pd.DataFrame,
    *,
    source_id: int,
    settings: dict,
    progress: Progress | None = None,
) -> None:
    """Store a new meter with its interval energy and its raw readings."""
    what = f"meter '{meter.name}'"
    interval_s = _interval_seconds(meter.interval, what)
    values = meter.values
    if values.dtype != np.float64:
        raise ValueError(f"{what}: values must be float64 kWh, got {values.dtype}")
    if not (values.index.is_unique and values.index.is_monotonic_increasing):
        raise ValueError(f"{what}: interval starts must be sorted and unique")
    times = epoch_seconds(values.index, what)
    raw_times, raw_values, raw_rows = _raw_columns(raw, f"raw readings of {what}")
    if not isinstance(settings, dict):
        raise ValueError(f"{what}: settings must be a dict")
    require_source(conn, source_id)
    if conn.execute("SELECT 1 FROM meters WHERE name = ?", (meter.name,)).fetchone():
        raise InputError(
            f"the project already has a meter named '{meter.name}'.",
            hint="Import it under another name, or remove the existing meter first.",
        )
    meter_id = conn.execute(
        "INSERT INTO meters (name, utility, unit_found, interval_s, timezone, source_label, "
        "source_id, settings) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
        (
            meter.name,
            meter.utility,
            meter.unit_found,
            interval_s,
            meter.timezone,
            meter.source,
            source_id,
            documents.written("meter settings", settings, f"settings of {what}"),
        ),
    ).lastrowid
    share = len(times) / max(len(times) + len(raw_times), 1)
    insert_columns(
        conn,
        "INSERT INTO readings (meter_id, t, kwh) VALUES (?, ?, ?)",
        [np.full(len(times), meter_id), times, values.to_numpy()],
        None if progress is None else progress.part(0.0, share),
        f"Saving {what}",
    )
    insert_columns(
        conn,
        "INSERT INTO raw_readings (meter_id, seq, t, raw_value, source_row) VALUES (?, ?, ?, ?, ?)",
        [
            np.full(len(raw_times), meter_id),
            np.arange(len(raw_times)),
            raw_times,
            raw_values,
            raw_rows,
        ],
        None if progress is None else progress.part(share, 1.0),
        f"Saving raw readings of {what}",
    )


def _interval_seconds(interval: pd.Timedelta, what: str) -> int:
    seconds = pd.Timedelta(interval).total_seconds()
    if not (seconds > 0 and seconds == int(seconds)):
        raise ValueError(f"{what}: interval must be a positive whole number of seconds")
    return int(seconds)


def _raw_columns(raw: pd.DataFrame, what: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Check the raw table's columns and return (epoch seconds, values, source rows)."""
    if set(raw.columns) != set(RAW_COLUMNS):
        raise ValueError(f"{what} need exactly the columns {RAW_COLUMNS}, got {list(raw.columns)}")
    rows = raw["source_row"]
    if not pd.api.types.is_integer_dtype(rows) or rows.isna().any():
        raise ValueError(f"{what}: source_row must be whole row numbers")
    return (
        epoch_seconds(pd.DatetimeIndex(raw["t"]), what),
        float_values(raw["raw_value"], f"{what}: raw_value"),
        rows.to_numpy(dtype="int64"),
    )


def meter_names(conn: sqlite3.Connection) -> list[str]:
    """Meter names in the order they were added."""
    return [name for (name,) in conn.execute("SELECT name FROM meters ORDER BY id").fetchall()]


def meter_descriptions(conn: sqlite3.Connection) -> list[tuple[str, str, str]]:
    """(name, utility, unit found) of every meter in the order added, without its readings."""
    return conn.execute("SELECT name, utility, unit_found FROM meters ORDER BY id").fetchall()


def last_reading_starts(conn: sqlite3.Connection) -> list[int]:
    """The last interval start (UTC seconds) of every meter with readings, in the order added:
    one index seek a meter, where the project's summary counts and sums them all."""
    rows = conn.execute(
        "SELECT (SELECT max(t) FROM readings WHERE meter_id = m.id) FROM meters AS m ORDER BY m.id"
    ).fetchall()
    return [last for (last,) in rows if last is not None]


def meter_interval(conn: sqlite3.Connection, name: str) -> pd.Timedelta | None:
    """The meter's interval, None when the project has no such meter; no readings read."""
    row = conn.execute("SELECT interval_s FROM meters WHERE name = ?", (name,)).fetchone()
    return None if row is None else pd.Timedelta(seconds=row[0])


def set_utility(conn: sqlite3.Connection, name: str, utility: str) -> None:
    """File the meter under ``utility`` (roll-ups and prices follow); readings stay as stored."""
    if utility not in UTILITIES:
        raise ValueError(f"unknown utility {utility!r}; expected one of {UTILITIES}")
    _meter_row(conn, name)
    conn.execute("UPDATE meters SET utility = ? WHERE name = ?", (utility, name))


def _meter_row(conn: sqlite3.Connection, name: str) -> tuple:
    row = conn.execute(
        "SELECT id, utility, unit_found, interval_s, timezone, source_label, settings "
        "FROM meters WHERE name = ?",
        (name,),
    ).fetchone()
    if row is None:
        raise KeyError(f"no meter named {name!r} in the project")
    return row


def load_meter(conn: sqlite3.Connection, name: str) -> MeterSeries:
    """The meter as it was added: the Series is named after the meter, its index unnamed."""
    meter_id, utility, unit_found, interval_s, timezone, source_label, _ = _meter_row(conn, name)
    times, kwh = fetch_columns(
        conn.execute("SELECT t, kwh FROM readings WHERE meter_id = ? ORDER BY t", (meter_id,)),
        ("int64", "float64"),
    )
    return MeterSeries(
        name=name,
        utility=utility,
        values=pd.Series(kwh, index=utc_times(times), name=name),
        interval=pd.Timedelta(seconds=interval_s),
        timezone=timezone,
        unit_found=unit_found,
        source=source_label,
    )


def load_raw(conn: sqlite3.Connection, name: str) -> pd.DataFrame:
    """Every reading of the meter as read, in file order: columns t, raw_value, source_row."""
    meter_id = _meter_row(conn, name)[0]
    times, values, rows = fetch_columns(
        conn.execute(
            "SELECT t, raw_value, source_row FROM raw_readings WHERE meter_id = ? ORDER BY seq",
            (meter_id,),
        ),
        ("int64", "float64", "int64"),
    )
    return pd.DataFrame({"t": utc_times(times), "raw_value": values, "source_row": rows})


def meter_settings(conn: sqlite3.Connection, name: str) -> dict:
    """The import settings stored with the meter."""
    text = _meter_row(conn, name)[6]
    return documents.read("meter settings", text, f"the import settings of meter '{name}'")


def remove_meter(conn: sqlite3.Connection, name: str) -> None:
    """Delete the meter, its readings, raw readings and cleaning steps."""
    meter_id = _meter_row(conn, name)[0]
    conn.execute("DELETE FROM cleaning_steps WHERE meter = ?", (name,))
    conn.execute("DELETE FROM meters WHERE id = ?", (meter_id,))
