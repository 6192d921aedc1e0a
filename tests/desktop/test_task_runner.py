"""The task runner every screen's background work goes through, on the window's own screens
with real engine work: progress in the task bar, Cancel, a newer request superseding an older
one, a job waiting its turn, an engine InputError said in words, and closing the window while
a job runs."""

from __future__ import annotations

import shutil
import time
from collections.abc import Callable
from functools import partial
from pathlib import Path
from typing import TypeVar

import pytest
from desktop_support import SITE_ZONE, wait_until_idle
from PySide6.QtCore import Qt, QThreadPool

from desktop.cleaning_jobs import review_after
from desktop.model_jobs import FitRequest, fit_report
from desktop.pattern_jobs import MeterPatterns, PatternRequest, compute_patterns
from desktop.task_runner import Job
from engine.progress import Progress
from engine.project import Project
from engine.reading import ReadOptions, read_file

Result = TypeVar("Result")
#: The longest a held job waits for the window to cancel it (a test that fails must not hang).
HOLD_SECONDS = 60.0
TIMEOUT_MS = 120_000


def held_under_way(work: Callable[[Progress], Result]) -> Callable[[Progress], Result]:
    """``work`` that, at its first step past the start, waits until the window cancels it, so a
    test can look at and act on a real engine job while it is under way. The engine's next step
    then meets the cancel, as it would have."""

    def run(progress: Progress) -> Result:
        held: list[float] = []

        def relay(fraction: float, message: str) -> None:
            progress.step(fraction, message)  # raises Cancelled once the window has cancelled
            if fraction > 0 and not held:
                held.append(fraction)
                deadline = time.monotonic() + HOLD_SECONDS
                while not progress.cancelled and time.monotonic() < deadline:
                    time.sleep(0.01)

        return work(Progress(relay))

    return run


class Outcomes:
    """What became of the jobs a test asked for, in the order the runner handed it over."""

    def __init__(self) -> None:
        self.seen: list[tuple[str, object]] = []

    def job(self, name: str, work: Callable[[Progress], object], doing: str) -> Job:
        return Job(
            work,
            doing,
            partial(self._add, name, "done"),
            stopped=partial(self._add, name, "stopped", None),
            failed=partial(self._add, name, "failed"),
            ended=partial(self._add, name, "ended", None),
        )

    def _add(self, name: str, what: str, payload: object) -> None:
        self.seen.append((f"{name} {what}", payload))

    def events(self) -> list[str]:
        return [event for event, _ in self.seen]


@pytest.fixture
def window(qtbot, laptop_window, sample_project, tmp_path):
    """The main window with a copy of the sample project open, every screen idle again."""
    assert laptop_window.open_project(shutil.copy(sample_project, tmp_path / sample_project.name))
    for screen in laptop_window.screens_with_work():
        wait_until_idle(qtbot, screen)
    return laptop_window


def _progress_seen(runner) -> list[tuple[float, str]]:
    """Every step of the runner's task from now on, as the window's thread receives them (after
    the task bar has shown it)."""
    seen: list[tuple[float, str]] = []
    runner.task.progressed.connect(lambda fraction, message: seen.append((fraction, message)))
    return seen


def test_progress_reaches_the_task_bar_and_cancel_stops_the_engine_job(qtbot, window):
    screen = window.cleaning_screen
    outcomes = Outcomes()
    review = held_under_way(partial(review_after, window.project, "Library", None))
    assert screen.runner.start(outcomes.job("review", review, "reviewing 'Library'"))
    seen = _progress_seen(screen.runner)
    qtbot.waitUntil(lambda: any(fraction > 0 for fraction, _ in seen), timeout=TIMEOUT_MS)
    # The job holds at this step, so the bar shows it: the engine's own words and fraction.
    fraction, message = seen[-1]
    bar = screen.task_bar
    assert not bar.isHidden() and message and bar.message.text() == message
    assert bar.bar.value() == round(fraction * bar.bar.maximum()) > 0
    qtbot.mouseClick(bar.cancel_button, Qt.MouseButton.LeftButton)
    assert bar.message.text().startswith("Stopping")
    wait_until_idle(qtbot, screen)
    assert outcomes.events() == ["review stopped", "review ended"]
    assert seen[-1] == (fraction, message)  # the engine's next step met the cancel
    assert bar.isHidden() and screen.review_button.isEnabled()


