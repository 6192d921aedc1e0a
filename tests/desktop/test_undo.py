"""Edit ▸ Undo and Redo in the window, on a real project: cleaning steps, accepted findings,
meter names and units, the temperature unit, calendar edits and the model kept by hand.

The project holds two of the sample campus's electricity meters from June 2025 on with the
sample's weather (read in °F) and campus calendar; Library has two ranked models.
"""

from __future__ import annotations

import shutil
from datetime import date
from pathlib import Path

import pytest
from desktop_support import (
    FITTED_METERS,
    SAMPLE,
    SITE_ZONE,
    fitted_campus,
    save_screen,
    wait_until_idle,
)
from PySide6.QtGui import QKeySequence

from desktop.main_window import MainWindow
from desktop.meters_dialog import ACCOUNT, READ_IN, SHOWN
from desktop.model_tables import MODEL_ROLE
from engine.budget.result import BudgetRun
from engine.export.finance_tables import READ_UNIT_HEADER
from engine.project import Project
from engine.reading import ReadOptions, read_file
from engine.steps import calendar_edit
from engine.steps.account_membership import account_names, meter_accounts
from engine.steps.fitting import chosen_model, fit_meter
from engine.steps.importing import ImportedFiles, store_files
from engine.steps.labels import meter_label, temperature_unit

LIBRARY, LABS = FITTED_METERS


@pytest.fixture(scope="module")
def campus(tmp_path_factory) -> Path:
    path = fitted_campus(tmp_path_factory.mktemp("undo") / f"campus{Project.EXTENSION}")
    with Project.open(path) as project:
        fit_meter(project, LIBRARY, families=["daily_change_point", "seasonal_naive"], origins=2)
    return path


@pytest.fixture
def window(qtbot, campus, tmp_path):
    shown = MainWindow()
    qtbot.addWidget(shown)
    shown.resize(1280, 720)
    shown.show()
    assert shown.open_project(shutil.copy(campus, tmp_path / campus.name))
    _settle(qtbot, shown)
    yield shown
    shown.close_project()


def _settle(qtbot, window: MainWindow) -> None:
    for screen in window.screens_with_work():
        wait_until_idle(qtbot, screen)


def _stored(window: MainWindow):
    """A fresh connection to the project file, as another program would read it."""
    return Project.open(window.project.path)


def _undo(qtbot, window: MainWindow, redo: bool = False) -> None:
    """Press the platform's Undo (or Redo) keys, as a person would."""
    key = QKeySequence.StandardKey.Redo if redo else QKeySequence.StandardKey.Undo
    (action,) = [a for a in window.findChildren(type(window.close_action)) if a.shortcut()
                 and a.shortcut() in QKeySequence.keyBindings(key)]  # fmt: skip
    assert action.isEnabled(), action.text()
    action.trigger()
    _settle(qtbot, window)


def test_the_edit_menu_names_each_change_in_words(qtbot, window):
    stack = window.undo.stack
    assert not stack.canUndo()
    screen = window.cleaning_screen
    window.show_step("Cleaning")
    finding = screen.findings.findings[0]
    assert screen.findings.select(finding.id)
    screen.accept_selected()
    _settle(qtbot, window)
    words = stack.undoText()
    assert words.startswith("accept the ") and words.endswith(" on Library as expected")
    undo_action = next(a for a in window.menuBar().actions() if a.text() == "&Edit").menu()
    assert undo_action.actions()[0].text().replace("&", "") == f"Undo {words}"
    assert undo_action.actions()[0].shortcuts() == QKeySequence.keyBindings(
        QKeySequence.StandardKey.Undo
    )
    save_screen(window, "undo-edit-menu")


