"""Adopted budgets: one JSON document per name, written once and never edited.

A budget adopted under a name keeps everything it assumed (see :mod:`engine.steps.adopting`);
later imports, cleaning and refits never touch this table. A name is adopted again only when
the caller asks to replace it, which swaps the whole row in one statement.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

from engine.errors import InputError
from engine.project import documents
from engine.project.columns import iso_utc, now_seconds


def name_taken(name: str, path: Path) -> InputError:
    """What adopting a second budget under ``name`` without replacing says."""
    return InputError(
        f"a budget is already adopted as '{name}'.",
        hint="Choose another name, or give --replace to adopt this one in its place.",
        file=path,
    )


def put_adopted(conn: sqlite3.Connection, name: str, body: dict, *, replace: bool) -> None:
    """Store ``body`` under ``name``; an existing name is replaced only when ``replace``.

    Raises ``sqlite3.IntegrityError`` for an existing name without ``replace`` (the caller
    checks first and says so in words).
    """
    text = documents.written("adopted budget", body, f"the adopted budget '{name}'")
    verb = "INSERT OR REPLACE" if replace else "INSERT"
    conn.execute(
        f"{verb} INTO adopted_budgets (name, adopted_at, body) VALUES (?, ?, ?)",
        (name, now_seconds(), text),
    )


def find_adopted(conn: sqlite3.Connection, name: str) -> dict | None:
    """The adopted budget called ``name`` with when it was adopted, or None."""
    row = conn.execute(
        "SELECT adopted_at, body FROM adopted_budgets WHERE name = ?", (name,)
    ).fetchone()
    if row is None:
        return None
    body = documents.read("adopted budget", row[1], f"adopted budget '{name}'")
    return {"name": name, "adopted_at": iso_utc(row[0]), "body": body}


def adopted_names(conn: sqlite3.Connection) -> list[str]:
    """Names of the adopted budgets, in the order they were adopted."""
    return [name for (name,) in conn.execute("SELECT name FROM adopted_budgets ORDER BY id")]
