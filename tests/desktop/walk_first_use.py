"""A first use of the window, walked as a person would: from an empty start with only the
sample's files to a finance workbook, at 1,280 × 720, clicking only what a person can click.

Not part of the test run (the name does not start with ``test_``; it fits and budgets the
whole sample, which takes minutes). Run it on its own, keeping what the window printed:

    QT_QPA_PLATFORM=offscreen .venv/bin/python -m pytest tests/desktop/walk_first_use.py \
        -s -q 2> out/walk/stderr.txt

Each screen is saved to ``out/walk/NN-name.png`` for a person to look at; the system's file
dialogs are answered with the sample's files (the only stand-in: a native dialog cannot be
clicked offscreen). Two bad files are tried on the Files screen first.
"""

from __future__ import annotations

import time
from pathlib import Path

from desktop_support import LAPTOP, RATE_CARD, SAMPLE, TASK_TIMEOUT_MS
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QComboBox, QFileDialog, QPushButton, QWidget

from desktop.main_window import STEP_NAMES, MainWindow
from desktop.meters_dialog import NAME, SHOWN
from desktop.models_screen import CHOICE

ROOT = Path(__file__).resolve().parents[2]
SHOTS = ROOT / "out" / "walk"
SAMPLE_FILES = [
    "electricity-15min.xlsx",
    "gas-boilerhouse-daily.csv",
    "chilled-water-plant.csv",
    "electric-bills.csv",
    "weather-station.csv",
    "campus-calendar.csv",
]
FIT_TIMEOUT_MS = 20 * 60_000  # the whole sample on a shared 2-core machine
#: What a person calls two of the sample's meters (set in Project ▸ Meters, units and calendar).
DISPLAY_NAMES = {"gas-boilerhouse-daily": "Boiler house gas", "PLANT-CHW-E": "East chiller plant"}


class Walk:
    """The window, the pictures taken so far and the clock."""

    def __init__(self, qtbot, window: MainWindow, folder: Path) -> None:
        self.qtbot, self.window, self.folder = qtbot, window, folder
        self.number = 0
        self.started = time.monotonic()

    def shot(self, name: str, widget: QWidget | None = None) -> None:
        """Save what the window shows, numbered in the order of the walk."""
        self.qtbot.wait(100)
        self.number += 1
        path = SHOTS / f"{self.number:02d}-{name}.png"
        assert (widget or self.window).grab().save(str(path))
        print(f"[{time.monotonic() - self.started:7.1f} s] {path.name}")

    def click(self, button: QPushButton) -> None:
        assert button.isVisible() and button.isEnabled(), button.text()
        self.qtbot.mouseClick(button, Qt.MouseButton.LeftButton)

    def step(self, name: str) -> None:
        """Click the step's entry in the list down the side."""
        steps = self.window.steps
        item = steps.item(STEP_NAMES.index(name))
        where = steps.visualItemRect(item).center()
        self.qtbot.mouseClick(steps.viewport(), Qt.MouseButton.LeftButton, pos=where)
        assert self.window.screens.currentIndex() == STEP_NAMES.index(name)

    def pick(self, box: QComboBox, words: str) -> None:
        """Choose the entry starting with ``words`` as a click in the open list would."""
        position = next(i for i in range(box.count()) if box.itemText(i).startswith(words))
        box.setCurrentIndex(position)
        box.activated.emit(position)

    def idle(self, screen, timeout: int = TASK_TIMEOUT_MS) -> None:
        self.qtbot.waitUntil(lambda: not screen.runner.busy, timeout=timeout)
        self.qtbot.wait(50)


def _answer_open(monkeypatch, paths: list[Path]) -> None:
    monkeypatch.setattr(
        QFileDialog, "getOpenFileNames", lambda *_a, **_k: ([str(p) for p in paths], "")
    )


def _answer_one(monkeypatch, path: Path) -> None:
    monkeypatch.setattr(QFileDialog, "getOpenFileName", lambda *_a, **_k: (str(path), ""))


def _answer_save(monkeypatch, path: Path) -> None:
    monkeypatch.setattr(QFileDialog, "getSaveFileName", lambda *_a, **_k: (str(path), ""))


def _bad_files(folder: Path) -> list[Path]:
    """An Excel file with no time stamps and a CSV with a header only."""
    from openpyxl import Workbook

    book = Workbook()
    sheet = book.active
    sheet.append(["Building", "Floor area (m²)", "Annual kWh"])
    sheet.append(["Library", 5400, 812000])
    sheet.append(["Science Labs", 7100, 1630000])
    excel = folder / "floor-areas.xlsx"
    book.save(excel)
    header = folder / "empty-export.csv"
    header.write_text("Timestamp,Library (kWh)\n", encoding="utf-8")
    return [excel, header]


