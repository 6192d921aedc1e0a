"""The Files screen offers the calendar the readings propose, to keep and edit.

Data: the sample campus's Library meter and weather station (tests/desktop/conftest.py), no
campus calendar; the proposal is the engine's (engine/calendar_proposal.py), checked against
the sample's true calendar in tests/engine/test_calendar_proposal_sample.py.
"""

from __future__ import annotations

import shutil
from dataclasses import replace

import pytest
from desktop_support import save_screen, wait_until_idle
from PySide6.QtCore import Qt

from desktop.calendar_proposal_dialog import EVIDENCE, KEEP, LAST, NAME
from desktop.files_screen import FilesScreen
from desktop.session import Session
from engine.calendar import CampusCalendar
from engine.cli.main import main as command_line
from engine.project import Project
from engine.steps.site_calendar import stored_calendar


@pytest.fixture
def screen(qtbot, sample_project, tmp_path):
    path = tmp_path / sample_project.name
    shutil.copyfile(sample_project, path)
    session = Session()
    widget = FilesScreen(session)
    qtbot.addWidget(widget)
    widget.resize(1400, 900)
    widget.show()
    session.open(Project.open(path))
    yield widget
    session.close()


def _proposed(qtbot, screen):
    assert screen.propose_button.isEnabled()
    screen.propose_button.click()
    wait_until_idle(qtbot, screen)
    qtbot.waitUntil(lambda: screen.proposal_dialog is not None, timeout=10_000)
    dialog = screen.proposal_dialog
    qtbot.waitUntil(dialog.isVisible, timeout=10_000)
    return dialog


def test_the_proposal_is_shown_with_its_evidence_and_kept_as_edited(qtbot, screen):
    dialog = _proposed(qtbot, screen)
    proposal = dialog.proposal
    assert dialog.table.rowCount() == len(proposal.periods) >= 3
    for row, proposed in enumerate(proposal.periods):
        assert dialog.table.item(row, EVIDENCE).text() == proposed.evidence
        assert "of a term weekday" in proposed.evidence
    assert dialog.use_holidays.isChecked() and dialog.holidays.code() == "US"
    save_screen(dialog, "calendar-proposal")

    dialog.table.item(0, KEEP).setCheckState(Qt.CheckState.Unchecked)
    dialog.table.item(1, NAME).setText("Our break")
    kept_last = dialog.table.item(2, LAST).text()
    dialog.table.item(2, LAST).setText("2024-13-01")
    dialog.keep_button.click()
    assert dialog.isVisible() and "Row 3: '2024-13-01' is not a date" in dialog.problem.text()
    assert stored_calendar(screen.session.project) is None  # nothing stored yet
    dialog.table.item(2, LAST).setText(kept_last)
    dialog.keep_button.click()
    assert not dialog.isVisible()

    periods = [p.period for p in proposal.periods[1:]]
    periods[0] = replace(periods[0], name="Our break")
    assert stored_calendar(screen.session.project) == CampusCalendar("US", None, tuple(periods))
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert f"{len(periods)} periods, US public holidays" in screen.notice.text.text()
    assert screen.holidays.code() == "US"


def test_keeping_it_unedited_stores_what_the_command_line_accepts(qtbot, screen, tmp_path):
    """Keep every row as proposed: the stored calendar is the one `calendar --propose
    --accept` stores in a copy of the same project."""
    copy = tmp_path / f"cli{Project.EXTENSION}"
    shutil.copyfile(screen.session.project.path, copy)
    dialog = _proposed(qtbot, screen)
    dialog.keep_button.click()
    assert command_line(["calendar", str(copy), "--propose", "--accept", "--json"]) == 0
    with Project.open(copy) as by_cli:
        assert stored_calendar(screen.session.project) == stored_calendar(by_cli)


def test_no_holidays_can_be_chosen_instead(qtbot, screen):
    dialog = _proposed(qtbot, screen)
    dialog.use_holidays.setChecked(False)
    assert not dialog.holidays.isEnabled()
    dialog.keep_button.click()
    stored = stored_calendar(screen.session.project)
    assert stored.country is None and len(stored.periods) == len(dialog.proposal.periods)
