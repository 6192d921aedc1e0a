"""Fast bulk inserts: numpy columns become plain Python lists, written in chunks."""

from __future__ import annotations

import sqlite3
from collections.abc import Sequence

import numpy as np

from engine.progress import Progress, step

CHUNK_ROWS = 200_000


def insert_columns(
    conn: sqlite3.Connection,
    sql: str,
    columns: Sequence[np.ndarray],
    progress: Progress | None = None,
    message: str = "",
) -> None:
    """Run ``sql`` once per row of ``columns`` (equal-length arrays), reporting progress.

    ``ndarray.tolist()`` yields Python ints and floats, which sqlite3 binds fastest; NaN binds
    as NULL. Cancelling raises inside the caller's transaction, which then rolls back.
    """
    total = len(columns[0]) if columns else 0
    for start in range(0, total, CHUNK_ROWS):
        chunk = [column[start : start + CHUNK_ROWS].tolist() for column in columns]
        conn.executemany(sql, zip(*chunk, strict=True))
        step(progress, min(start + CHUNK_ROWS, total) / total, message)
