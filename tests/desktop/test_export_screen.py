"""The Export screen writes the last budget as the finance workbook on a worker; openpyxl and
pandas read the same monthly P50 back.

The project is the Budget screen tests' two sample meters from June 2025 with fitted daily
change-point models (see test_budget_screen.fitted_campus).
"""

from __future__ import annotations

from datetime import date
from pathlib import Path

import pandas as pd
import pytest
from desktop_support import save_screen, show_widget, wait_until_idle
from openpyxl import load_workbook
from PySide6.QtGui import QDesktopServices
from PySide6.QtWidgets import QFileDialog
from test_budget_screen import PATHS, fitted_campus

from desktop.export_screen import NO_BUDGET, ExportScreen
from desktop.main_window import MainWindow
from engine.budget import budget_months
from engine.project import Project
from engine.steps.budgeting import BudgetRequest, ProjectBudget, budget_project


@pytest.fixture(scope="module")
def campus(tmp_path_factory) -> Path:
    return fitted_campus(tmp_path_factory.mktemp("export") / f"campus{Project.EXTENSION}")


@pytest.fixture(scope="module")
def budget(campus) -> ProjectBudget:
    request = BudgetRequest(
        months=budget_months(start="2026-11", months=2),
        as_of=date(2026, 10, 31),
        weather="typical",
        paths=PATHS,
    )
    with Project.open(campus) as project:
        return budget_project(project, request)


@pytest.fixture
def screen(qtbot, budget):
    widget = show_widget(qtbot, ExportScreen(), (1100, 600))
    widget.set_budget(budget, "orrinvale")
    return widget


def _monthly_p50(path: Path) -> dict[tuple[str, str], float]:
    """(budget for, "YYYY-MM") → P50 of the month rows of the sheet "Monthly", by openpyxl."""
    book = load_workbook(path, read_only=True)  # keeps the file open until closed
    try:
        rows = list(book["Monthly"].iter_rows(values_only=True))
    finally:
        book.close()
    header_at = next(i for i, row in enumerate(rows) if row and "budget for" in row)
    header = list(rows[header_at])
    name, month = header.index("budget for"), header.index("month")
    p50 = next(i for i, words in enumerate(header) if str(words).startswith("P50"))
    return {
        (row[name], f"{row[month]:%Y-%m}"): row[p50]
        for row in rows[header_at + 1 :]
        if row and hasattr(row[month], "year")
    }


def test_the_workbook_is_written_and_reads_back_the_same_p50(
    qtbot, screen, budget, tmp_path, monkeypatch
):
    target = tmp_path / "finance" / "orrinvale-budget.xlsx"
    target.parent.mkdir()
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *args: (str(target), ""))
    assert "2026-11 to 2026-12" in screen.what.text() and not screen.go_button.isVisible()
    screen.write_button.click()
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert target.exists() and str(target.resolve()) in screen.where.text()

    # Numbers pass through the file's decimal text, so they agree to about 15 digits.
    read = _monthly_p50(target)
    for meter in budget.run.meters:
        for month in meter.months:
            shown = month.energy.quantiles["50"]
            assert read[(meter.name, month.period)] == pytest.approx(shown, rel=1e-12)
    campus = budget.run.campus.months[1].energy.quantiles["50"]
    assert read[("campus", "2026-12")] == pytest.approx(campus, rel=1e-12)
    # pandas, through the calamine reader, reads the same sheet to the same figures.
    header_row = next(
        i for i, row in enumerate(load_workbook(target)["Monthly"].values) if "budget for" in row
    )
    frame = pd.read_excel(target, sheet_name="Monthly", header=header_row, engine="calamine")
    library = frame[(frame["budget for"] == "Library") & (frame["month"] != "Total")]
    p50 = next(c for c in frame.columns if str(c).startswith("P50"))
    assert [f"{pd.Timestamp(m):%Y-%m}" for m in library["month"]] == ["2026-11", "2026-12"]
    expected = [m.energy.quantiles["50"] for m in budget.run.meters[0].months]
    assert library[p50].tolist() == pytest.approx(expected, rel=1e-12)

    opened = []
    monkeypatch.setattr(QDesktopServices, "openUrl", lambda url: opened.append(url) or True)
    screen.open_button.click()
    assert [Path(url.toLocalFile()) for url in opened] == [target.parent.resolve()]
    save_screen(screen, "export")


def test_a_missing_folder_is_named_in_a_message(qtbot, screen, tmp_path):
    screen.write_to(tmp_path / "no-such-folder" / "budget.xlsx")
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "problem"
    words = screen.notice.text.text()
    assert "budget.xlsx" in words and "does not exist" in words and "Traceback" not in words


def test_without_a_budget_the_window_offers_the_budget_step(qtbot, campus, tmp_path):
    window = MainWindow()
    qtbot.addWidget(window)
    window.show()
    try:
        assert window.open_project(campus)
        window.show_step("Export")
        export = window.export_screen
        assert export.what.text() == NO_BUDGET and not export.write_button.isEnabled()
        export.go_button.click()
        assert window.screens.currentWidget() is window.budget_screen
        wait_until_idle(qtbot, window.budget_screen)
        window.budget_screen.form.paths.setValue(PATHS)
        window.budget_screen.run()
        wait_until_idle(qtbot, window.budget_screen)
        assert export.budget is window.budget_screen.budget is not None
        assert export.write_button.isEnabled() and not export.go_button.isVisible()
        save_screen(window, "main-window-budget")
    finally:
        window.close()


def test_a_name_typed_without_the_extension_gets_xlsx(qtbot, screen, tmp_path, monkeypatch):
    typed = tmp_path / "march budget"
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *args: (str(typed), ""))
    screen.write_button.click()
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    written = tmp_path / "march budget.xlsx"
    assert written.exists() and not typed.exists()
    book = load_workbook(written)
    assert book["Monthly"].max_row > 1
    # Printed pages are headed with the project's name, as the command line's are.
    assert book["Monthly"].oddHeader.left.text == "orrinvale"


def test_the_export_step_is_ticked_once_its_workbook_is_written(
    qtbot, campus, budget, tmp_path, monkeypatch
):
    """The steps' guide kept saying "Write the finance workbook." after it was written; now
    the step is ticked and the guide names the workbook and the next thing, until another
    budget replaces the one written."""
    window = MainWindow()
    qtbot.addWidget(window)
    window.show()
    try:
        assert window.open_project(campus)
        window.budget_screen.budget_changed.emit(budget)  # as when a budget run ends
        window.show_step("Export")
        assert not window.steps.currentItem().text().startswith("✓")
        target = tmp_path / "finance.xlsx"
        monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *args: (str(target), ""))
        window.export_screen.write_button.click()
        wait_until_idle(qtbot, window.export_screen)
        assert target.exists()
        assert window.steps.currentItem().text() == "✓ Export"
        guide = window.guide.text()
        assert "Written: finance.xlsx" in guide and "Write the finance workbook" not in guide
        assert "Adopt" in guide
        window.budget_screen.budget_changed.emit(None)  # no budget shown: nothing written
        assert window.steps.currentItem().text() == "Export"
    finally:
        window.close()


def test_the_budget_line_counts_bill_accounts_apart_from_meters(budget):
    """The sample's electric account made the line say "9 meters" beside a status bar of 8."""
    from dataclasses import replace

    from desktop.export_screen import budget_words

    assert ", 2 meters, " in budget_words(budget)
    account = replace(budget.run.meters[0], name="electric-bills", source="bills")
    with_account = replace(budget, run=replace(budget.run, meters=[*budget.run.meters, account]))
    assert ", 2 meters and 1 bill account, " in budget_words(with_account)
