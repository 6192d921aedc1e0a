"""Upgrading project files written by older versions of Loadledger.

:data:`MIGRATIONS` maps a format version to the function that turns a file of that version into
the next one. Opening an older file runs every step it needs inside one transaction, so a file is
either fully upgraded or left exactly as it was. Each step receives the open connection, must not
commit, and should only use SQL (no reading back through the current code, which knows only the
newest format). Keep a file of every released format under ``tests/fixtures/projects/``.
"""

from __future__ import annotations

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


#: ``{from_version: step}``; each step upgrades a file from ``from_version`` to the next.
MIGRATIONS: dict[int, Migration] = {
    1: _add_results_table,
    2: _add_kept_models_table,
    3: _add_adopted_budgets_table,
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
