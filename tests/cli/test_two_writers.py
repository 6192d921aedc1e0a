"""Two writers on one project: the second waits for the first (up to the busy timeout) or
stops with one clear "in use" line and exit 2; no "database is locked" traceback, and the
cleaning log holds every step once.

The project is the sample campus's electricity export (invented; its generator plants the
faults the recommended fixes answer).
"""

from __future__ import annotations

import contextlib
import hashlib
import shutil
import sqlite3
import subprocess
from pathlib import Path

import pytest

from engine.project import Project
from tests.cli.cli_support import loadledger
from tests.kills import COMMAND

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "sample" / "data"


@pytest.fixture(scope="module")
def imported(tmp_path_factory) -> Path:
    project = tmp_path_factory.mktemp("writers") / "campus.loadledger"
    loadledger("new", project, "--timezone", "America/Chicago",
               "--meters", DATA / "electricity-15min.xlsx")  # fmt: skip
    return project


def _log(path: Path) -> list[tuple]:
    """Each logged step as (meter, kind, parameters, active)."""
    with Project.open(path) as project:
        return sorted(
            (s["meter"], s["kind"], repr(s["params"]), s["active"])
            for s in project.cleaning_steps(active_only=False)
        )


def _finished(process: subprocess.Popen) -> tuple[int, str]:
    _, stderr = process.communicate(timeout=600)
    return process.returncode, stderr


def _one_clear_line(stderr: str) -> None:
    assert "Traceback" not in stderr and "internal error" not in stderr
    assert stderr.count("\n") == 1 and "is in use by another Loadledger" in stderr, stderr


def test_two_cleans_at_once_log_each_step_once(imported, tmp_path):
    alone = tmp_path / "alone.loadledger"
    shutil.copyfile(imported, alone)
    loadledger("clean", alone, "--apply-recommended")
    expected = _log(alone)
    assert expected and len(set(expected)) == len(expected)

    shared = tmp_path / "shared.loadledger"
    shutil.copyfile(imported, shared)
    both = [
        subprocess.Popen([*COMMAND, "clean", str(shared), "--apply-recommended"],
                         stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        for _ in range(2)
    ]  # fmt: skip
    outcomes = [_finished(p) for p in both]
    assert sorted(code for code, _ in outcomes)[0] == 0, outcomes  # one of them saved
    for code, stderr in outcomes:
        assert code in (0, 2), stderr
        if code == 2:
            _one_clear_line(stderr)
    assert _log(shared) == expected  # nothing lost, nothing twice


def test_a_writer_holding_the_project_gets_a_clear_message_and_no_change(imported, tmp_path):
    """This test process holds a write transaction open (as a long save in the window would)
    while the command line tries to save: after the busy timeout it stops with exit 2."""
    held = tmp_path / "held.loadledger"
    shutil.copyfile(imported, held)
    with contextlib.closing(sqlite3.connect(held, isolation_level=None)) as conn:
        conn.execute("BEGIN IMMEDIATE")
        done = loadledger("clean", held, "--apply-recommended", expect=2)
        conn.execute("ROLLBACK")
    _one_clear_line(done.stderr)
    digest = hashlib.sha256(imported.read_bytes()).hexdigest()
    assert hashlib.sha256(held.read_bytes()).hexdigest() == digest
