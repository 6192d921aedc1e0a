"""Results of analyses kept in the project: fitted models, backtests and budget runs.

Each result is a JSON document with a kind, an optional meter, a label and the time it was
made. Results are only added or removed, never edited, so an old budget stays as it was run.
"""

from __future__ import annotations

import sqlite3

from engine.project import documents
from engine.project.columns import iso_utc, now_seconds

RESULT_KINDS = ("model", "backtest", "budget")


def add_result(
    conn: sqlite3.Connection, kind: str, meter: str | None, label: str, body: dict
) -> int:
    if kind not in RESULT_KINDS:
        raise ValueError(f"result kind must be one of {RESULT_KINDS}, not {kind!r}")
    cursor = conn.execute(
        "INSERT INTO results (kind, meter, label, created_at, body) VALUES (?, ?, ?, ?, ?)",
        (kind, meter, label, now_seconds(), _written(kind, body)),
    )
    return int(cursor.lastrowid)


def _written(kind: str, body: dict) -> str:
    return documents.written(documents.RESULT_DOCUMENTS[kind], body, f"the {kind} result")


def list_results(
    conn: sqlite3.Connection, kind: str, meter: str | None = None, last_only: bool = False
) -> list[dict]:
    """Results of ``kind`` (for ``meter`` when given), oldest first, bodies included; only
    the newest when ``last_only`` (so the older documents are not read)."""
    query = "SELECT id, kind, meter, label, created_at, body FROM results WHERE kind = ?"
    args: tuple = (kind,)
    if meter is not None:
        query += " AND meter = ?"
        args += (meter,)
    order = " ORDER BY id DESC LIMIT 1" if last_only else " ORDER BY id"
    rows = conn.execute(query + order, args).fetchall()
    return [
        {
            "id": rid,
            "kind": k,
            "meter": m,
            "label": label,
            "created_at": iso_utc(created),
            "body": documents.read(documents.RESULT_DOCUMENTS[k], body, f"{k} result {rid}"),
        }
        for rid, k, m, label, created, body in rows
    ]


def count_results(conn: sqlite3.Connection, kind: str) -> dict[str | None, int]:
    """How many results of ``kind`` each meter has (None: results of no single meter)."""
    rows = conn.execute(
        "SELECT meter, COUNT(*) FROM results WHERE kind = ? GROUP BY meter", (kind,)
    ).fetchall()
    return {meter: int(count) for meter, count in rows}


def remove_result(conn: sqlite3.Connection, result_id: int) -> None:
    conn.execute("DELETE FROM results WHERE id = ?", (result_id,))


#: The columns of a stored result, in the order :func:`take_result` gives them.
ROW_COLUMNS = ("id", "kind", "meter", "label", "created_at", "body")


def stored_row(conn: sqlite3.Connection, result_id: int) -> tuple:
    """A result exactly as stored (:data:`ROW_COLUMNS`), body as JSON text."""
    row = conn.execute(
        f"SELECT {', '.join(ROW_COLUMNS)} FROM results WHERE id = ?", (result_id,)
    ).fetchone()
    if row is None:
        raise KeyError(f"no result with id {result_id}")
    return tuple(row)


def take_result(conn: sqlite3.Connection, result_id: int) -> tuple:
    """Remove a result and give it back as stored (:data:`ROW_COLUMNS`), to put back later."""
    row = stored_row(conn, result_id)
    conn.execute("DELETE FROM results WHERE id = ?", (result_id,))
    return row


def put_back_result(conn: sqlite3.Connection, row: tuple) -> None:
    """Store a result taken with :func:`take_result` again, under its own id."""
    if len(row) != len(ROW_COLUMNS) or row[1] not in RESULT_KINDS:
        raise ValueError(f"a stored result is {ROW_COLUMNS}, got {row!r}")
    conn.execute(
        f"INSERT INTO results ({', '.join(ROW_COLUMNS)}) VALUES ({', '.join('?' * len(row))})",
        row,
    )
