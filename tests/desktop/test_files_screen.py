"""The Files screen reads real files on a worker, shows what it understood, and stores them."""

from __future__ import annotations

from html import unescape

import numpy as np
import pandas as pd
import pytest
from desktop_support import (
    SAMPLE,
    SITE_ZONE,
    save_screen,
    wait_until_idle,
    write_hourly_meter,
    write_hourly_weather,
)
from PySide6.QtCore import QMimeData, QPointF, Qt, QUrl
from PySide6.QtGui import QDropEvent

from desktop.files_screen import FilesScreen
from desktop.session import Session
from desktop.understood_view import NUMBER_ROLE
from engine.calendar import CampusCalendar
from engine.cli.main import main as command_line
from engine.project import Project
from engine.reading import ReadOptions, describe, read_file

#: NIST SP 811 (2008), Appendix B.8: 1 kWh = 3.6 E+06 J, so 1 MWh = 3.6 E+09 J = 1000 kWh.
KWH_PER_MWH = 3.6e9 / 3.6e6


@pytest.fixture
def screen(qtbot):
    widget = FilesScreen(Session())
    qtbot.addWidget(widget)
    widget.resize(1400, 900)
    widget.show()
    yield widget
    widget.session.close()


def _rows(table) -> list[dict]:
    headers = [table.horizontalHeaderItem(c).text() for c in range(table.columnCount())]
    return [
        {header: table.item(r, c) for c, header in enumerate(headers)}
        for r in range(table.rowCount())
    ]


def _drop(widget, paths) -> None:
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(path)) for path in paths])
    event = QDropEvent(
        QPointF(20, 20),
        Qt.DropAction.CopyAction,
        mime,
        Qt.MouseButton.LeftButton,
        Qt.KeyboardModifier.NoModifier,
    )
    widget.dropEvent(event)


def test_the_sample_workbook_is_read_on_a_worker_and_every_meter_shown(qtbot, screen):
    path = SAMPLE / "electricity-15min.xlsx"
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([path])
    assert screen.runner.busy  # the read runs on a worker, not in this call
    wait_until_idle(qtbot, screen)

    expected = describe(read_file(path, ReadOptions(timezone=SITE_ZONE)))
    rows = _rows(screen.view.table)
    assert [row["Meter"].text() for row in rows] == [m["name"] for m in expected["meters"]]
    # Pandas reading the workbook on its own: each meter's total is its column's sum in kWh.
    sheet = pd.read_excel(path, sheet_name="Interval export", header=3, engine="calamine")
    for row, meter in zip(rows, expected["meters"], strict=True):
        total = row["Total kWh"].data(NUMBER_ROLE)
        assert total == meter["total_kwh"]
        assert row["Total kWh"].text() == f"{meter['total_kwh']:,.1f}"
        assert total == pytest.approx(sheet[f"{meter['name']} (kWh)"].sum(), abs=1e-3)
        assert row["Readings"].data(NUMBER_ROLE) == meter["count"]
        assert row["Interval"].text() == "15 min"
        assert row["Stamps mark"].text() == "interval start"
        assert row["Because"].toolTip() == meter["stamps_note"]
    shown = screen.view.findings.topLevelItemCount()
    assert shown == sum(len(m["findings"]) for m in expected["meters"]) + len(expected["findings"])
    assert screen.file_table.item(0, 2).text() == "read: 5 meters"
    assert "Sheet 'Interval export', header on row 4" in screen.view.summary.text()
    assert screen.create_button.isEnabled()
    save_screen(screen, "files")


def test_a_dropped_file_in_mwh_is_shown_in_kwh(qtbot, screen, tmp_path):
    rng = np.random.default_rng(7)
    values = rng.uniform(0.05, 0.4, 72)
    path = tmp_path / "hall-b.csv"
    write_hourly_meter(path, "Hall B (MWh)", values, "2025-05-05")
    screen.set_site_timezone(SITE_ZONE)
    _drop(screen, [path, tmp_path])  # the folder is named and left out
    wait_until_idle(qtbot, screen)
    (row,) = _rows(screen.view.table)
    assert row["Unit found"].text() == "MWh → kWh"
    assert row["Total kWh"].data(NUMBER_ROLE) == pytest.approx(values.round(3).sum() * KWH_PER_MWH)
    assert row["Coverage"].text() == "100.0%"
    assert row["First"].text() == "2025-05-05 00:00 (UTC−05:00)"
    assert tmp_path.name in screen.notice.text.text()
    assert [p.name for p in tmp_path.iterdir()] == ["hall-b.csv"]  # nothing stored by reading


