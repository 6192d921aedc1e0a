"""Budget modelling kept between runs: one JSON document per meter and key.

The key digests everything the document was computed from (see :mod:`engine.steps.kept_models`), so
a lookup by meter and key either finds a document that is still valid or nothing. Only the
newest few documents of each meter are kept.
"""

from __future__ import annotations

import sqlite3

from engine.project import documents
from engine.project.columns import now_seconds


def find_kept(conn: sqlite3.Connection, meter: str, key: str) -> dict | None:
    """The newest document kept for ``meter`` under ``key``, or None."""
    row = conn.execute(
        "SELECT body FROM kept_models WHERE meter = ? AND key = ? ORDER BY id DESC LIMIT 1",
        (meter, key),
    ).fetchone()
    if row is None:
        return None
    return documents.read("kept modelling", row[0], f"kept modelling of meter '{meter}'")


def put_kept(conn: sqlite3.Connection, meter: str, key: str, body: dict, keep: int) -> None:
    """Keep ``body`` for ``meter`` under ``key``; drop all but the newest ``keep`` of the meter."""
    conn.execute(
        "INSERT INTO kept_models (meter, key, created_at, body) VALUES (?, ?, ?, ?)",
        (meter, key, now_seconds(), _written(meter, body)),
    )
    conn.execute(
        "DELETE FROM kept_models WHERE meter = ? AND id NOT IN "
        "(SELECT id FROM kept_models WHERE meter = ? ORDER BY id DESC LIMIT ?)",
        (meter, meter, keep),
    )


def count_kept(conn: sqlite3.Connection, meter: str | None = None) -> int:
    """How many documents are kept (for ``meter`` when given)."""
    if meter is None:
        return int(conn.execute("SELECT COUNT(*) FROM kept_models").fetchone()[0])
    query = "SELECT COUNT(*) FROM kept_models WHERE meter = ?"
    return int(conn.execute(query, (meter,)).fetchone()[0])


def _written(meter: str, body: dict) -> str:
    return documents.written("kept modelling", body, f"the kept models of meter '{meter}'")
