"""Long fuzzing run: many malformed files through every reader, crashes and hangs counted.

    .venv/bin/python tests/benchmarks/fuzz_long.py            # 10,000 inputs, seed 1
    .venv/bin/python tests/benchmarks/fuzz_long.py --count 20000 --seed 7 --memory-gb 4

The cases come from ``tests/fuzz/corpus.py`` at full size (very long lines, a million
repeated rows). One worker process reads them one at a time, as ``loadledger inspect`` would,
under an address-space cap; the parent restarts it when it dies (a crash: an abort or a
segfault) or runs over the time limit. Printed: inputs, outcomes, exit-1 equivalents (any
exception other than InputError, or a warning), crashes, runs over 30 s, the slowest run, the
worker's peak resident memory with the cases that raised it most, and the first problem cases.
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import resource
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from tests.fuzz.corpus import Case, cases  # noqa: E402
from tests.fuzz.harness import TIME_LIMIT, run_case  # noqa: E402

GRACE = 15.0  # seconds past the in-worker limit before the parent stops the worker


def _worker(connection, folder: str, memory_bytes: int) -> None:
    """Read cases from the pipe, answer (result, seconds, detail, peak RSS in KiB)."""
    resource.setrlimit(resource.RLIMIT_AS, (memory_bytes, memory_bytes))
    while True:
        task = connection.recv()
        if task is None:
            return
        index, case = task
        outcome = run_case(case, Path(folder), index)
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        connection.send((outcome.result, outcome.seconds, outcome.detail, peak))


class Worker:
    """One reading process, restarted after a crash or a hang."""

    def __init__(self, folder: str, memory_bytes: int) -> None:
        self.folder, self.memory_bytes = folder, memory_bytes
        self.peak_kib = 0
        self.raised_by: list[tuple[int, str]] = []  # (peak KiB, case) each time it rose
        self._start()

    def _start(self) -> None:
        self.connection, child = mp.Pipe()
        self.process = mp.get_context("fork").Process(
            target=_worker, args=(child, self.folder, self.memory_bytes), daemon=True
        )
        self.process.start()

    def run(self, index: int, case: Case) -> tuple[str, float, str]:
        start = time.perf_counter()
        self.connection.send((index, case))
        try:
            if not self.connection.poll(TIME_LIMIT + GRACE):
                self._restart()
                return "slow", time.perf_counter() - start, "worker stopped by the parent"
            result, seconds, detail, peak = self.connection.recv()
        except (EOFError, ConnectionResetError, BrokenPipeError):
            code = self.process.exitcode
            self._restart()
            return "crash", time.perf_counter() - start, f"worker died (exit code {code})"
        if peak > self.peak_kib:  # this case took the worker higher than any before it
            self.peak_kib = peak
            self.raised_by.append((peak, case.label))
        return result, seconds, detail

    def _restart(self) -> None:
        if self.process.is_alive():
            self.process.kill()
        self.process.join()
        self._start()

    def close(self) -> None:
        self.connection.send(None)
        self.process.join(timeout=10)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--scale", type=int, default=1000)
    parser.add_argument("--memory-gb", type=float, default=6.0, help="worker address-space cap")
    args = parser.parse_args()

    counts: Counter = Counter()
    problems: list[str] = []
    slowest = (0.0, "")
    began = time.perf_counter()
    with tempfile.TemporaryDirectory() as folder:
        worker = Worker(folder, int(args.memory_gb * 2**30))
        for index, case in enumerate(cases(args.count, args.seed, args.scale)):
            result, seconds, detail = worker.run(index, case)
            counts[result] += 1
            slowest = max(slowest, (seconds, case.label))
            if result in ("bad", "slow", "crash"):
                problems.append(f"{result}: {case.label} ({case.reader}, {case.filename}) "
                                f"{seconds:.1f} s: {detail}")  # fmt: skip
        worker.close()
    elapsed = time.perf_counter() - began
    print(f"inputs                {sum(counts.values()):,} (seed {args.seed}, scale {args.scale})")
    print(f"  refused clearly     {counts['input_error']:,}")
    print(f"  read                {counts['read']:,}")
    print(f"exit-1 equivalents    {counts['bad']:,}")
    print(f"crashes               {counts['crash']:,}")
    print(f"runs over {TIME_LIMIT:.0f} s        {counts['slow']:,}")
    print(f"slowest run           {slowest[0]:.1f} s ({slowest[1]})")
    print(f"peak memory (worker)  {worker.peak_kib / 1024:,.0f} MiB")
    for peak, label in sorted(worker.raised_by, reverse=True)[:5]:
        print(f"  raised to {peak / 1024:,.0f} MiB by {label}")
    print(f"wall time             {elapsed:,.0f} s")
    for line in problems[:50]:
        print("  " + line)


if __name__ == "__main__":
    main()
