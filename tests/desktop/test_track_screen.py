"""The Track step tracks a budget adopted in the window and shows what the engine's ``track``
reports, on a laptop screen.

The project holds two of the sample campus's electricity meters (Library and Science Labs)
from June 2025 on, with the sample's weather and calendar, each with a daily change-point model
chosen by the engine's fit wizard; the sample's invented rate card prices them. A budget of
July to October 2026 on readings up to 30 June is adopted on the Budget step, then tracked as
of 15 September: two complete months, one under way, one not begun.
"""

from __future__ import annotations

import math
import shutil
from datetime import date
from pathlib import Path

import openpyxl
import pytest
from desktop_support import RATE_CARD, fitted_campus, save_screen, wait_until_idle
from PySide6.QtCore import QDate, Qt
from PySide6.QtWidgets import QFileDialog

from desktop.main_window import MainWindow
from desktop.track_screen import NOTHING_ADOPTED
from desktop.tracking_jobs import UNDER_WAY_WORDS, tracked, workbook_name
from engine.project import Project
from engine.steps.tracking import track_budget

LAPTOP = (1280, 720)
NAME = "FY test"
ADOPTED_AS_OF = date(2026, 6, 30)
TRACKED_AS_OF = date(2026, 9, 15)
MONTHS = 4
PATHS = 200
#: Headers of the month table (the tracking workbook's) and the report field each shows.
ENERGY_FIELDS = {
    "budget to date (kWh)": "budget_to_date",
    "actual (kWh)": "actual",
    "variance (kWh)": "variance_kwh",
    "weather effect (kWh)": "weather_kwh",
    "usage effect (kWh)": "usage_kwh",
}
COST_FIELDS = {
    "actual": "actual_cost",
    "variance": "variance_cost",
    "weather effect": "weather_cost",
    "usage effect": "usage_cost",
    "price effect": "price_cost",
}


@pytest.fixture(scope="module")
def unadopted(tmp_path_factory) -> Path:
    """The fitted campus before any budget, copied by each test."""
    return fitted_campus(tmp_path_factory.mktemp("track") / f"fitted{Project.EXTENSION}")


@pytest.fixture
def window(qtbot, unadopted, tmp_path):
    widget = MainWindow()
    qtbot.addWidget(widget)
    widget.resize(*LAPTOP)
    widget.show()
    assert widget.open_project(Path(shutil.copy(unadopted, tmp_path)))
    wait_until_idle(qtbot, widget.budget_screen)  # the as-of date is looked up on a worker
    yield widget
    widget.close()


def _go_to_track(qtbot, window: MainWindow) -> None:
    qtbot.keyClick(window, Qt.Key.Key_7, Qt.KeyboardModifier.ControlModifier)
    assert window.screens.currentWidget() is window.track_screen


def _adopt(qtbot, window: MainWindow) -> None:
    """Budget July to October 2026 with the rate card on the Budget step and adopt it."""
    window.show_step("Budget")
    budget = window.budget_screen
    budget.form.set_as_of(ADOPTED_AS_OF)
    budget.form.period.set_value("months")
    budget.form.months.setValue(MONTHS)
    budget.form.paths.setValue(PATHS)
    budget.form.tariff.path.setText(str(RATE_CARD))
    budget.run()
    wait_until_idle(qtbot, budget)
    assert budget.notice.tone == "done", budget.notice.text.text()
    budget.ask_adopt(NAME)
    wait_until_idle(qtbot, budget)
    assert budget.notice.tone == "done", budget.notice.text.text()


def _track(qtbot, screen, day: date) -> None:
    screen.as_of.setDate(QDate(day.year, day.month, day.day))
    screen.track_button.click()
    wait_until_idle(qtbot, screen)


def _same(shown, expected) -> bool:
    if expected is None:
        return shown is None or math.isnan(shown)
    return shown == pytest.approx(expected, rel=1e-12)


def _check_item_against(screen, group: dict, report: dict) -> None:
    """Every figure the table shows for ``group``'s months is the engine's."""
    money = f" ({report['currency']})"
    levels = [str(level) for level in report["levels"]]
    for month in group["months"]:
        period = month["month"]
        for level in levels:
            header = f"budget P{level} (kWh)"
            assert screen.table.value(period, header) == month["budget"]["quantiles"][level]
        for header, field in ENERGY_FIELDS.items():
            assert _same(screen.table.value(period, header), month[field]), (period, header)
        for words, field in COST_FIELDS.items():
            shown = screen.table.value(period, f"cost: {words}{money}")
            assert _same(shown, month[field]), (period, words)
        flag = screen.table.value(period, f"outside P{levels[0]}–P{levels[-1]}")
        assert flag == {None: "", True: "outside", False: "inside"}[month["outside_range"]]