def test_a_file_that_cannot_be_read_is_named_with_what_to_do(qtbot, screen, tmp_path):
    path = tmp_path / "notes.csv"
    path.write_text("Remarks\njust words here\nand more words\n", encoding="utf-8")
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([path])
    wait_until_idle(qtbot, screen)
    assert screen.file_table.item(0, 2).text() == "cannot be read"
    summary = screen.view.summary.text()
    assert "notes.csv" in summary and "Traceback" not in summary
    assert screen.view.table.rowCount() == 0
    assert not screen.create_button.isEnabled()
    assert "notes.csv" in screen.store_hint.text()
    screen.create_project_at(tmp_path / "never")
    assert screen.notice.tone == "problem" and "notes.csv" in screen.notice.text.text()
    assert not (tmp_path / f"never{Project.EXTENSION}").exists()
    save_screen(screen, "files-problem")
    kind = screen.file_table.cellWidget(0, 1)
    kind.set_value("weather")
    kind.activated.emit(kind.currentIndex())  # as when the user picks it
    wait_until_idle(qtbot, screen)
    assert screen.plan.files[0].kind == "weather"
    assert screen.file_table.item(0, 2).text() == "cannot be read as weather station"


def test_the_user_settles_the_date_order_and_reads_again(qtbot, screen, tmp_path):
    # Every date reads both ways (no number above 12), so the importer asks rather than guesses.
    stamps = pd.date_range("2025-02-01", periods=48, freq="h")
    path = tmp_path / "annex.csv"
    path.write_text(
        "Time,Annex (kWh)\n" + "".join(f"{t:%d/%m/%Y %H:%M},4.5\n" for t in stamps),
        encoding="utf-8",
    )
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([path])
    wait_until_idle(qtbot, screen)
    assert "day-first or month-first" in screen.plan.files[0].problem
    assert "choose the order" in screen.form.date_label.text()
    screen.form.date_order.set_value(True)
    qtbot.mouseClick(screen.form.read_button, Qt.MouseButton.LeftButton)
    wait_until_idle(qtbot, screen)
    (row,) = _rows(screen.view.table)
    # Day first (common practice outside North America): 01/02/2025 is 1 February 2025.
    assert row["First"].text() == "2025-02-01 00:00 (UTC−06:00)"
    assert row["Total kWh"].data(NUMBER_ROLE) == pytest.approx(48 * 4.5)
    assert screen.form.date_label.text() == "Dates"


def test_a_missing_unit_is_given_in_the_form(qtbot, screen, tmp_path):
    path = tmp_path / "pumphouse.csv"
    write_hourly_meter(path, "Pump house", np.full(24, 2.0), "2025-06-02")
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([path])
    wait_until_idle(qtbot, screen)
    assert "does not say its unit" in screen.view.summary.text()
    screen.form.unit.set_value("kW")
    screen.form.read_again.emit()
    wait_until_idle(qtbot, screen)
    (row,) = _rows(screen.view.table)
    # Demand in kW held for one hour is that many kWh (energy = power × time).
    assert row["Total kWh"].data(NUMBER_ROLE) == pytest.approx(24 * 2.0)


def test_nothing_is_stored_without_the_site_time_zone(qtbot, screen, tmp_path):
    path = tmp_path / "hall-c.csv"
    write_hourly_meter(path, "Hall C (kWh)", np.full(24, 1.0), "2025-06-02")
    screen.add_files([path])
    wait_until_idle(qtbot, screen)
    assert not screen.create_button.isEnabled()
    assert "time zone" in screen.store_hint.text()
    screen.create_project_at(tmp_path / "campus")
    assert "time zone" in screen.notice.text.text()
    assert not list(tmp_path.glob(f"*{Project.EXTENSION}"))


