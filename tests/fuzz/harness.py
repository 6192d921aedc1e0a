"""Run fuzz cases through the readers in-process and sort the outcomes.

A case ends one of four ways: ``input_error`` (an :class:`InputError` naming the file —
good), ``read`` (read, described and rendered as ``inspect`` would — good), ``bad``
(any other exception or warning, or an InputError that does not name the file)
or ``slow`` (over :data:`TIME_LIMIT` seconds). ``drive`` does what ``loadledger inspect`` does
for each kind of file, short of printing.
"""

from __future__ import annotations

import json
import signal
import threading
import time
import warnings
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from engine.cli import text
from engine.errors import InputError
from engine.reading import ReadOptions, describe, read_file
from engine.tariffs import read_tariff
from tests.fuzz.corpus import Case

TIME_LIMIT = 30.0
OPTIONS = (ReadOptions(timezone="America/Chicago"), ReadOptions(timezone="UTC", dayfirst=True),
           ReadOptions())  # fmt: skip


class TooSlow(Exception):
    """Raised by the alarm when a case runs past the time limit."""


@dataclass(frozen=True)
class Outcome:
    case: Case
    result: str  # input_error | read | bad | slow
    seconds: float
    detail: str = ""


@dataclass
class Tally:
    """Counts of outcomes, with the bad and slow cases kept for the report."""

    counts: Counter = field(default_factory=Counter)
    problems: list[Outcome] = field(default_factory=list)
    slowest: float = 0.0

    def add(self, outcome: Outcome) -> None:
        self.counts[outcome.result] += 1
        self.slowest = max(self.slowest, outcome.seconds)
        if outcome.result in ("bad", "slow"):
            self.problems.append(outcome)

    def summary(self) -> str:
        shown = "\n".join(f"  {o.result}: {o.case.label} ({o.case.reader}, {o.case.filename}): "
                          f"{o.detail}" for o in self.problems[:40])  # fmt: skip
        return f"{dict(self.counts)}; slowest {self.slowest:.1f} s\n{shown}"


def drive(reader: str, path: Path, options: ReadOptions) -> None:
    """Read ``path`` with ``reader`` and build everything ``inspect`` prints."""
    if reader == "ratecard":
        tariff = read_tariff(path)
        json.dumps(tariff.to_dict(), allow_nan=True)
        return
    kind = None if reader == "auto" else reader
    report = describe(read_file(path, options, kind=kind))
    json.dumps(report, allow_nan=False)
    text.file_report(report)


def run_case(case: Case, folder: Path, index: int = 0) -> Outcome:
    """Write the case under ``folder`` and drive its reader; never raises for the case."""
    path = folder / case.filename
    path.write_bytes(case.content)
    options = OPTIONS[index % len(OPTIONS)]
    start = time.perf_counter()
    try:
        with _time_limit(TIME_LIMIT), warnings.catch_warnings():
            warnings.simplefilter("error")
            drive(case.reader, path, options)
        result, detail = "read", ""
    except InputError as error:
        result, detail = _judge(error, path)
    except TooSlow:
        result, detail = "slow", f"stopped after {TIME_LIMIT:.0f} s"
    except Exception as error:  # the point: anything else is a defect to count
        result, detail = "bad", f"{type(error).__name__}: {str(error)[:300]}"
    finally:
        path.unlink(missing_ok=True)
    seconds = time.perf_counter() - start
    if result != "slow" and seconds > TIME_LIMIT:
        result, detail = "slow", f"{seconds:.1f} s"
    return Outcome(case, result, seconds, detail)


def _judge(error: InputError, path: Path) -> tuple[str, str]:
    """An InputError is good when it names the file (the command line prints it on one line)."""
    message = str(error)
    if path.name not in message:
        return "bad", f"InputError without the file name: {message[:300]}"
    return "input_error", message[:300]


class _time_limit:
    """Raise :class:`TooSlow` after ``seconds`` (main thread only; elsewhere just timed)."""

    def __init__(self, seconds: float) -> None:
        self.seconds = seconds
        self.armed = threading.current_thread() is threading.main_thread()

    def __enter__(self) -> None:
        if self.armed:
            self.previous = signal.signal(signal.SIGALRM, self._raise)
            signal.setitimer(signal.ITIMER_REAL, self.seconds)

    def __exit__(self, *exc) -> None:
        if self.armed:
            signal.setitimer(signal.ITIMER_REAL, 0)
            signal.signal(signal.SIGALRM, self.previous)

    @staticmethod
    def _raise(signum, frame) -> None:
        raise TooSlow()
