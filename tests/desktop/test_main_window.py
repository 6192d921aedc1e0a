"""The main window: the steps, the Project menu, and the open project in the status bar."""

from __future__ import annotations

import pytest
from desktop_support import save_screen, wait_until_idle
from PySide6.QtWidgets import QFileDialog, QMessageBox

from desktop.main_window import STEP_NAMES, MainWindow


@pytest.fixture
def window(qtbot):
    widget = MainWindow()
    qtbot.addWidget(widget)
    widget.show()
    return widget


def _action(window, words: str):
    (menu,) = [a.menu() for a in window.menuBar().actions() if a.text() == "&Project"]
    return next(a for a in menu.actions() if a.text() == words)


def test_opening_a_project_fills_the_status_bar_and_the_patterns_step(
    qtbot, window, sample_project
):
    assert [window.steps.item(r).text() for r in range(window.steps.count())] == list(STEP_NAMES)
    assert window.statusBar().currentMessage() == "No project open"
    assert window.open_project(sample_project)
    assert window.statusBar().currentMessage() == (
        f"{sample_project.name}: 1 meter, site zone America/Chicago"  # not "1 meter(s)"
    )
    window.show_step("Patterns")
    assert window.screens.currentWidget() is window.patterns_screen
    window.patterns_screen.show_meter("Library")
    wait_until_idle(qtbot, window.patterns_screen)
    assert window.patterns_screen.patterns.request.meter == "Library"
    save_screen(window, "main-window-patterns")
    window.close()
    assert window.project is None


def test_a_file_that_is_not_a_project_gives_a_message_box(window, tmp_path, monkeypatch):
    shown = []
    monkeypatch.setattr(QMessageBox, "warning", lambda *args: shown.append(args[1:]))
    fake = tmp_path / "budget.loadledger"
    fake.write_text("not a database", encoding="utf-8")
    assert not window.open_project(fake)
    ((title, text),) = shown
    assert title == "Cannot open project" and "budget.loadledger" in text
    assert "Traceback" not in text and window.project is None


def test_new_from_files_goes_to_the_files_step_and_asks_for_files(
    qtbot, window, tmp_path, monkeypatch
):
    path = tmp_path / "plant.csv"
    path.write_text("Timestamp,Plant (kWh)\n2025-01-06 00:00,1.0\n2025-01-06 01:00,2.0\n")
    monkeypatch.setattr(QFileDialog, "getOpenFileNames", lambda *args: ([str(path)], ""))
    window.show_step("Export")
    _action(window, "&New from files…").trigger()
    assert window.screens.currentWidget() is window.files_screen
    wait_until_idle(qtbot, window.files_screen)
    assert [f.path for f in window.files_screen.plan.files] == [path]
    assert window.files_screen.plan.files[0].state == "read"


def test_the_steps_say_what_is_done_and_the_one_thing_to_do_next(window, tmp_path):
    from desktop_support import FITTED_METERS, fitted_campus

    # No project: the Files step says to add files; nothing is ticked.
    assert "create a project" in window.guide.text()
    assert not any(window.steps.item(r).text().startswith("✓") for r in range(window.steps.count()))
    path = fitted_campus(tmp_path / "campus.loadledger")  # two meters, each with a model
    assert window.open_project(path)
    ticked = [
        window.steps.item(r).text()
        for r in range(window.steps.count())
        if window.steps.item(r).text()[0] == "✓"
    ]
    assert ticked == ["✓ Files", "✓ Patterns", "✓ Models"]  # no fix logged, no budget yet
    window.show_step("Models")
    assert f"{len(FITTED_METERS)} of {len(FITTED_METERS)} meters have a chosen model" in (
        window.guide.text()
    )
    assert "Budget the next month" in window.guide.text()
    window.next_button.click()
    assert STEP_NAMES[window.steps.currentRow()] == "Budget"
    assert "press 'Budget'" in window.guide.text()
    save_screen(window, "guided-steps")


def test_the_task_bar_names_meters_by_their_display_names(
    qtbot, window, sample_project, tmp_path, monkeypatch
):
    """While the Cleaning and Patterns steps work on the Library meter shown as "Main
    Library", every message the task bar is given names it so (the engine's detectors said
    "Looking for spikes and dips in Library"), and no message shows a raw key."""
    import shutil

    from desktop.task_bar import TaskBar
    from engine.project import Project
    from engine.steps.labels import relabelled, store_label

    path = tmp_path / sample_project.name
    shutil.copyfile(sample_project, path)
    with Project.open(path) as project:
        store_label(project, relabelled(project, "Library", display_name="Main Library"))
    given: list[str] = []
    following = TaskBar.follow

    def follow(bar, task):
        given.append(task.doing)
        task.progressed.connect(lambda _fraction, message: given.append(message))
        following(bar, task)

    monkeypatch.setattr(TaskBar, "follow", follow)
    assert window.open_project(path)
    for step in ("Cleaning", "Patterns"):
        window.show_step(step)
        screen = window.screens.currentWidget()
        screen.show_meter("Library")
        wait_until_idle(qtbot, screen)
    said = " | ".join(given)
    assert "Looking for spikes and dips in Main Library" in said
    assert "typical days by day type" in said and "day_type" not in said  # no raw keys
    assert "profiling 'Main Library'" in said
    assert not [words for words in given if "Library" in words and "Main Library" not in words]
