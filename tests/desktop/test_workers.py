"""Worker tasks: progress reaches the window, the window stays responsive, cancel, errors."""

from __future__ import annotations

import threading

from PySide6.QtCore import Qt, QTimer

from desktop.notice import Notice
from desktop.task_bar import TaskBar
from desktop.workers import Failure, Task
from engine.errors import InputError
from engine.progress import step

TIMEOUT_MS = 10_000


def test_the_window_keeps_handling_events_while_the_work_runs(qtbot):
    # The work cannot finish until a timer fires on the window's thread: if the event loop were
    # blocked by the work, the timer would never fire and the task would never succeed.
    released = threading.Event()
    seen = []

    def work(progress):
        step(progress, 0.25, "waiting for the window")
        assert released.wait(5), "the window's event loop did not run while the work ran"
        step(progress, 1.0, "done")
        return 42

    task = Task(work, "waiting")
    task.progressed.connect(lambda f, m: seen.append((f, m, threading.current_thread())))
    QTimer.singleShot(50, released.set)
    with qtbot.waitSignal(task.succeeded, timeout=TIMEOUT_MS) as done:
        task.start()
    assert done.args == [42]
    assert [(f, m) for f, m, _ in seen] == [(0.25, "waiting for the window"), (1.0, "done")]
    assert all(thread is threading.main_thread() for _, _, thread in seen)
    assert task.wait(5) and not task.running


def test_cancel_button_stops_the_work_at_its_next_step(qtbot):
    steps_done = []
    go_on = threading.Event()

    def slow_work(progress):
        for i in range(1, 1001):
            step(progress, i / 1000, f"part {i}")
            steps_done.append(i)
            if i == 1:
                go_on.wait(5)
        return "finished"

    bar = TaskBar()
    qtbot.addWidget(bar)
    task = Task(slow_work, "a slow job")
    outcomes = []
    task.succeeded.connect(lambda result: outcomes.append(result))
    task.cancelled.connect(lambda: outcomes.append("cancelled"))
    bar.follow(task)
    task.start()
    qtbot.waitUntil(lambda: bar.bar.value() > 0, timeout=TIMEOUT_MS)
    assert not bar.isHidden()
    qtbot.mouseClick(bar.cancel_button, Qt.MouseButton.LeftButton)
    assert bar.message.text().startswith("Stopping")
    with qtbot.waitSignal(task.ended, timeout=TIMEOUT_MS):
        go_on.set()
    assert outcomes == ["cancelled"]
    assert steps_done == [1]  # the step after the click raised Cancelled
    assert bar.isHidden()


def test_an_input_error_is_a_plain_message_naming_the_file(qtbot):
    def work(progress):
        raise InputError("no readings found.", hint="Check the file.", file="/data/plant.csv")

    notice = Notice()
    qtbot.addWidget(notice)
    task = Task(work, "reading files")
    task.failed.connect(notice.show_failure)
    with qtbot.waitSignal(task.failed, timeout=TIMEOUT_MS) as failed:
        task.start()
    failure = failed.args[0]
    assert failure == Failure("input", "plant.csv: no readings found. Check the file.")
    assert notice.text.text() == failure.message and notice.tone == "problem"
    assert notice.details_button.isHidden()


def test_an_internal_error_keeps_its_traceback_behind_a_button(qtbot):
    def work(progress):
        return {}["missing key"]

    notice = Notice()
    qtbot.addWidget(notice)
    notice.show()
    task = Task(work, "profiling")
    task.failed.connect(notice.show_failure)
    with qtbot.waitSignal(task.failed, timeout=TIMEOUT_MS) as failed:
        task.start()
    failure = failed.args[0]
    assert failure.kind == "internal"
    assert failure.message.startswith("Internal error while profiling (KeyError")
    assert "Traceback" not in notice.text.text()
    assert "Traceback" in failure.details and "KeyError" in failure.details
    assert notice.details.isHidden() and notice.details_button.isVisible()
    qtbot.mouseClick(notice.details_button, Qt.MouseButton.LeftButton)
    assert notice.details.isVisible()
    assert "KeyError" in notice.details.toPlainText()