def test_first_use_from_sample_files_to_a_workbook(qtbot, monkeypatch, tmp_path):
    SHOTS.mkdir(parents=True, exist_ok=True)
    window = MainWindow()
    qtbot.addWidget(window)
    window.resize(*LAPTOP)
    window.show()
    walk = Walk(qtbot, window, tmp_path)
    files = window.files_screen
    walk.shot("start")

    # Two bad files first: each named in a clear message, nothing created.
    walk.pick(files.site_zone, "America/Chicago")
    _answer_open(monkeypatch, _bad_files(tmp_path))
    walk.click(files.add_button)
    walk.idle(files)
    walk.shot("files-bad-excel")
    files.file_table.selectRow(1)
    walk.shot("files-bad-csv")
    target = tmp_path / "bad.loadledger"
    _answer_save(monkeypatch, target)
    print("create enabled with bad files only:", files.create_button.isEnabled())
    print("store hint:", files.store_hint.text())
    if files.create_button.isEnabled():
        walk.click(files.create_button)
        walk.idle(files)
        walk.shot("files-bad-create")
        print("notice after create with bad files:", files.notice.text.text())
    assert not target.exists() and not list(tmp_path.glob("bad*"))
    for _ in range(2):
        files.file_table.selectRow(0)
        walk.click(files.remove_button)

    # The sample's files, the site's zone typed, the calendar's holidays picked.
    _answer_open(monkeypatch, [SAMPLE / name for name in SAMPLE_FILES])
    walk.click(files.add_button)
    walk.idle(files, FIT_TIMEOUT_MS)
    walk.shot("files-read")
    walk.pick(files.holidays.country, "United States")
    walk.idle(files, FIT_TIMEOUT_MS)
    for row, name in enumerate(SAMPLE_FILES):
        files.file_table.selectRow(row)
        walk.shot(f"files-{Path(name).stem}")
    project = tmp_path / "orrinvale.loadledger"
    _answer_save(monkeypatch, project)
    walk.click(files.create_button)
    walk.idle(files, FIT_TIMEOUT_MS)
    walk.shot("files-created")
    print("files notice:", files.notice.text.text())
    assert window.project is not None, files.notice.text.text()

    # Project ▸ Meters, units and calendar…: two meters get the names people use for them.
    window.meters_action.trigger()
    dialog = window.meters_dialog
    qtbot.wait(200)
    table = dialog.table
    for row in range(table.rowCount()):
        raw = table.item(row, NAME).text()
        if raw in DISPLAY_NAMES:
            table.item(row, SHOWN).setText(DISPLAY_NAMES[raw])  # typed into the cell
    walk.shot("meters-dialog", dialog)
    print("meters dialog notice:", dialog.notice.text.text())
    dialog.close()

    walk.click(window.next_button)  # Cleaning
    cleaning = window.cleaning_screen
    walk.idle(cleaning, FIT_TIMEOUT_MS)
    walk.shot("cleaning")
    walk.click(cleaning.apply_everywhere_button)
    walk.idle(cleaning, FIT_TIMEOUT_MS)
    walk.shot("cleaning-applied")
    print("cleaning notice:", cleaning.notice.text.text())

    walk.click(window.next_button)  # Patterns
    patterns = window.patterns_screen
    walk.idle(patterns, FIT_TIMEOUT_MS)
    walk.shot("patterns")

    walk.click(window.next_button)  # Models: the guided fit
    models = window.models_screen
    walk.idle(models, FIT_TIMEOUT_MS)
    walk.shot("models-readings")
    walk.click(models.next_button)
    walk.shot("models-families")
    walk.click(models.fit_button)
    qtbot.wait(3000)
    walk.shot("models-backtest-running")
    walk.idle(models, FIT_TIMEOUT_MS)
    walk.shot("models-ranking")
    while models.page() < CHOICE:
        walk.click(models.next_button)
    walk.shot("models-choice")
    print("models notice:", models.notice.text.text())
    walk.click(models.choice_page.accept_button)  # on to the Budget

    budget = window.budget_screen
    assert window.screens.currentWidget() is budget
    walk.idle(budget)
    walk.shot("budget-form")
    _answer_one(monkeypatch, RATE_CARD)
    walk.click(budget.form.tariff.choose)
    walk.click(budget.budget_button)
    qtbot.wait(3000)
    walk.shot("budget-running")
    said: list[str] = []
    while budget.runner.busy:  # what the task bar tells the person, as it changes
        words = budget.task_bar.message.text()
        if not said or said[-1] != words:
            said.append(words)
        qtbot.wait(100)
    walk.idle(budget, FIT_TIMEOUT_MS)
    print("budget task bar said:", *said, sep="\n  ")
    walk.shot("budget")
    print("budget notice:", budget.notice.text.text())
    print("budget notes:", budget.notes.toPlainText())
    budget.table.table.scrollToBottom()
    walk.shot("budget-table-end")

    walk.click(window.next_button)  # Export
    export = window.export_screen
    walk.shot("export")
    workbook = tmp_path / "orrinvale-budget"  # typed without ".xlsx", as people do
    _answer_save(monkeypatch, workbook)
    walk.click(export.write_button)
    walk.idle(export, FIT_TIMEOUT_MS)
    walk.shot("export-written")
    print("export notice:", export.notice.text.text())
    written = workbook.with_name(workbook.name + ".xlsx")
    assert written.is_file()
    (SHOTS / written.name).write_bytes(written.read_bytes())
    window.close()
    (SHOTS / project.name).write_bytes(project.read_bytes())