def test_create_project_then_add_to_it(qtbot, screen, tmp_path):
    hall = 0.2 + 0.1 * np.sin(np.arange(24 * 14) * 2 * np.pi / 24)  # a daily swing
    write_hourly_meter(tmp_path / "hall-b.csv", "Hall B (MWh)", hall, "2025-05-05")
    temps = 15.0 + 8.0 * np.sin(np.arange(24 * 14) * 2 * np.pi / 24)
    write_hourly_weather(tmp_path / "station.csv", temps, "2025-05-05")
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([tmp_path / "hall-b.csv", tmp_path / "station.csv"])
    wait_until_idle(qtbot, screen)
    assert [f.state for f in screen.plan.files] == ["read", "read"]
    shown_total = _rows(screen.view.table)[0]["Total kWh"].data(NUMBER_ROLE)

    screen.create_project_at(tmp_path / "stellwick")  # the extension is added
    wait_until_idle(qtbot, screen)
    target = tmp_path / f"stellwick{Project.EXTENSION}"
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert screen.session.project is not None and screen.session.project.path == target
    assert screen.plan.files == []
    assert not list(tmp_path.glob("*.unfinished*"))
    with Project.open(target) as project:
        assert project.timezone == SITE_ZONE
        assert project.meter_names() == ["Hall B"]
        assert project.weather_stations() == ["station"]
        assert project.load_meter("Hall B").values.sum() == pytest.approx(shown_total)
        assert shown_total == pytest.approx(hall.round(3).sum() * KWH_PER_MWH)

    write_hourly_meter(tmp_path / "hall-c.csv", "Hall C (kWh)", np.full(48, 3.0), "2025-05-05")
    screen.add_files([tmp_path / "hall-c.csv"])
    wait_until_idle(qtbot, screen)
    assert screen.add_to_project_button.isEnabled()
    qtbot.mouseClick(screen.add_to_project_button, Qt.MouseButton.LeftButton)
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert screen.session.project.meter_names() == ["Hall B", "Hall C"]
    assert screen.session.project.load_meter("Hall C").values.sum() == pytest.approx(144.0)


def _sources(project: Project) -> dict[str, tuple]:
    return {s["file_name"]: (s["kind"], s["settings"]) for s in project.sources()}


def test_the_campus_calendar_is_stored_as_the_command_line_stores_it(
    qtbot, screen, tmp_path, capfd
):
    meters, bills = SAMPLE / "electricity-15min.xlsx", SAMPLE / "electric-bills.csv"
    weather, calendar = SAMPLE / "weather-station.csv", SAMPLE / "campus-calendar.csv"
    screen.set_site_timezone(SITE_ZONE)
    screen.holidays.choose("US", "IL")
    screen.add_files([meters, bills, weather, calendar])
    wait_until_idle(qtbot, screen)
    assert [f.state for f in screen.plan.files] == ["read"] * 4
    # The calendar's periods, counted by pandas reading the file on its own.
    periods = pd.read_csv(calendar)
    assert screen.file_table.item(3, 2).text() == f"read: {len(periods)} campus periods"
    screen.file_table.selectRow(3)
    assert "read as campus calendar" in screen.view.summary.text()
    assert "public holidays of US-IL" in screen.view.summary.text()
    rows = _rows(screen.view.table)
    assert [r["Name"].text() for r in rows[: len(periods)]] == list(periods["Period"])
    shown_holidays = {r["First day"].text(): r["Name"].text() for r in rows[len(periods) :]}
    # From memory: Illinois keeps Lincoln's Birthday (12 February) besides the federal days.
    assert shown_holidays["2025-02-12"] == "Lincoln's Birthday"
    assert shown_holidays["2025-07-04"] == "Independence Day"
    save_screen(screen, "files-calendar")

    screen.create_project_at(tmp_path / "window")
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert f"the campus calendar ({len(periods)} periods)" in screen.notice.text.text()
    by_cli = tmp_path / f"cli{Project.EXTENSION}"
    argv = ["new", str(by_cli), "--meters", str(meters), "--bills", str(bills)]
    argv += ["--weather", str(weather), "--calendar", str(calendar)]
    assert command_line([*argv, "--timezone", SITE_ZONE, "--holidays", "US-IL", "--json"]) == 0
    with Project.open(tmp_path / f"window{Project.EXTENSION}") as made, Project.open(by_cli) as cli:
        stored = made.get_setting("calendar")
        assert stored == cli.get_setting("calendar")
        assert _sources(made) == _sources(cli)
        assert made.meter_names() == cli.meter_names()
        for name in cli.meter_names():
            assert made.meter_settings(name) == cli.meter_settings(name)
    kept = CampusCalendar.from_dict(stored)
    assert (kept.country, kept.subdivision) == ("US", "IL")
    assert len(kept.periods) == len(periods)
    assert "Traceback" not in capfd.readouterr().err


