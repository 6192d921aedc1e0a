"""Checks on opening that a project's small structural values can be read back.

A project file may come from elsewhere and may have been edited with any SQLite tool. The
values every command relies on first are checked when the file is opened, without writing to
it: every setting, each meter's utility, time zone and import settings, the sources' settings
and findings, and the cleaning steps' parameters. Each must decode as :func:`to_json` would
have written it and have the shape this version expects, and no document may be newer than
this version reads (:mod:`engine.project.documents`); the site's and meters' time zones must
be zones this computer knows. Large documents (results, kept modelling) are checked when
they are read. These tables have the same columns in every format version, so the check runs
before an older file is upgraded.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path
from zoneinfo import ZoneInfo

from engine.errors import ProjectError
from engine.meters import UTILITIES
from engine.project import documents, schema
from engine.project.columns import DamagedValue, from_json
from engine.project.settings_table import CREATED_WITH, SITE_TIMEZONE, WRITTEN_WITH, decoded
from engine.project.sqlite_file import damaged

#: The tables checked here (every format version has them, with the same columns).
CHECKED_TABLES = frozenset({"settings", "meters", "sources", "cleaning_steps"})

#: The single-value settings this version writes itself, with the type their value must have
#: (settings holding documents are checked as their kind of document).
SETTING_TYPES: dict[str, type] = {
    SITE_TIMEZONE: str,
    CREATED_WITH: str,
    WRITTEN_WITH: str,
    "created_at": str,
}


def require_readable(conn: sqlite3.Connection, path: Path) -> None:
    """Refuse the file with a :class:`ProjectError` naming the first value that is wrong.

    A file missing one of the tables read here is left to :func:`sqlite_file.require_tables`.
    """
    if not schema.table_names(conn) >= CHECKED_TABLES:
        return
    try:
        _settings(conn, path)
        _meters(conn, path)
        for id_, settings, findings in conn.execute(
            "SELECT id, settings, findings FROM sources ORDER BY id"
        ):
            documents.read("source settings", settings, f"the settings of source file {id_}")
            documents.read("findings", findings, f"the findings of source file {id_}")
        for id_, params in conn.execute("SELECT id, params FROM cleaning_steps ORDER BY id"):
            documents.read("cleaning step", params, f"cleaning step {id_}")
    except DamagedValue as error:
        raise damaged(path, str(error)) from error


def _settings(conn: sqlite3.Connection, path: Path) -> None:
    stored = dict(conn.execute("SELECT key, value FROM settings").fetchall())
    if SITE_TIMEZONE not in stored:
        raise damaged(path, "it has no site time zone")
    for key, text in stored.items():  # a setting of another kind must still be JSON
        decoded(key, text, SETTING_TYPES.get(key))
    _zone(from_json(stored[SITE_TIMEZONE], "site time zone"), "its site time zone", path)


def _meters(conn: sqlite3.Connection, path: Path) -> None:
    for name, utility, timezone, settings in conn.execute(
        "SELECT name, utility, timezone, settings FROM meters ORDER BY id"
    ):
        if utility not in UTILITIES:
            raise damaged(path, f"meter '{name}' has the unknown utility '{utility}'")
        _zone(timezone, f"meter '{name}' has the time zone", path)
        documents.read("meter settings", settings, f"the import settings of meter '{name}'")


def _zone(name: object, what: str, path: Path) -> None:
    """Refuse a stored zone this computer does not know (tampered, or newer zone data)."""
    try:
        ZoneInfo(name)  # type: ignore[arg-type]
    except (KeyError, ValueError, TypeError, OSError) as error:  # not found is a KeyError
        raise ProjectError(
            f"'{path.name}' cannot be used: {what} {str(name)[:60]!r}, which is not a time "
            "zone this computer knows. If the project comes from a computer with newer time "
            "zone data, update the tzdata package; otherwise open a backup copy of the project."
        ) from error
