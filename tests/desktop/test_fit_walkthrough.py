"""The Models step walks a first-time user through five pages, in the real window at 1,280 ×
720: the readings, the families, the backtest as it runs (and cancels), the ranking in words,
and the choice with what the chosen model says. Every number in the words is the engine's
own, read back from the project file; every page is saved as a picture to look at.

The project holds the sample campus's Library meter from June 2025 on, with its weather and
calendar; two families over three backtest months keep the fit quick.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pandas as pd
import pytest
from desktop_support import LAPTOP, save_screen, short_sample_project, wait_until_idle

from desktop.fit_pages import PAGES
from desktop.main_window import STEP_NAMES, MainWindow
from desktop.model_tables import MODEL_ROLE
from desktop.models_screen import BACKTEST, CHOICE, FAMILIES, RANKING, READINGS
from engine.backtest import BacktestResult
from engine.cleaning.steps import range_step
from engine.fit_brief import family_notes, ranking_sentence, readings_brief
from engine.models import MODEL_FAMILIES
from engine.project import Project
from engine.steps.fitting import chosen_model, fit_meter
from engine.steps.labels import temperature_unit
from engine.steps.prepared_site import prepare_site

FAMILIES_TRIED = ("calendar_regression", "seasonal_naive")
ORIGINS = 3
SHUT = ("2025-12-24 06:00", "2026-01-02 06:00")  # UTC: the winter shutdown, left out


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> Path:
    path = short_sample_project(tmp_path_factory.mktemp("walk") / f"library{Project.EXTENSION}")
    with Project.open(path) as project:
        start, end = (pd.Timestamp(t, tz="UTC") for t in SHUT)
        step = range_step("exclude", "Library", start, end, "winter shutdown")
        project.add_cleaning_step(step.to_dict())
    return path


@pytest.fixture
def window(laptop_window):
    return laptop_window


def _look(qtbot, window: MainWindow, name: str) -> None:
    """The page fits the laptop screen; save it for a person to look at."""
    qtbot.wait(30)
    hint = window.minimumSizeHint()
    assert hint.width() <= LAPTOP[0] and hint.height() <= LAPTOP[1], (name, hint)
    assert window.size().toTuple() == LAPTOP
    save_screen(window, f"fit-walkthrough-{name}")


def _title(screen) -> str:
    return screen.title.text()


def test_a_first_fit_walks_through_five_pages_to_the_budget(
    qtbot, window, library, tmp_path, capfd
):
    path = Path(shutil.copyfile(library, tmp_path / library.name))
    assert window.open_project(path)
    window.show_step("Models")
    screen = window.models_screen
    wait_until_idle(qtbot, screen)
    with Project.open(path) as project:
        brief = readings_brief(prepare_site(project, ["Library"]).meter("Library"))

    # 1 of 5: the readings, in the engine's words and numbers.
    assert screen.page() == READINGS and "1 of 5" in _title(screen)
    assert not screen.back_button.isEnabled() and screen.next_button.isEnabled()
    shown = screen.readings_page.text.toPlainText()
    assert all(line in shown for line in brief.lines())
    assert f"{brief.intervals:,} hourly readings on {brief.days:,} days" in shown
    assert "(9.0 days) out: 2025-12-24 to 2026-01-01: left out of fitting (winter shutdown)" in (
        shown
    )
    _look(qtbot, window, "1-readings")

    # 2 of 5: the families and why; nothing further until they are compared.
    screen.next_button.click()
    assert screen.page() == FAMILIES and "2 of 5" in _title(screen)
    screen.families.tick(FAMILIES_TRIED)
    screen.origins.setValue(ORIGINS)
    notes = screen.families_page.notes.toPlainText()
    for note in family_notes(FAMILIES_TRIED):
        assert note.how in notes and note.why in notes
    months = brief.backtest_months(ORIGINS)
    assert f"forecasts {months[0]} to {months[-1]}" in screen.families_page.months.text()
    assert not screen.next_button.isEnabled()
    _look(qtbot, window, "2-families")

    # 3 of 5: the backtest runs on a worker; Cancel stops it and keeps nothing.
    screen.fit()
    assert screen.page() == BACKTEST and "3 of 5" in _title(screen)
    screen.task_bar.cancel_button.click()
    wait_until_idle(qtbot, screen)
    assert "Stopped" in screen.notice.text.text()
    assert "Stopped" in screen.backtest_page.state.text()
    with Project.open(path) as project:
        assert not project.results("model", "Library")
    screen.fit()
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    log = screen.backtest_page.log
    steps = [log.item(r).text() for r in range(log.count())]
    for family in FAMILIES_TRIED:  # every family at every backtest month, as it ran
        for month in months:
            assert f"Backtest from {month}: {MODEL_FAMILIES[family].label}" in steps
    assert screen.backtest.showing_plot and screen.next_button.isEnabled()
    _look(qtbot, window, "3-backtest")

    # 4 of 5: the ranking in words, with the numbers the project keeps.
    with Project.open(path) as project:
        _, choice = chosen_model(project, "Library")
        backtest = BacktestResult.from_dict(project.last_result("backtest", "Library")["body"])
    screen.next_button.click()
    assert screen.page() == RANKING and "4 of 5" in _title(screen)
    words = screen.why.toPlainText()
    sentence = ranking_sentence(choice, backtest)
    assert sentence in words
    row = next(r for r in choice["ranking"] if r["model"] == choice["chosen"])
    assert f"within {row['month-total MAPE %']:.1f} % on {ORIGINS} past months" in sentence
    assert all(r["reason"] in words for r in choice["ranking"])
    _look(qtbot, window, "4-ranking")

    # 5 of 5: keep the recommendation or choose another; what the chosen model says.
    screen.next_button.click()
    assert screen.page() == CHOICE and "5 of 5" in _title(screen)
    assert not screen.next_button.isEnabled()
    recommended = choice["chosen"]
    assert "the recommended model" in screen.choice_page.words.text()
    _check_statements(screen, path)
    _look(qtbot, window, "5-choice")
    other = _select_other(screen, recommended)
    screen.use_button.click()
    wait_until_idle(qtbot, screen)
    assert screen.report.chosen == other and screen.page() == CHOICE
    assert "chosen by hand over the recommended" in screen.choice_page.words.text()
    assert sentence in screen.why.toPlainText()  # the ranking still names the recommendation
    assert screen.residuals.showing_plot  # and shows where the recommended model misses
    _check_statements(screen, path)
    _select(screen, recommended)
    screen.use_button.click()
    wait_until_idle(qtbot, screen)
    assert screen.report.chosen == recommended
    assert "the recommended model" in screen.choice_page.words.text()
    with Project.open(path) as project:
        assert chosen_model(project, "Library")[1] == choice  # the wizard's choice, restored

    # The side checklist follows; accepting goes on to the Budget step.
    assert window.steps.item(STEP_NAMES.index("Models")).text() == "✓ Models"
    screen.choice_page.accept_button.click()
    assert STEP_NAMES[window.steps.currentRow()] == "Budget"

    # Back down the pages, and F1 explains every one of them.
    window.show_step("Models")
    for page in range(CHOICE, READINGS, -1):
        assert screen.page() == page
        screen.back_button.click()
    assert screen.page() == READINGS
    window.show_help()
    assert window.help_dialog.windowTitle() == "Help: Models"
    manual = window.help_dialog.browser.toPlainText()
    assert manual.startswith("Models") and all(short in manual for short, _ in PAGES)
    assert "Traceback" not in capfd.readouterr().err


def _check_statements(screen, path: Path) -> None:
    """What the chosen model says is the kept model's own statements, in physical units."""
    with Project.open(path) as project:
        model, _ = chosen_model(project, "Library")
        shown = temperature_unit(project)
    expected = model.coefficients_table(shown)
    table = screen.coefficients.table
    if shown == "°F":  # the sample's weather came in °F: no statement is left in °C
        assert not any("°C" in table.item(r, c).text() for r in range(table.rowCount())
                       for c in (0, 2, 3))  # fmt: skip
    assert table.rowCount() == len(expected)
    assert [table.item(r, 0).text() for r in range(table.rowCount())] == list(expected["term"])
    assert [table.item(r, 2).text() for r in range(table.rowCount())] == list(expected["unit"])


