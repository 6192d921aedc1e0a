"""The whole window works on a laptop screen of 1,280 × 720 at every step.

Each step is shown with real content (the sample files on the Files step, a fitted project
with a budget on the others) and saved as a picture for a person to look at.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from desktop_support import (
    FITTED_METERS,
    LAPTOP,
    RATE_CARD,
    SAMPLE,
    fitted_campus,
    wait_until_idle,
)

from desktop.main_window import STEP_NAMES, MainWindow
from desktop.models_screen import FAMILIES
from engine.project import Project

SHOTS = Path("/tmp/shots-defects")


@pytest.fixture
def window(laptop_window):
    return laptop_window


def _fill_every_step(qtbot, window: MainWindow, project: Path) -> None:
    """Open a fitted project, budget it and choose sample files, so each step shows content."""
    assert window.open_project(project)
    budget = window.budget_screen
    wait_until_idle(qtbot, budget)
    budget.form.period.set_value("fiscal")
    budget.form.tariff.path.setText(str(RATE_CARD))
    budget.form.paths.setValue(200)
    budget.run()
    wait_until_idle(qtbot, budget)
    assert budget.notice.tone == "done", budget.notice.text.text()
    files = window.files_screen
    assert files.holidays.code() == "US"  # the holidays the open project's calendar takes
    files.add_files([SAMPLE / "weather-station.csv", SAMPLE / "campus-calendar.csv"])
    wait_until_idle(qtbot, files)
    for screen in (window.cleaning_screen, window.patterns_screen, window.models_screen):
        screen.show_meter(FITTED_METERS[0])
        wait_until_idle(qtbot, screen)


def test_every_step_fits_a_laptop_screen(qtbot, window, tmp_path):
    _fill_every_step(qtbot, window, fitted_campus(tmp_path / f"campus{Project.EXTENSION}"))
    SHOTS.mkdir(exist_ok=True)
    for number, name in enumerate(STEP_NAMES, start=1):
        window.show_step(name)
        qtbot.wait(50)  # let the step lay out and paint
        hint = window.minimumSizeHint()
        assert hint.width() <= LAPTOP[0] and hint.height() <= LAPTOP[1], (name, hint)
        assert window.size().toTuple() == LAPTOP, name
        assert window.grab().save(str(SHOTS / f"{number}-{name.lower()}.png"))
    # A fiscal year's twelve months: every third is always labelled, the others where they fit.
    run = window.budget_screen.budget.run
    always, where_room = window.budget_screen.plot.month_labels
    assert [label for _, label in always] == run.months[::3]
    assert sorted(always + where_room) == [(float(i), m) for i, m in enumerate(run.months)]
    # The model families wrap onto rows inside the picker: each box whole, none on another.
    window.show_step("Models")
    window.models_screen.go_to(FAMILIES)  # the walk-through's page with the picker
    qtbot.wait(50)
    picker = window.models_screen.families
    boxes = [box.geometry() for box in picker.boxes.values()]
    assert all(picker.rect().contains(box) for box in boxes)
    assert not any(a.intersects(b) for i, a in enumerate(boxes) for b in boxes[i + 1 :])
    assert len({box.y() for box in boxes}) > 1
