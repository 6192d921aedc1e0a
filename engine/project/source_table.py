"""The files data came from: kind, name, fingerprint, import settings and findings."""

from __future__ import annotations

import hashlib
import sqlite3
from pathlib import Path

from engine.errors import InputError
from engine.project import documents
from engine.project.columns import iso_utc, now_seconds
from engine.project.schema import SOURCE_KINDS


def add_source(
    conn: sqlite3.Connection, kind: str, file: str | Path, settings: dict, findings: list[dict]
) -> int:
    """Record an imported file with its SHA-256 and return the new source id."""
    if kind not in SOURCE_KINDS:
        raise ValueError(f"unknown source kind {kind!r}; expected one of {SOURCE_KINDS}")
    if not isinstance(settings, dict):
        raise ValueError("source settings must be a dict")
    if not isinstance(findings, list) or not all(isinstance(f, dict) for f in findings):
        raise ValueError("source findings must be a list of dicts")
    path = Path(file)
    try:
        with path.open("rb") as handle:
            digest = hashlib.file_digest(handle, "sha256").hexdigest()
        size = path.stat().st_size
    except OSError as error:
        raise InputError(
            f"cannot read the file to record its fingerprint ({error.strerror}).",
            hint="Check that the file still exists and can be opened, then import it again.",
            file=path,
        ) from error
    cursor = conn.execute(
        "INSERT INTO sources (kind, file_name, file_path, size_bytes, sha256, settings, "
        "findings, imported_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
        (
            kind,
            path.name,
            str(path),
            size,
            digest,
            documents.written("source settings", settings, f"settings of source '{path.name}'"),
            documents.written("findings", findings, f"findings of source '{path.name}'"),
            now_seconds(),
        ),
    )
    return int(cursor.lastrowid)


def require_source(conn: sqlite3.Connection, source_id: int) -> None:
    """Refuse a source id that was never added."""
    if conn.execute("SELECT 1 FROM sources WHERE id = ?", (source_id,)).fetchone() is None:
        raise ValueError(f"no source with id {source_id}; add the file with add_source first")


def list_sources(conn: sqlite3.Connection) -> list[dict]:
    """Every source in the order it was added, JSON-ready."""
    rows = conn.execute(
        "SELECT id, kind, file_name, file_path, size_bytes, sha256, settings, findings, "
        "imported_at FROM sources ORDER BY id"
    ).fetchall()
    return [
        {
            "id": id_,
            "kind": kind,
            "file_name": name,
            "file_path": file_path,
            "size_bytes": size,
            "sha256": sha,
            "settings": documents.read(
                "source settings", settings, f"the settings of source file {id_}"
            ),
            "findings": documents.read("findings", findings, f"the findings of source file {id_}"),
            "imported_at": iso_utc(imported_at),
        }
        for id_, kind, name, file_path, size, sha, settings, findings, imported_at in rows
    ]
