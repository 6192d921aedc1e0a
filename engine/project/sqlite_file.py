"""The project file as an SQLite container: connecting, recognising, creating, reporting damage.

A project is one file at rest: the rollback journal (``journal_mode=DELETE``) exists only while
a save is running, and ``synchronous=FULL`` makes each commit durable before it returns. If a
save is killed, SQLite rolls the leftover journal back the next time the file is opened.
"""

from __future__ import annotations

import contextlib
import glob
import os
import sqlite3
import time
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path

from engine.errors import ProjectError
from engine.project import schema
from engine.project.columns import DamagedValue

#: The first 16 bytes of every SQLite 3 database (sqlite.org "Database File Format", §1.3).
SQLITE_MAGIC = b"SQLite format 3\x00"
BUSY_TIMEOUT_MS = 5_000
#: A building file left unchanged this long, and unlocked, is what a killed build left.
STALE_SECONDS = 60


def connect(path: Path) -> sqlite3.Connection:
    """Open ``path`` with the settings every project connection uses.

    Transactions are explicit (``isolation_level=None``); the connection may be handed between
    threads because :class:`~engine.project.Project` serialises its use with a lock.
    ``trusted_schema=OFF`` keeps a file from someone else from running functions through its
    schema.
    """
    conn = sqlite3.connect(
        path, isolation_level=None, check_same_thread=False, timeout=BUSY_TIMEOUT_MS / 1000
    )
    try:
        for pragma in (
            "journal_mode = DELETE",
            "synchronous = FULL",
            "foreign_keys = ON",
            "trusted_schema = OFF",
        ):
            conn.execute(f"PRAGMA {pragma}").fetchall()
    except sqlite3.Error:
        conn.close()
        raise
    return conn


@contextlib.contextmanager
def reported_as_project_errors(path: Path) -> Iterator[None]:
    """Turn SQLite failures and stored values that cannot be read back into a one-line
    :class:`ProjectError` naming the file and a remedy."""
    try:
        yield
    except sqlite3.Error as error:
        raise ProjectError(_explain(path, error)) from error
    except DamagedValue as error:
        raise damaged(path, str(error)) from error


def damaged(path: Path, what: str) -> ProjectError:
    """The error for a project whose contents were changed outside Loadledger."""
    return ProjectError(
        f"'{path.name}' cannot be used: {what}, so the file was changed outside Loadledger; "
        "open a backup copy of the project instead."
    )


def _explain(path: Path, error: sqlite3.Error) -> str:
    text = str(error)
    name = f"'{path.name}'"
    if "locked" in text or "busy" in text:
        return (
            f"{name} is in use by another Loadledger window or command that is saving to it "
            f"(waited {BUSY_TIMEOUT_MS // 1000} s); try again when it has finished."
        )
    if "malformed" in text or "not a database" in text or "corrupt" in text:
        return f"{name} is damaged ({text}); open a backup copy of the project instead."
    if "full" in text or "I/O" in text:
        return (
            f"Could not write {name} ({text}); free disk space or check the drive and save "
            "again - the last saved state is kept."
        )
    if "readonly" in text or "read-only" in text:
        return f"{name} is read-only; copy it to a folder you can write to and open the copy."
    if "unable to open" in text:
        return f"Cannot open {name} ({text}); check the folder exists and you may write to it."
    return f"Could not use {name} ({text}); the last saved state is kept."


def require_sqlite_file(path: Path) -> None:
    """Refuse paths that are missing, not files, or not SQLite databases at all."""
    if not path.exists():
        raise ProjectError(f"'{path}' does not exist; check the name and folder.")
    if not path.is_file():
        raise ProjectError(f"'{path}' is a folder, not a Loadledger project file.")
    try:
        with path.open("rb") as handle:
            head = handle.read(len(SQLITE_MAGIC))
    except OSError as error:
        raise ProjectError(f"Cannot read '{path.name}' ({error.strerror}).") from error
    if head != SQLITE_MAGIC:
        raise ProjectError(
            f"'{path.name}' is not a Loadledger project (not an SQLite database); "
            "choose a .loadledger file."
        )


def stored_version(conn: sqlite3.Connection, path: Path) -> int:
    """The file's format version after checking it is ours and not newer than this code."""
    (application_id,) = conn.execute("PRAGMA application_id").fetchone()
    (version,) = conn.execute("PRAGMA user_version").fetchone()
    if application_id != schema.APPLICATION_ID:
        raise ProjectError(
            f"'{path.name}' is an SQLite database but not a Loadledger project; "
            "choose a .loadledger file."
        )
    if version > schema.FORMAT_VERSION:
        raise ProjectError(
            f"'{path.name}' was saved by a newer Loadledger (project format {version}; this "
            f"version reads up to format {schema.FORMAT_VERSION}); update Loadledger to open it."
        )
    if version < 1:
        raise ProjectError(
            f"'{path.name}' is damaged (no project format version); open a backup copy instead."
        )
    return version