def test_a_newer_request_drops_the_outcome_of_the_job_it_supersedes(qtbot, window):
    screen = window.patterns_screen
    outcomes = Outcomes()
    profile = partial(compute_patterns, window.project, PatternRequest("Library"))
    screen.runner.request(outcomes.job("first", held_under_way(profile), "profiling 'Library'"))
    seen = _progress_seen(screen.runner)
    qtbot.waitUntil(lambda: any(fraction > 0 for fraction, _ in seen), timeout=TIMEOUT_MS)
    screen.runner.request(outcomes.job("second", profile, "profiling 'Library' again"))
    wait_until_idle(qtbot, screen)
    # The first was cancelled by the second: no result and no "stopped" for it, only its end.
    assert outcomes.events() == ["first ended", "second done", "second ended"]
    result = outcomes.seen[1][1]
    assert isinstance(result, MeterPatterns) and result.request.meter == "Library"


def test_a_result_finished_but_not_yet_handed_over_is_dropped_too(qtbot, window):
    screen = window.patterns_screen
    outcomes = Outcomes()
    profile = partial(compute_patterns, window.project, PatternRequest("Library"))
    screen.runner.request(outcomes.job("first", profile, "profiling 'Library'"))
    first = screen.runner.task
    # Block the window's thread until the work is done: its result waits, undelivered.
    assert first.wait(TIMEOUT_MS / 1000) and not first.running
    screen.runner.request(outcomes.job("second", profile, "profiling 'Library' again"))
    wait_until_idle(qtbot, screen)
    assert outcomes.events() == ["first ended", "second done", "second ended"]


def test_work_asked_for_while_a_job_runs_is_refused_or_waits_its_turn(qtbot, window):
    screen = window.cleaning_screen
    outcomes = Outcomes()
    review = partial(review_after, window.project, "Library", None)
    assert screen.runner.start(outcomes.job("first", review, "reviewing 'Library'"))
    refused = outcomes.job("refused", review, "reviewing 'Library' again")
    assert not screen.runner.start(refused)
    assert screen.notice.text.text() == "Wait until reviewing 'Library' is done."
    followed = []
    screen.runner.after(lambda: followed.append(list(outcomes.events())))
    assert followed == []  # not while the first job runs
    wait_until_idle(qtbot, screen)
    assert followed == [["first done", "first ended"]]
    assert "refused" not in " ".join(outcomes.events())


def test_an_engine_input_error_becomes_a_message_naming_the_file(qtbot, window, tmp_path, capfd):
    screen = window.files_screen
    path = tmp_path / "plant.csv"
    path.write_text("Site notes\nthe plant room,closed\n", encoding="utf-8")
    outcomes = Outcomes()
    read = partial(read_file, path, ReadOptions(timezone=SITE_ZONE))
    assert screen.runner.start(outcomes.job("read", lambda _progress: read(), "reading files"))
    wait_until_idle(qtbot, screen)
    assert outcomes.events() == ["read failed", "read ended"]
    failure = outcomes.seen[0][1]
    assert failure.kind == "input" and failure.message.startswith("plant.csv: ")
    assert screen.notice.tone == "problem" and screen.notice.text.text() == failure.message
    assert screen.notice.details_button.isHidden()
    assert "Traceback" not in capfd.readouterr().err


def test_closing_the_window_while_a_job_runs_stops_it_and_leaves_no_thread(qtbot, window, capfd):
    screen = window.models_screen
    path = Path(window.project.path)
    outcomes = Outcomes()
    request = FitRequest("Library", ("daily_change_point",), 3)
    fit = held_under_way(partial(fit_report, window.project, request))
    screen.runner.request(outcomes.job("fit", fit, "fitting and comparing models of 'Library'"))
    seen = _progress_seen(screen.runner)
    qtbot.waitUntil(lambda: any(fraction > 0 for fraction, _ in seen), timeout=TIMEOUT_MS)
    task = screen.runner.task
    assert task.running
    window.close()
    assert not task.running  # closing waited for the work to stop on its thread
    assert QThreadPool.globalInstance().waitForDone(5_000)
    assert QThreadPool.globalInstance().activeThreadCount() == 0
    qtbot.wait(100)  # what the worker said last is handed over without a fault
    assert "fit done" not in outcomes.events()
    assert "Traceback" not in capfd.readouterr().err
    with Project.open(path) as project:
        assert not project.results("model", "Library")  # the fit kept nothing
