"""What a killed `new` leaves beside the project (its building file under a hidden name) is
removed by the next build of the same project, unless it is recent or still being written."""

from __future__ import annotations

import contextlib
import os
import shutil
import sqlite3
import time
import uuid
from pathlib import Path

from engine.project import Project
from engine.project.sqlite_file import STALE_SECONDS


def _left_beside(project: Path, age_seconds: float) -> Path:
    """A copy of ``project`` under a building name, last changed ``age_seconds`` ago."""
    left = project.with_name(f".{project.stem}.{uuid.uuid4().hex}.building{project.suffix}")
    shutil.copyfile(project, left)
    then = time.time() - age_seconds
    os.utime(left, (then, then))
    return left


def test_a_new_build_removes_stale_building_files_only(tmp_path):
    project = tmp_path / "site.loadledger"
    Project.create(project, timezone="UTC").close()
    stale = _left_beside(project, 2 * STALE_SECONDS)
    recent = _left_beside(project, 1)
    busy = _left_beside(project, 2 * STALE_SECONDS)
    other = tmp_path / f".other.{uuid.uuid4().hex}.building.loadledger"
    shutil.copyfile(stale, other)
    os.utime(other, (0, 0))
    with contextlib.closing(sqlite3.connect(busy, isolation_level=None)) as writer:
        writer.execute("BEGIN IMMEDIATE")  # a build that is still saving
        Project.create(project, timezone="UTC", overwrite=True).close()
        writer.execute("ROLLBACK")
    assert not stale.exists()
    assert recent.exists() and busy.exists() and other.exists()