def require_intact(conn: sqlite3.Connection, path: Path) -> None:
    """Run SQLite's quick check (page structure, records, constraints) over the whole file."""
    problems = [row for (row,) in conn.execute("PRAGMA quick_check").fetchall() if row != "ok"]
    if problems:
        raise ProjectError(
            f"'{path.name}' is damaged ({problems[0]}); open a backup copy of the project instead."
        )


def require_tables(conn: sqlite3.Connection, path: Path) -> None:
    """Make sure every table of the current format is there."""
    missing = schema.TABLES - schema.table_names(conn)
    if missing:
        raise ProjectError(
            f"'{path.name}' is damaged (missing tables: {', '.join(sorted(missing))}); "
            "open a backup copy of the project instead."
        )


def build_file(path: Path, *, overwrite: bool, fill: Callable[[sqlite3.Connection], None]) -> None:
    """Write a new database at ``path`` atomically: build it beside, then rename into place.

    ``fill`` runs inside one transaction on the new file. Until ``os.replace`` the target is
    untouched, so a failure or a kill leaves either the old file or no file, never half a project.
    """
    require_free(path, overwrite=overwrite)
    building = building_path(path)
    try:
        with reported_as_project_errors(path):
            conn = connect(building)
            try:
                conn.execute("BEGIN IMMEDIATE")
                fill(conn)
                conn.execute("COMMIT")
            finally:
                conn.close()
        place_file(building, path, overwrite=overwrite)
    finally:
        remove_building(building)


def require_free(path: Path, *, overwrite: bool) -> None:
    """Refuse to replace an existing file unless ``overwrite``."""
    if path.exists() and not overwrite:
        raise ProjectError(
            f"'{path.name}' already exists; choose another name or allow replacing it."
        )


def building_path(path: Path) -> Path:
    """A fresh name beside ``path`` to build its replacement under, after removing what builds
    of ``path`` that were killed left there (see :func:`_remove_stale_buildings`)."""
    _remove_stale_buildings(path)
    return path.with_name(f".{path.stem}.{uuid.uuid4().hex}.building{path.suffix}")


def _remove_stale_buildings(path: Path) -> None:
    """Delete earlier building files of ``path`` that no one is writing.

    A build that was killed leaves its file (and journal) behind under a hidden name. One is
    stale when it has not changed for :data:`STALE_SECONDS` and no connection holds a write
    lock on it; a build still running holds the lock while it saves and touches the file
    when it commits.
    """
    pattern = f".{glob.escape(path.stem)}.{'[0-9a-f]' * 32}.building{glob.escape(path.suffix)}"
    for found in path.parent.glob(pattern):
        with contextlib.suppress(OSError):
            if time.time() - found.stat().st_mtime > STALE_SECONDS and not _locked(found):
                remove_building(found)


def _locked(path: Path) -> bool:
    """Whether ``path`` may be in use: the write lock cannot be had at once (or not at all)."""
    conn = sqlite3.connect(path, isolation_level=None, timeout=0)
    try:
        conn.execute("BEGIN IMMEDIATE")
        conn.execute("ROLLBACK")
        return False
    except sqlite3.Error:
        return True
    finally:
        conn.close()


def place_file(building: Path, path: Path, *, overwrite: bool) -> None:
    """Rename the complete database ``building`` over ``path`` in one step."""
    try:
        if path.exists() and not overwrite:
            raise ProjectError(
                f"'{path.name}' appeared while it was being created; choose another name."
            )
        _settle_journal(path)
        os.replace(building, path)
        _sync_folder(path.parent)
    except OSError as error:
        raise ProjectError(
            f"Cannot create '{path.name}' ({error.strerror}); check the folder exists and you "
            "may write to it."
        ) from error


def remove_building(building: Path) -> None:
    """Delete what is left of a file that was being built (nothing once it was placed)."""
    for leftover in (building, Path(f"{building}-journal")):
        leftover.unlink(missing_ok=True)


def _settle_journal(path: Path) -> None:
    """Before replacing ``path``, let SQLite finish with any journal left beside it.

    A journal left by a killed save belongs to the old file; lying beside the new file it would
    be "rolled back" into it. Opening the old file rolls it back properly; what remains is
    removed.
    """
    journal = Path(f"{path}-journal")
    if not journal.exists():
        return
    with contextlib.suppress(sqlite3.Error):
        conn = sqlite3.connect(path, isolation_level=None)
        try:
            conn.execute("PRAGMA schema_version").fetchall()
        finally:
            conn.close()
    journal.unlink(missing_ok=True)


def _sync_folder(folder: Path) -> None:
    """Make the rename durable (POSIX); Windows has no directory handles to flush."""
    if os.name == "nt":
        return
    handle = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(handle)
    finally:
        os.close(handle)