def test_cleaning_steps_are_undone_and_redone(qtbot, window):
    screen = window.cleaning_screen
    window.show_step("Cleaning")
    fixable = next(f for f in screen.findings.findings if f.fix is not None)
    assert screen.findings.select(fixable.id)
    screen.apply_selected_fix()
    _settle(qtbot, window)
    with _stored(window) as project:
        (step,) = project.cleaning_steps(LIBRARY, active_only=False)
    assert fixable.id not in {f.id for f in screen.findings.findings}
    _undo(qtbot, window)
    with _stored(window) as project:
        assert project.cleaning_steps(LIBRARY, active_only=False) == []
    assert fixable.id in {f.id for f in screen.findings.findings}  # the screen looked again
    assert screen.log.steps == []
    assert window.undo.stack.redoText().startswith("apply fix '")
    save_screen(window, "cleaning-after-undo")
    _undo(qtbot, window, redo=True)
    with _stored(window) as project:
        assert project.cleaning_steps(LIBRARY, active_only=False) == [step]  # same id, time
    assert [s["id"] for s in screen.log.steps] == [step["id"]]
    # removing the step for good is undone too (the question answered yes)
    screen._change(
        lambda project: project.remove_cleaning_step(step["id"]), "Removed.", "remove {meter}"
    )
    _settle(qtbot, window)
    assert screen.log.steps == []
    _undo(qtbot, window)
    assert [s["id"] for s in screen.log.steps] == [step["id"]]


def test_meter_names_and_units_are_undone_and_redone(qtbot, window):
    window.show_meters()
    dialog = window.meters_dialog
    dialog.resize(1000, 460)
    dialog.table.item(0, SHOWN).setText("Main library")
    qtbot.waitUntil(lambda: dialog.table.item(0, SHOWN).text() == "Main library")
    with _stored(window) as project:
        assert meter_label(project, LIBRARY).shown == "Main library"
    assert window.undo.stack.undoText() == "show meter Library as 'Main library'"
    picker = window.cleaning_screen.meter
    assert picker.itemText(0) == "Main library" and picker.currentText() == LIBRARY
    unit = dialog.table.cellWidget(0, READ_IN)
    unit.set_value("MWh")
    unit.activated.emit(unit.currentIndex())
    qtbot.waitUntil(lambda: dialog.table.cellWidget(0, READ_IN).value() == "MWh")
    save_screen(dialog, "meters-dialog")
    # a name another meter has is refused in words, and nothing is stored or stacked
    count = window.undo.stack.count()
    dialog.table.item(1, SHOWN).setText("main LIBRARY")
    assert dialog.notice.tone == "problem" and "already shown as" in dialog.notice.text.text()
    qtbot.waitUntil(lambda: dialog.table.item(1, SHOWN).text() == LABS)
    assert window.undo.stack.count() == count
    _undo(qtbot, window)
    _undo(qtbot, window)
    with _stored(window) as project:
        assert meter_label(project, LIBRARY).shown == LIBRARY
        assert meter_label(project, LIBRARY).read_unit == "kWh"
    assert picker.itemText(0) == LIBRARY
    qtbot.waitUntil(lambda: dialog.table.item(0, SHOWN).text() == LIBRARY)
    _undo(qtbot, window, redo=True)
    assert picker.itemText(0) == "Main library"


def test_the_temperature_unit_and_calendar_edits_are_undone(qtbot, window):
    window.show_step("Patterns")
    save_screen(window, "patterns-fahrenheit")
    window.show_meters()
    dialog = window.meters_dialog
    assert dialog.temperature.value() == "°F"  # the sample's weather came in °F
    dialog.temperature.set_value("°C")
    dialog.temperature.activated.emit(dialog.temperature.currentIndex())
    with _stored(window) as project:
        assert temperature_unit(project) == "°C"
    _settle(qtbot, window)
    assert window.patterns_screen.patterns.temperature_unit == "°C"  # the screen looked again
    dialog.holidays.choose("US", "IL")
    with _stored(window) as project:
        assert calendar_edit.current(project).subdivision == "IL"
    assert window.undo.stack.undoText() == "take the public holidays of US-IL"
    periods = len(calendar_edit.current(window.project).periods)
    dialog.copy_forward.click()
    assert len(calendar_edit.current(window.project).periods) > periods
    for _ in range(3):
        _undo(qtbot, window)
    with _stored(window) as project:
        calendar = calendar_edit.current(project)
        assert (calendar.country, calendar.subdivision) == ("US", None)
        assert len(calendar.periods) == periods
        assert temperature_unit(project) == "°F"
    assert window.patterns_screen.patterns.temperature_unit == "°F"
    assert window.files_screen.holidays.code() == "US"