def _select(screen, model: str) -> None:
    table = screen.ranking.table
    row = next(r for r in range(table.rowCount()) if table.item(r, 1).data(MODEL_ROLE) == model)
    table.selectRow(row)
    assert screen.use_button.isEnabled()


def _select_other(screen, model: str) -> str:
    table = screen.ranking.table
    other = next(
        table.item(r, 1).data(MODEL_ROLE)
        for r in range(table.rowCount())
        if table.item(r, 1).data(MODEL_ROLE) != model
    )
    _select(screen, other)
    return other


def test_a_meter_with_a_kept_model_opens_on_its_readings_and_reaches_every_page(
    qtbot, window, library, tmp_path
):
    path = Path(shutil.copyfile(library, tmp_path / library.name))
    with Project.open(path) as project:
        fit_meter(project, "Library", families=["daily_change_point"], origins=2)
    assert window.open_project(path)
    window.show_step("Models")
    screen = window.models_screen
    wait_until_idle(qtbot, screen)
    assert screen.page() == READINGS and screen.report is not None
    for page in range(FAMILIES, CHOICE + 1):
        screen.next_button.click()
        assert screen.page() == page
    # The kept backtest's month totals are drawn; the words say it was read, not refitted.
    assert screen.backtest.showing_plot and screen.report.trace.resolution == "month"
    assert "In use: daily change-point regression" in screen.choice_page.words.text()
    with Project.open(path) as project:
        assert len(project.results("model", "Library")) == 1
