"""The cleaning log: ordered, reversible steps applied on top of the stored readings.

A step is a plain dict ``{"kind", "meter", "params", "note"}``; the log adds ``id``, ``active``
and ``created_at`` when it hands steps back. Order is one sequence over the whole project, so a
meter's steps keep their order relative to each other and to project-wide steps (meter None).
"""

from __future__ import annotations

import sqlite3

from engine.project import documents
from engine.project.columns import iso_utc, now_seconds

STEP_KEYS = frozenset({"kind", "meter", "params", "note"})


def add_step(conn: sqlite3.Connection, step: dict) -> int:
    """Append ``step`` to the end of the log and return its id."""
    unknown = set(step) - STEP_KEYS
    if unknown or not {"kind", "meter", "params"} <= set(step):
        raise ValueError(
            f"a cleaning step has the keys {sorted(STEP_KEYS)} ('note' optional), "
            f"got {sorted(step)}"
        )
    kind, meter, params = step["kind"], step["meter"], step["params"]
    note = step.get("note", "")
    if not (isinstance(kind, str) and kind and isinstance(params, dict)):
        raise ValueError("a cleaning step needs a text 'kind' and a dict of 'params'")
    if not (meter is None or isinstance(meter, str)) or not isinstance(note, str):
        raise ValueError("a cleaning step's 'meter' is text or None and its 'note' is text")
    (position,) = conn.execute(
        "SELECT coalesce(max(position), -1) + 1 FROM cleaning_steps"
    ).fetchone()
    cursor = conn.execute(
        "INSERT INTO cleaning_steps (meter, position, kind, params, note, created_at, active) "
        "VALUES (?, ?, ?, ?, ?, ?, 1)",
        (
            meter,
            position,
            kind,
            documents.written("cleaning step", params, f"step '{kind}'"),
            note,
            now_seconds(),
        ),
    )
    return int(cursor.lastrowid)


def list_steps(
    conn: sqlite3.Connection, meter: str | None = None, active_only: bool = True
) -> list[dict]:
    """Steps in the order they apply: all of them, or those of one meter."""
    conditions = ["1"]
    params: list = []
    if meter is not None:
        conditions.append("meter = ?")
        params.append(meter)
    if active_only:
        conditions.append("active = 1")
    rows = conn.execute(
        "SELECT id, kind, meter, params, note, active, created_at FROM cleaning_steps "
        f"WHERE {' AND '.join(conditions)} ORDER BY position",
        params,
    ).fetchall()
    return [
        {
            "id": id_,
            "kind": kind,
            "meter": meter_name,
            "params": documents.read("cleaning step", step_params, f"cleaning step {id_}"),
            "note": note,
            "active": bool(active),
            "created_at": iso_utc(created_at),
        }
        for id_, kind, meter_name, step_params, note, active, created_at in rows
    ]


def set_active(conn: sqlite3.Connection, step_id: int, active: bool) -> None:
    """Switch a step off (undo) or on again (redo) without losing it."""
    _require_step(conn, step_id)
    conn.execute("UPDATE cleaning_steps SET active = ? WHERE id = ?", (int(bool(active)), step_id))


def remove_step(conn: sqlite3.Connection, step_id: int) -> None:
    """Delete a step for good."""
    _require_step(conn, step_id)
    conn.execute("DELETE FROM cleaning_steps WHERE id = ?", (step_id,))


def move_step(conn: sqlite3.Connection, step_id: int, index: int) -> None:
    """Move a step to place ``index`` (0-based) among the steps of its own meter.

    The meter's steps swap positions only among themselves, so steps of other meters keep their
    places in the project-wide order.
    """
    meter = _require_step(conn, step_id)
    rows = conn.execute(
        "SELECT id, position FROM cleaning_steps WHERE meter IS ? ORDER BY position", (meter,)
    ).fetchall()
    ids = [row_id for row_id, _ in rows]
    if not 0 <= index < len(ids):
        raise IndexError(f"step index {index} is outside 0..{len(ids) - 1}")
    ids.remove(step_id)
    ids.insert(index, step_id)
    conn.executemany(
        "UPDATE cleaning_steps SET position = ? WHERE id = ?",
        [(position, row_id) for row_id, (_, position) in zip(ids, rows, strict=True)],
    )


def _require_step(conn: sqlite3.Connection, step_id: int) -> str | None:
    """The step's meter; refuse an id that is not in the log."""
    row = conn.execute("SELECT meter FROM cleaning_steps WHERE id = ?", (step_id,)).fetchone()
    if row is None:
        raise KeyError(f"no cleaning step with id {step_id}")
    return row[0]


#: The columns of a stored step, in the order :func:`stored_rows` gives and :func:`put_rows` takes.
ROW_COLUMNS = ("id", "meter", "position", "kind", "params", "note", "created_at", "active")


def stored_rows(conn: sqlite3.Connection) -> dict[int, tuple]:
    """Every step as stored (active or not), by id: the values of :data:`ROW_COLUMNS`."""
    rows = conn.execute(f"SELECT {', '.join(ROW_COLUMNS)} FROM cleaning_steps").fetchall()
    return {int(row[0]): tuple(row) for row in rows}


def put_rows(conn: sqlite3.Connection, rows: dict[int, tuple | None]) -> None:
    """Make each step of ``rows`` as given (same id, place and time), or absent for None: how
    a change to the log is taken back or made again."""
    for step_id, row in rows.items():
        conn.execute("DELETE FROM cleaning_steps WHERE id = ?", (step_id,))
        if row is not None:
            if len(row) != len(ROW_COLUMNS) or row[0] != step_id:
                raise ValueError(f"a stored step is {ROW_COLUMNS}, got {row!r}")
            conn.execute(
                f"INSERT INTO cleaning_steps ({', '.join(ROW_COLUMNS)}) "
                f"VALUES ({', '.join('?' * len(ROW_COLUMNS))})",
                row,
            )
