"""Meters modelled side by side: in worker processes and on a Dask cluster (a LocalCluster on
the loopback address), with the same numbers as one after another, failures reported per
meter, and a clear error for a scheduler that cannot be reached."""

from __future__ import annotations

import shutil
import sqlite3
import sys
import threading
import time
from dataclasses import dataclass
from pathlib import Path

import pytest
from worker_probe import ProbeJob, modelling_code_imported

from engine.errors import InputError
from engine.parallel import run_per_meter, start_workers_early
from engine.progress import Cancelled, Progress
from engine.project import Project
from engine.steps.budgeting import budget_project, budget_request


@dataclass(frozen=True)
class Job:
    name: str
    value: float
    size: int = 1


def halve_or_refuse(job: Job, progress: Progress | None = None) -> float:
    """Module level, so worker processes can import it."""
    if job.value > 100:
        time.sleep(job.value)
    if job.value < 0:
        raise InputError(f"meter '{job.name}' has a negative reading.", hint="Fix it.")
    if job.value == 0:
        raise ZeroDivisionError("division by zero")
    return job.value / 2


JOBS = [Job("north", 4.0), Job("south", -1.0), Job("east", 6.0), Job("west", 0.0)]


def test_small_jobs_stay_in_this_process_unless_workers_are_asked_for():
    seen = []
    progress = Progress(lambda fraction, message: seen.append(message))
    run_per_meter(halve_or_refuse, JOBS[:1] * 2, progress=progress)
    assert not any("worker processes" in message for message in seen)
    big = [Job(job.name, job.value, size=10**6) for job in JOBS[:1] * 2]
    run_per_meter(halve_or_refuse, big, progress=progress)
    assert any("worker processes" in message for message in seen)


@pytest.mark.parametrize("workers", [1, 2])
def test_a_failing_meter_is_reported_and_the_others_come_back(workers):
    messages = []
    progress = Progress(lambda fraction, message: messages.append(message))
    results, failures = run_per_meter(halve_or_refuse, JOBS, workers=workers, progress=progress)
    assert results == {"north": 2.0, "east": 3.0}
    by_name = {failure.name: failure for failure in failures}
    assert set(by_name) == {"south", "west"}
    assert by_name["south"].user_error and "negative reading" in by_name["south"].reason
    assert not by_name["west"].user_error and "ZeroDivisionError" in by_name["west"].reason
    if workers > 1:  # the caller hears of each meter as it is done, with the count
        assert any("(4 of 4)" in message for message in messages)


def test_cancel_stops_the_wait_at_once_and_ends_the_workers():
    progress = Progress()
    threading.Timer(1.0, progress.cancel).start()
    started = time.perf_counter()
    with pytest.raises(Cancelled):
        run_per_meter(halve_or_refuse, [Job("slow", 600.0), Job("slower", 900.0)],
                      workers=2, progress=progress)  # fmt: skip
    assert time.perf_counter() - started < 30


def _campus_totals(path: Path, **where) -> list[dict]:
    with Project.open(path) as project:
        request = budget_request(project, ["2026-01"], paths=100)
        run = budget_project(project, request, **where).run.to_json()
    return [meter["total"] for meter in run["meters"]] + [run["campus"]["total"]]


def test_worker_processes_and_a_dask_cluster_give_the_serial_numbers(fitted_site, tmp_path):
    from distributed import LocalCluster

    copies = {}
    for where in ("serial", "processes", "cluster"):
        copies[where] = tmp_path / f"{where}.loadledger"
        shutil.copyfile(fitted_site, copies[where])
        with sqlite3.connect(copies[where]) as conn:  # the refits the fit kept: made again
            conn.execute("DELETE FROM kept_models")
    serial = _campus_totals(copies["serial"], workers=1)
    assert _campus_totals(copies["processes"], workers=2) == serial
    with LocalCluster(
        n_workers=2, threads_per_worker=1, host="127.0.0.1", dashboard_address=None
    ) as cluster:
        assert _campus_totals(copies["cluster"], scheduler=cluster.scheduler_address) == serial


def test_a_scheduler_that_cannot_be_reached_is_a_clear_error(new_site, tmp_path):
    # A project with meters to model (nothing kept yet), so the cluster is needed.
    path = tmp_path / "new.loadledger"
    shutil.copyfile(new_site, path)
    with Project.open(path) as project:
        request = budget_request(project, ["2026-01"], paths=100)
        with pytest.raises(InputError, match="cannot be reached"):
            budget_project(project, request, scheduler="tcp://127.0.0.1:9")


@pytest.mark.skipif(sys.platform == "win32", reason="workers are spawned there, not forked")
def test_workers_start_with_the_modelling_code_imported():
    """The window and the command line start the workers' server early; workers forked from
    it have the fit wizard imported before their first meter (the job imports none of it)."""
    start_workers_early()
    jobs = [ProbeJob("north"), ProbeJob("south")]
    results, failures = run_per_meter(modelling_code_imported, jobs, workers=2)
    assert failures == []
    assert results == {"north": True, "south": True}