def test_nothing_is_tracked_until_a_budget_is_adopted(qtbot, window):
    _go_to_track(qtbot, window)
    screen = window.track_screen
    assert "No budget adopted yet" in window.guide.text()
    assert not screen.track_button.isEnabled() and not screen.export_button.isEnabled()
    assert screen.plot.note.text() == NOTHING_ADOPTED and screen.plot.stack.currentIndex() == 1
    assert screen.go_button.isVisible()
    screen.go_button.click()
    assert window.screens.currentWidget() is window.budget_screen


def test_an_adopted_budget_is_tracked_as_the_engine_tracks_it_and_exported(
    qtbot, window, tmp_path, monkeypatch, capfd
):
    _adopt(qtbot, window)
    _go_to_track(qtbot, window)
    screen = window.track_screen
    assert [screen.budgets.itemText(i) for i in range(screen.budgets.count())] == [NAME]
    assert "1 adopted budget: FY test" in window.guide.text()
    assert screen.track_button.isEnabled() and not screen.go_button.isVisible()

    # An as-of date before the budget begins is refused in words; nothing is shown.
    _track(qtbot, screen, ADOPTED_AS_OF)
    assert screen.notice.tone == "problem" and "comes before the budget" in (
        screen.notice.text.text()
    )
    assert screen.report is None and not screen.export_button.isEnabled()
    # Cancel stops a run at its next step.
    screen.as_of.setDate(QDate(2026, 9, 15))
    screen.track_button.click()
    screen.task_bar.cancel_button.click()
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "info" and "Stopped tracking" in screen.notice.text.text()

    _track(qtbot, screen, TRACKED_AS_OF)
    assert screen.notice.tone == "done", screen.notice.text.text()
    with Project.open(window.project.path) as project:
        expected = track_budget(project, NAME, as_of=TRACKED_AS_OF)
    titles = [screen.pick.itemText(i) for i in range(screen.pick.count())]
    assert titles[0].startswith("Campus") and titles[-2:] == [
        "Library (meter)",
        "Science Labs (meter)",
    ]
    for item in tracked(expected):
        screen.show_pick(item.scope, item.key)
        _check_item_against(screen, item.group, expected)
        statuses = [screen.table.value(m["month"], "status") for m in item.months]
        assert statuses == ["complete", "complete", UNDER_WAY_WORDS, "not begun"]
        complete = [m["actual"] for m in item.months if m["complete"]]
        assert list(screen.plot.drawn_actual()) == pytest.approx(complete, rel=1e-12)
        notes = screen.notes.toPlainText()
        assert f"{item.group['outlook']['quantiles']['50']:,.0f}" in notes
        assert f"{item.group['adopted_total']['quantiles']['50']:,.0f}" in notes
        assert "not a design load" in notes
    # The months not begun leave the actual blank; the parts add up to the variance as shown.
    assert screen.table.value("2026-10", "actual (kWh)") is None
    for period in ("2026-07", "2026-08", "2026-09"):
        parts = sum(screen.table.value(period, f"{h} effect (kWh)") for h in ("weather", "usage"))
        assert parts == pytest.approx(screen.table.value(period, "variance (kWh)"), rel=1e-9)

    hint = window.minimumSizeHint()
    assert hint.width() <= LAPTOP[0] and hint.height() <= LAPTOP[1], hint
    assert window.size().toTuple() == LAPTOP
    screen.show_pick("campus", "campus")
    qtbot.wait(50)  # let the chart's axes lay out and paint
    save_screen(window, "track-step")

    # A name typed without the extension gets .xlsx, as the finance export does.
    typed = tmp_path / "tracking for finance"
    monkeypatch.setattr(
        QFileDialog, "getSaveFileName", lambda *args: (str(typed), "Excel workbooks (*.xlsx)")
    )
    screen.export_button.click()
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert screen.written == typed.with_name(typed.name + ".xlsx").resolve()
    sheet = openpyxl.load_workbook(screen.written)["Tracking"]
    assert NAME in sheet["A1"].value and TRACKED_AS_OF.isoformat() in sheet["A1"].value
    rows = [[cell.value for cell in row] for row in sheet.iter_rows()]
    header = next(row for row in rows if "actual (kWh)" in row)  # the campus block comes first
    july = next(row for row in rows if row[0] == "2026-07")
    campus_july = expected["campus"]["months"][0]
    assert july[header.index("actual (kWh)")] == pytest.approx(campus_july["actual"], rel=1e-12)
    assert july[header.index("usage effect (kWh)")] == pytest.approx(
        campus_july["usage_kwh"], rel=1e-12
    )
    assert "Traceback" not in capfd.readouterr().err


def test_a_suggested_workbook_name_keeps_only_safe_characters():
    assert workbook_name("FY 2027/28") == "tracking-FY-2027-28.xlsx"
    assert workbook_name("FY2027") == "tracking-FY2027.xlsx"
    assert workbook_name("///") == "tracking-budget.xlsx"
