"""Upgrading project files written by older versions of Loadledger.

:data:`MIGRATIONS` maps a format version to the function that turns a file of that version into
the next one. Opening an older file runs every step it needs inside one transaction, so a file is
either fully upgraded or left exactly as it was. Each step receives the open connection, must not
commit, and should only use SQL (no reading back through the current code, which knows only the
newest format). Keep a file of every released format under ``tests/fixtures/projects/``.
"""

from __future__ import annotations

import json
import logging
import sqlite3
from collections.abc import Callable, Mapping
from pathlib import Path

from engine.errors import ProjectError
from engine.project import schema

Migration = Callable[[sqlite3.Connection], None]


def _add_results_table(conn: sqlite3.Connection) -> None:
    """Format 1 → 2: a table for fitted models, backtests and budget runs."""
    for statement in schema.SCHEMA_V2_ADDITIONS:
        conn.execute(statement)


def _add_kept_models_table(conn: sqlite3.Connection) -> None:
    """Format 2 → 3: a table for the budget modelling kept between runs."""
    for statement in schema.SCHEMA_V3_ADDITIONS:
        conn.execute(statement)


def _add_adopted_budgets_table(conn: sqlite3.Connection) -> None:
    """Format 3 → 4: a table for budgets adopted under a name."""
    for statement in schema.SCHEMA_V4_ADDITIONS:
        conn.execute(statement)


#: The JSON documents format 5 keeps in envelopes: (table, JSON column, the rows, kind). As
#: format 5 defined them; a later kind of document arrives in an envelope already.
_FORMAT_5_DOCUMENTS: tuple[tuple[str, str, str, str], ...] = (
    ("settings", "value", "key = 'calendar'", "calendar"),
    ("settings", "value", "key = 'meter_labels'", "meter labels"),
    ("settings", "value", "key = 'accounts.meter_account'", "meter accounts"),
    ("settings", "value", "key = 'window.budget_form'", "budget form"),
    ("sources", "settings", "1", "source settings"),
    ("sources", "findings", "1", "findings"),
    ("meters", "settings", "1", "meter settings"),
    ("cleaning_steps", "params", "1", "cleaning step"),
    ("results", "body", "kind = 'model'", "model result"),
    ("results", "body", "kind = 'backtest'", "backtest"),
    ("results", "body", "kind = 'budget'", "budget run"),
    ("kept_models", "body", "1", "kept modelling"),
    ("adopted_budgets", "body", "1", "adopted budget"),
)


def _wrap_documents(conn: sqlite3.Connection) -> None:
    """Format 4 → 5: each JSON document into an envelope naming its kind, as version 1 (the
    only version before envelopes); the document's own text is kept byte for byte."""
    for table, column, rows, kind in _FORMAT_5_DOCUMENTS:
        opening = f'{{"document": {json.dumps(kind)}, "version": 1, "body": '
        conn.execute(
            f"UPDATE {table} SET {column} = ? || {column} || '}}' WHERE {rows}", (opening,)
        )


#: ``{from_version: step}``; each step upgrades a file from ``from_version`` to the next.
MIGRATIONS: dict[int, Migration] = {
    1: _add_results_table,
    2: _add_kept_models_table,
    3: _add_adopted_budgets_table,
    4: _wrap_documents,
}

log = logging.getLogger(__name__)


def upgrade(
    conn: sqlite3.Connection,
    path: Path,
    found: int,
    *,
    target: int | None = None,
    registry: Mapping[int, Migration] | None = None,
) -> str | None:
    """Bring a file from format ``found`` up to ``target`` in one transaction.

    Parameters
    ----------
    conn
        An open connection with no transaction running.
    path
        The file, for messages.
    found
        The format version stored in the file.
    target, registry
        Default to :data:`schema.FORMAT_VERSION` and :data:`MIGRATIONS` (looked up at call time).

    Returns
    -------
    A one-line note saying what was upgraded, or None when the file was already current.
    """
    target = schema.FORMAT_VERSION if target is None else target
    registry = MIGRATIONS if registry is None else registry
    if found >= target:
        return None
    missing = [version for version in range(found, target) if version not in registry]
    if missing:
        raise ProjectError(
            f"'{path.name}' uses project format {found}, which this version cannot upgrade "
            f"(no step from format {missing[0]}); open it with the Loadledger that saved it."
        )
    # Table rebuilds need foreign keys off; the whole result is checked before the commit.
    conn.execute("PRAGMA foreign_keys = OFF")
    try:
        conn.execute("BEGIN IMMEDIATE")
        try:
            for version in range(found, target):
                registry[version](conn)
                conn.execute(f"PRAGMA user_version = {version + 1}")
            broken = conn.execute("PRAGMA foreign_key_check").fetchall()
            if broken:
                raise ProjectError(
                    f"Upgrading '{path.name}' would break links in table '{broken[0][0]}'; "
                    "the file was left unchanged. Please report this with the file."
                )
            conn.execute("COMMIT")
        except BaseException as error:
            conn.execute("ROLLBACK")
            if isinstance(error, sqlite3.Error):
                raise ProjectError(
                    f"Upgrading '{path.name}' from project format {found} failed ({error}); "
                    "the file was left unchanged. Please report this with the file."
                ) from error
            raise
    finally:
        conn.execute("PRAGMA foreign_keys = ON")
    note = f"Upgraded '{path.name}' from project format {found} to {target}."
    log.info(note)
    return note
