"""Run one function per meter: in this process, in local worker processes, or on a cluster.

Meters are independent until their budgets are summed, so their modelling runs side by side:
by default in worker processes, one per core (``concurrent.futures``); given the address of a
Dask ``distributed`` scheduler, on its workers (``Client.get_executor``), for sites with more
meters than one machine can model in time. The function must be a module-level function of
one picklable argument (the job) whose ``name`` names the meter.

Progress names the meter just finished, counts meters done and estimates the time left from
the pace so far. Cancelling stops waiting at once and ends the local worker processes. A meter
whose work fails is reported with its reason (:class:`MeterFailure`); the others' results
still come back.
"""

from __future__ import annotations

import multiprocessing
import os
import sys
import time
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Executor, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from multiprocessing import forkserver
from typing import Any, Protocol, TypeVar

from engine.errors import InputError
from engine.progress import Cancelled, Progress, step

#: Intervals of history (summed over the meters) below which worker processes are not worth
#: their start-up of a few seconds: about five meter-years of hourly readings.
MIN_POOL_WORK = 45_000
#: Seconds to wait for a Dask scheduler to answer before giving up.
CONNECT_SECONDS = 10
#: How local worker processes start: forked from a server process, or spawned (Windows).
_CONTEXT = "spawn" if os.name == "nt" else "forkserver"
#: What the server imports before forking workers (:func:`start_workers_early`).
WORKER_MODULES = ("engine.wizard",)
#: How often the caller's cancel flag is looked at while meters run (seconds).
_POLL_SECONDS = 0.2


class Named(Protocol):
    """A job: the meter it is for, and its size in intervals of history."""

    name: str
    size: int


Job = TypeVar("Job", bound=Named)


@dataclass(frozen=True)
class MeterFailure:
    """A meter whose work failed: the reason, and whether it is the user's to fix."""

    name: str
    reason: str
    user_error: bool

    def error(self) -> Exception:
        """The error to raise for it: the user's to fix, or an internal one."""
        message = f"meter '{self.name}' could not be modelled: {self.reason}"
        if not self.user_error:
            return RuntimeError(message)
        return InputError(
            message,
            hint="Check the meter's readings and cleaning, or leave it out with --meter.",
        )


def start_workers_early() -> None:
    """Start the server that local worker processes are forked from, and let it import the
    modelling code now, in the background.

    Each worker otherwise imports it itself when its first meter arrives (about 1.6 s on a
    2-core laptop, before any meter is modelled); forked from a server that has, it starts at
    once. The window calls this when it opens, the command line when a command will model
    meters. Where workers are spawned instead (Windows), there is no server and nothing to do.
    """
    if _CONTEXT != "forkserver":
        return
    forkserver.set_forkserver_preload(list(WORKER_MODULES))
    forkserver.ensure_running()


