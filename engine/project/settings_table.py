"""Project settings: one JSON value per key; the settings that hold documents (the calendar,
the meters' labels, …: :data:`documents.SETTING_DOCUMENTS`) keep them with their version."""

from __future__ import annotations

import sqlite3
from typing import Any

from engine.project import documents
from engine.project.columns import from_json, to_json
from engine.zone_names import require_zone

#: The key under which the site's IANA time zone is kept.
SITE_TIMEZONE = "site_timezone"
#: The version of Loadledger that created the file, and the one that saved to it last.
CREATED_WITH, WRITTEN_WITH = "created_with", "written_with"


def get_setting(conn: sqlite3.Connection, key: str, default: Any = None) -> Any:
    """The stored value of ``key``, or ``default`` when it was never set."""
    row = conn.execute("SELECT value FROM settings WHERE key = ?", (key,)).fetchone()
    return default if row is None else decoded(key, row[0])


def decoded(key: str, text: str, expect: type | None = None) -> Any:
    """The value of setting ``key`` stored as ``text``: a document brought up to its current
    version, any other value as stored (of type ``expect`` when given)."""
    what = f"setting '{key}'"
    kind = documents.SETTING_DOCUMENTS.get(key)
    if kind is None:
        return from_json(text, what, expect)
    return documents.read(kind, text, what)


def set_setting(conn: sqlite3.Connection, key: str, value: Any) -> None:
    """Store ``value`` (any JSON value) under ``key``, replacing what was there; None under a
    key that holds a document removes it (no document, as before it was ever set)."""
    if not isinstance(key, str) or not key:
        raise ValueError("a setting needs a non-empty text key")
    if key == SITE_TIMEZONE:
        require_zone(value, "the site's time zone")
    if value is None and key in documents.SETTING_DOCUMENTS:
        conn.execute("DELETE FROM settings WHERE key = ?", (key,))
        return
    conn.execute(
        "INSERT INTO settings (key, value) VALUES (?, ?) "
        "ON CONFLICT (key) DO UPDATE SET value = excluded.value",
        (key, _encoded(key, value)),
    )


def _encoded(key: str, value: Any) -> str:
    what = f"setting '{key}'"
    kind = documents.SETTING_DOCUMENTS.get(key)
    return to_json(value, what) if kind is None else documents.written(kind, value, what)
