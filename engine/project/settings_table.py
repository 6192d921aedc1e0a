"""Project settings: one JSON value per key."""

from __future__ import annotations

import sqlite3
from typing import Any

from engine.project.columns import from_json, to_json
from engine.zone_names import require_zone

#: The key under which the site's IANA time zone is kept.
SITE_TIMEZONE = "site_timezone"
#: The version of Loadledger that created the file, and the one that saved to it last.
CREATED_WITH, WRITTEN_WITH = "created_with", "written_with"


def get_setting(conn: sqlite3.Connection, key: str, default: Any = None) -> Any:
    """The stored value of ``key``, or ``default`` when it was never set."""
    row = conn.execute("SELECT value FROM settings WHERE key = ?", (key,)).fetchone()
    return default if row is None else from_json(row[0], f"setting '{key}'")


def set_setting(conn: sqlite3.Connection, key: str, value: Any) -> None:
    """Store ``value`` (any JSON value) under ``key``, replacing what was there."""
    if not isinstance(key, str) or not key:
        raise ValueError("a setting needs a non-empty text key")
    if key == SITE_TIMEZONE:
        require_zone(value, "the site's time zone")
    conn.execute(
        "INSERT INTO settings (key, value) VALUES (?, ?) "
        "ON CONFLICT (key) DO UPDATE SET value = excluded.value",
        (key, to_json(value, f"setting '{key}'")),
    )