def default_workers() -> int:
    """The cores this process may use."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def run_per_meter(
    function: Callable[..., Any],
    jobs: Sequence[Job],
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    progress: Progress | None = None,
) -> tuple[dict[str, Any], list[MeterFailure]]:
    """``function(job)`` for every job; results by meter name, and the meters that failed.

    Parameters
    ----------
    function : callable
        A module-level function of a job (and, when run here, ``progress=``).
    jobs : sequence
        One per meter, each with a ``name``.
    workers : int, optional
        Local worker processes; 1 runs the jobs in this process, with progress inside each
        meter. By default every core, unless the jobs are too small together
        (:data:`MIN_POOL_WORK`) to repay starting the processes: then this process.
    scheduler : str, optional
        Address of a Dask distributed scheduler (``tcp://host:8786``); its workers run the
        jobs instead of local processes.
    progress : Progress, optional
        Stepped per meter; cancelling raises ``Cancelled``.
    """
    if not jobs:
        return {}, []
    if workers is None:
        small = sum(job.size for job in jobs) < MIN_POOL_WORK
        count = 1 if small else default_workers()
    else:
        count = max(int(workers), 1)
    if scheduler is None and (count == 1 or len(jobs) == 1 or not _main_importable()):
        return _run_here(function, jobs, progress)
    if scheduler is not None:
        client = _connect(scheduler)
        try:
            return _run_on(client.get_executor(), function, jobs, progress, None, "the cluster")
        finally:
            client.close()
    start_workers_early()  # if no one has, the server starts here with the modelling code
    context = multiprocessing.get_context(_CONTEXT)
    count = min(count, len(jobs))
    pool = ProcessPoolExecutor(max_workers=count, mp_context=context)
    return _run_on(pool, function, jobs, progress, pool, f"{count} worker processes")


def _main_importable() -> bool:
    """Whether worker processes can start: they import the caller's main module again, which
    a script read from standard input does not have. A bundled copy starts them by running
    its own program again (``multiprocessing.freeze_support`` in the launcher)."""
    if getattr(sys, "frozen", False):
        return True
    main = sys.modules.get("__main__")
    path = getattr(main, "__file__", None)
    return path is None or getattr(main, "__spec__", None) is not None or os.path.exists(path)


def _run_here(
    function: Callable[..., Any], jobs: Sequence[Job], progress: Progress | None
) -> tuple[dict[str, Any], list[MeterFailure]]:
    results, failures = {}, []
    for number, job in enumerate(jobs):
        part = progress.part(number / len(jobs), (number + 1) / len(jobs)) if progress else None
        try:
            results[job.name] = function(job, progress=part)
        except Cancelled:
            raise
        except Exception as error:  # a meter's failure is reported; the others go on
            failures.append(_failure(job.name, error))
    return results, failures


def _run_on(
    executor: Executor,
    function: Callable[..., Any],
    jobs: Sequence[Job],
    progress: Progress | None,
    pool: ProcessPoolExecutor | None,
    where: str,
) -> tuple[dict[str, Any], list[MeterFailure]]:
    """The jobs on ``executor``; ``pool`` is the local one to end on cancel (None for a
    cluster); ``where`` names where they run, for progress."""
    started = time.perf_counter()
    # Largest first, so no worker is left with one long meter at the end.
    largest_first = sorted(jobs, key=lambda job: job.size, reverse=True)
    names: dict[Future, str] = {executor.submit(function, job): job.name for job in largest_first}
    results: dict[str, Any] = {}
    failures: list[MeterFailure] = []
    pending = set(names)
    try:
        step(progress, 0.0, f"modelling {len(jobs)} meters on {where}")
        while pending:
            if progress is not None and progress.cancelled:
                raise Cancelled("cancelled")
            finished, pending = wait(pending, timeout=_POLL_SECONDS, return_when=FIRST_COMPLETED)
            for future in finished:
                name = names[future]
                try:
                    results[name] = future.result()
                except BrokenProcessPool:
                    failures.append(MeterFailure(name, "its worker process died", False))
                except Exception as error:  # a meter's failure is reported; the others go on
                    failures.append(_failure(name, error))
                done = len(results) + len(failures)
                step(progress, done / len(jobs), _pace(name, done, len(jobs), started))
    except BaseException:
        for future in pending:
            future.cancel()
        if pool is not None:
            _end_workers(pool)
        raise
    if pool is not None:
        pool.shutdown()
    return results, failures


def _pace(name: str, done: int, total: int, started: float) -> str:
    """ "'Library' done (3 of 8), about 40 s left"."""
    message = f"'{name}' done ({done} of {total})"
    if done < total:
        left = (time.perf_counter() - started) / done * (total - done)
        message += f", about {left:.0f} s left"
    return message


def _end_workers(pool: ProcessPoolExecutor) -> None:
    """Stop the pool's processes now (running meters included) and let it go."""
    for process in list(getattr(pool, "_processes", {}).values()):
        process.terminate()
    pool.shutdown(wait=False, cancel_futures=True)


def _failure(name: str, error: Exception) -> MeterFailure:
    if isinstance(error, InputError):
        return MeterFailure(name, error.message, True)
    return MeterFailure(name, f"{type(error).__name__}: {error}", False)


def _connect(address: str) -> Any:
    """A client of the Dask scheduler at ``address``; a clear error when it cannot be reached."""
    try:
        from distributed import Client
    except ImportError:
        raise InputError(
            "running on a cluster needs the Dask 'distributed' package.",
            hint="Install it (pip install 'loadledger[cluster]'), or leave out --scheduler.",
        ) from None
    try:
        return Client(address, timeout=CONNECT_SECONDS, set_as_default=False)
    except (OSError, TimeoutError, ValueError, TypeError) as error:
        raise InputError(
            f"the Dask scheduler at '{address}' cannot be reached ({error}).",
            hint="Check the address (e.g. tcp://10.0.0.5:8786) and that the scheduler runs.",
        ) from None
