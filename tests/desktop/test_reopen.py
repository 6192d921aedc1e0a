"""What the window carries over when a project is closed and opened again: the budget the
project keeps (shown and exportable) and the choices of the budget form."""

from __future__ import annotations

import math
from datetime import date

import pytest
from desktop_support import FITTED_METERS, RATE_CARD, fitted_campus, save_screen, wait_until_idle
from python_calamine import CalamineWorkbook

from desktop.main_window import MainWindow
from engine.project import Project


@pytest.fixture
def open_window(qtbot):
    """Opens ``path`` in a new main window, waiting for the Budget step's start-up work."""
    windows = []

    def opened(path) -> MainWindow:
        window = MainWindow()
        qtbot.addWidget(window)
        window.show()
        windows.append(window)
        assert window.open_project(path)
        wait_until_idle(qtbot, window.budget_screen)
        return window

    yield opened
    for window in windows:
        window.close()


def _known(value: float) -> float | None:
    return None if math.isnan(value) else value


def _figures(window: MainWindow) -> dict:
    """Every figure of the Budget step's table, by (name, period, header); blanks as None."""
    table = window.budget_screen.table
    run = window.budget_screen.budget.run
    names = [m.name for m in run.meters] + [u.group for u in run.utilities] + ["campus"]
    periods = [*run.months, "total"]
    return {
        (name, period, header): _known(table.value(name, period, header))
        for name in names
        for period in periods
        for header in table.headers[1:]
    }


def _cells(path) -> dict[str, list]:
    book = CalamineWorkbook.from_path(str(path))
    return {name: book.get_sheet_by_name(name).to_python() for name in book.sheet_names}


def _write(qtbot, window: MainWindow, path) -> None:
    window.show_step("Export")
    export = window.export_screen
    assert export.write_button.isEnabled()
    export.write_to(path)
    wait_until_idle(qtbot, export)
    assert export.notice.tone == "done", export.notice.text.text()


def test_the_kept_budget_and_the_form_come_back_with_the_project(qtbot, open_window, tmp_path):
    path = fitted_campus(tmp_path / f"campus{Project.EXTENSION}")
    first = open_window(path)
    assert first.budget_screen.budget is None  # a project without a budget shows none
    assert not first.export_screen.write_button.isEnabled()
    form = first.budget_screen.form
    form.set_as_of(date(2026, 9, 20))
    form.period.set_value("quarter")
    form.fiscal_start.set_value(10)
    form.fiscal_year.setValue(2027)  # named by the year it ends in
    form.quarter.setValue(1)
    form.weather.set_value("typical")
    form.tariff.path.setText(str(RATE_CARD))
    form.paths.setValue(300)
    chosen = form.choices()
    first.budget_screen.run()
    wait_until_idle(qtbot, first.budget_screen)
    assert first.budget_screen.notice.tone == "done", first.budget_screen.notice.text.text()
    shown = _figures(first)
    assert first.budget_screen.budget.run.months == ["2026-10", "2026-11", "2026-12"]
    _write(qtbot, first, tmp_path / "as-run.xlsx")
    first.close()

    again = open_window(path)
    screen = again.budget_screen
    assert screen.budget is not None
    assert f"kept in {path.name}, as it was run" in screen.summary.text()
    assert _figures(again) == shown
    assert screen.table.titles()[0] == f"Campus, all utilities added ({len(FITTED_METERS)} meters)"
    assert screen.plot.showing_plot
    assert screen.form.choices() == chosen
    again.show_step("Budget")
    save_screen(again, "budget-reopened")
    # The Export step writes the kept budget: the same workbook, cell for cell.
    _write(qtbot, again, tmp_path / "after-reopening.xlsx")
    assert _cells(tmp_path / "after-reopening.xlsx") == _cells(tmp_path / "as-run.xlsx")