def test_a_model_kept_by_hand_is_undone_and_redone(qtbot, window):
    screen = window.models_screen
    window.show_step("Models")
    screen.show_meter(LIBRARY)
    _settle(qtbot, window)
    recommended = screen.report.chosen
    table = screen.ranking.table
    table.selectRow(next(r for r in range(table.rowCount())
                         if table.item(r, 1).data(MODEL_ROLE) != recommended))  # fmt: skip
    other = screen.ranking.selected()
    screen.use_button.click()
    _settle(qtbot, window)
    qtbot.waitUntil(lambda: window.undo.stack.canUndo())
    title = screen.ranking.row_of(other)["Model"]  # the family's name in words
    assert window.undo.stack.undoText() == f"use model '{title}' for Library"
    assert screen.report.chosen == other
    _undo(qtbot, window)
    with _stored(window) as project:
        assert chosen_model(project, LIBRARY)[1]["chosen"] == recommended
    assert screen.report.chosen == recommended
    _undo(qtbot, window, redo=True)
    with _stored(window) as project:
        assert chosen_model(project, LIBRARY)[1]["chosen"] == other
    assert screen.report.chosen == other


def test_another_project_starts_with_nothing_to_undo(qtbot, window, campus, tmp_path):
    window.show_meters()
    window.meters_dialog.table.item(0, SHOWN).setText("Main library")
    assert window.undo.stack.canUndo()
    assert window.open_project(shutil.copy(campus, tmp_path / "other.loadledger"))
    _settle(qtbot, window)
    assert not window.undo.stack.canUndo() and not window.undo.stack.canRedo()


def test_the_budget_shows_display_names_and_the_unit_read_in(qtbot, window):
    window.show_meters()
    dialog = window.meters_dialog
    dialog.table.item(0, SHOWN).setText("Main library")
    unit = dialog.table.cellWidget(0, READ_IN)
    unit.set_value("MWh")
    unit.activated.emit(unit.currentIndex())
    dialog.close()
    screen = window.budget_screen
    window.show_step("Budget")
    screen.form.set_as_of(date(2026, 10, 15))
    screen.form.period.set_value("months")
    screen.form.months.setValue(2)
    screen.form.paths.setValue(200)
    screen.run()
    _settle(qtbot, window)
    run: BudgetRun = screen.budget.run
    table = screen.table
    assert "Main library (meter, read in MWh)" in table.titles()
    library = next(m for m in run.meters if m.name == LIBRARY)
    # a MWh is 1,000 kWh (NIST SP 811 (2008), B.8: both 3.6 E+06 J multiples)
    shown = table.value(LIBRARY, "total", READ_UNIT_HEADER)
    assert shown == pytest.approx(library.total.energy.mean / 1000.0)
    labs = next(m for m in run.meters if m.name == LABS)
    assert table.value(LABS, "total", "mean (kWh)") == pytest.approx(labs.total.energy.mean)
    save_screen(window, "budget-read-unit")
    _undo(qtbot, window)  # the unit
    assert READ_UNIT_HEADER not in table.headers
    assert "Main library (meter)" in table.titles()


def test_a_meter_joins_a_bill_account_and_the_change_is_undone(qtbot, window):
    """With the sample's electric bills added, a meter is counted under their account (so the
    budget's totals do not count that supply twice); Undo and Redo take it back and forth."""
    options = ReadOptions(timezone=SITE_ZONE)
    bills = read_file(SAMPLE / "electric-bills.csv", options)
    with _stored(window) as project:
        store_files(project, ImportedFiles([], [bills], [], options))
        (account,) = account_names(project)
    window.show_meters()
    dialog = window.meters_dialog
    assert not dialog.table.isColumnHidden(ACCOUNT)
    box = dialog.table.cellWidget(0, ACCOUNT)
    assert box.value() is None
    box.set_value(account)
    box.activated.emit(box.currentIndex())
    qtbot.waitUntil(lambda: dialog.table.cellWidget(0, ACCOUNT).value() == account)
    with _stored(window) as project:
        assert meter_accounts(project) == {LIBRARY: account}
    assert window.undo.stack.undoText() == f"count {LIBRARY} under bill account '{account}'"
    _undo(qtbot, window)
    with _stored(window) as project:
        assert meter_accounts(project) == {}
    qtbot.waitUntil(lambda: dialog.table.cellWidget(0, ACCOUNT).value() is None)
    _undo(qtbot, window, redo=True)
    with _stored(window) as project:
        assert meter_accounts(project) == {LIBRARY: account}