def test_a_file_the_screen_cannot_classify_says_what_it_looks_like_and_asks(
    qtbot, screen, tmp_path, capfd
):
    # Term dates without the Kind column: dated rows and no figures, so it looks like a campus
    # calendar, which needs the kind of each period. The sample's fault list is JSON.
    terms = tmp_path / "terms.csv"
    terms.write_text("Name,Start,End\nFall 2025,2025-08-25,2025-12-12\n", encoding="utf-8")
    faults = SAMPLE / "faults.json"
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([terms, faults])
    wait_until_idle(qtbot, screen)
    states = [screen.file_table.item(row, 2).text() for row in range(2)]
    assert states == ["cannot be read as campus calendar", "cannot be read"]
    screen.file_table.selectRow(0)
    summary = screen.view.summary.text()
    assert "looks like campus calendar" in summary and "Kind" in summary
    assert "What is this file? Choose its kind under 'What it is'" in summary
    kind = screen.file_table.cellWidget(0, 1)
    offered = [kind.itemData(i) for i in range(kind.count())]
    assert offered == [None, "meters", "bills", "weather", "calendar"]
    screen.file_table.selectRow(1)
    assert "could not be read as any kind of file" in screen.view.summary.text()

    kind.set_value("meters")  # the user says what it is; it is read again as that
    kind.activated.emit(kind.currentIndex())
    wait_until_idle(qtbot, screen)
    assert screen.file_table.item(0, 2).text() == "cannot be read as meter readings"
    screen.file_table.selectRow(0)
    assert "as you said it is" in screen.view.summary.text()
    screen.create_project_at(tmp_path / "never")
    assert screen.notice.tone == "problem" and "terms.csv" in screen.notice.text.text()
    assert [p.name for p in tmp_path.iterdir()] == ["terms.csv"]  # nothing half-created
    assert "Traceback" not in capfd.readouterr().err
    save_screen(screen, "files-unclassified")


def test_a_sheet_without_dates_and_a_header_only_file_say_what_they_hold(
    qtbot, screen, tmp_path, capfd
):
    """An Excel sheet of floor areas (no time stamps) and a CSV export with its header and no
    rows: each is named with what it holds instead of readings, and nothing is created."""
    from openpyxl import Workbook

    book = Workbook()
    book.active.title = "Areas"
    book.active.append(["Building", "Floor area (m²)", "Annual kWh"])
    book.active.append(["Library", 5400, 812000])
    areas = tmp_path / "floor-areas.xlsx"
    book.save(areas)
    export = tmp_path / "empty-export.csv"
    export.write_text("Timestamp,Library (kWh)\n", encoding="utf-8")
    screen.set_site_timezone(SITE_ZONE)
    screen.add_files([areas, export])
    wait_until_idle(qtbot, screen)
    screen.file_table.selectRow(0)
    summary = unescape(screen.view.summary.text())
    assert "floor-areas.xlsx" in summary
    assert "no column of dates or times was found in sheet 'Areas'" in summary
    assert "Building, Floor area (m²), Annual kWh" in summary
    screen.file_table.selectRow(1)
    summary = unescape(screen.view.summary.text())
    assert "empty-export.csv" in summary
    assert "holds a header row (Timestamp, Library (kWh)) but no readings below it" in summary
    assert "any sheet" not in summary and "dates and figures" not in summary
    screen.create_project_at(tmp_path / "never")
    assert screen.notice.tone == "problem"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["empty-export.csv", "floor-areas.xlsx"]
    assert "Traceback" not in capfd.readouterr().err
