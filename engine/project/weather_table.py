"""Outdoor temperatures per weather station: °C for the models, the raw value as read beside it."""

from __future__ import annotations

import sqlite3

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.progress import Progress
from engine.project.bulk import insert_columns
from engine.project.columns import epoch_seconds, fetch_columns, float_values, iso_utc, utc_times
from engine.project.source_table import require_source


def add_weather(
    conn: sqlite3.Connection,
    station: str,
    temps_c: pd.Series,
    raw: pd.Series,
    *,
    source_id: int,
    progress: Progress | None = None,
) -> None:
    """Store a station's temperatures; a station may grow, but its periods may not overlap."""
    what = f"weather station '{station}'"
    if not isinstance(station, str) or not station:
        raise ValueError("weather needs a non-empty station name")
    if not temps_c.index.equals(raw.index):
        raise ValueError(f"{what}: temperatures and raw values need the same index")
    if not (temps_c.index.is_unique and temps_c.index.is_monotonic_increasing):
        raise ValueError(f"{what}: times must be sorted and unique")
    times = epoch_seconds(temps_c.index, what)
    temps = float_values(temps_c, f"{what}: temperatures")
    raws = float_values(raw, f"{what}: raw values")
    require_source(conn, source_id)
    if len(times):
        first, last = conn.execute(
            "SELECT min(t), max(t) FROM weather WHERE station = ? AND t BETWEEN ? AND ?",
            (station, int(times[0]), int(times[-1])),
        ).fetchone()
        if first is not None:
            raise InputError(
                f"{what} already has temperatures from {iso_utc(first)} to {iso_utc(last)} "
                "inside the period of this file.",
                hint="Import it under another station name, or remove the station first.",
            )
    insert_columns(
        conn,
        "INSERT INTO weather (station, t, temp_c, raw_value, source_id) VALUES (?, ?, ?, ?, ?)",
        [
            np.full(len(times), station, dtype=object),
            times,
            temps,
            raws,
            np.full(len(times), source_id),
        ],
        progress,
        f"Saving {what}",
    )


def station_names(conn: sqlite3.Connection) -> list[str]:
    """Weather stations in the project, alphabetically."""
    rows = conn.execute("SELECT DISTINCT station FROM weather ORDER BY station").fetchall()
    return [name for (name,) in rows]


def load_weather(conn: sqlite3.Connection, station: str | None = None) -> pd.Series:
    """A station's temperatures in °C on a UTC index, named after the station.

    ``station`` may be left out when the project has exactly one.
    """
    if station is None:
        stations = station_names(conn)
        if len(stations) != 1:
            raise ValueError(f"name the weather station; the project has {stations or 'none'}")
        station = stations[0]
    times, temps = fetch_columns(
        conn.execute("SELECT t, temp_c FROM weather WHERE station = ? ORDER BY t", (station,)),
        ("int64", "float64"),
    )
    if not len(times):
        raise KeyError(f"no weather station named {station!r} in the project")
    return pd.Series(temps, index=utc_times(times), name=station)


def remove_station(conn: sqlite3.Connection, station: str) -> None:
    """Delete every temperature of ``station``."""
    conn.execute("DELETE FROM weather WHERE station = ?", (station,))
