"""`loadledger profile` recovers a known weather response and writes a readable workbook.

Ground truth by construction: daily gas use = base + slope × heating degree-days (mean
temperature method, base 15 °C) with small noise; degree-day definition as in CIBSE TM41 (2006)
(from memory). The workbook is read back with calamine, a reader independent of openpyxl.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook
from python_calamine import CalamineWorkbook

from tests.cli.cli_support import loadledger

BASE_C, SLOPE, BASE_LOAD = 15.0, 12.0, 40.0  # °C, therm per °C-day, therm per day


def _run(*args):
    return loadledger(*args).stdout


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    folder = tmp_path_factory.mktemp("profile")
    rng = np.random.default_rng(11)
    hours = pd.date_range("2023-01-01", "2024-12-31 23:00", freq="h")
    doy = hours.day_of_year.to_numpy()
    temps = 10 - 12 * np.cos(2 * np.pi * (doy - 15) / 365) + 4 * np.sin(
        2 * np.pi * (hours.hour.to_numpy() - 9) / 24) + rng.normal(0, 1.5, len(hours))  # fmt: skip
    weather = folder / "station.csv"
    weather.write_text("Time,Outdoor temperature (°C)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in zip(hours, temps, strict=True)))  # fmt: skip
    daily_mean = pd.Series(np.round(temps, 2), index=hours).resample("D").mean()
    use = BASE_LOAD + SLOPE * np.maximum(BASE_C - daily_mean.to_numpy(), 0)
    use = use * (1 + rng.normal(0, 0.01, len(use)))
    reads = 5000 + np.cumsum(use)
    gas = folder / "gas.csv"
    gas.write_text("Read date,Gas register (therms)\n" + "\n".join(
        f"{d:%Y-%m-%d},{r:.3f}" for d, r in zip(daily_mean.index, reads, strict=True)))  # fmt: skip
    target = folder / "site.loadledger"
    _run("new", target, "--meters", gas, "--weather", weather, "--timezone", "UTC")
    return target, folder


def test_profile_recovers_the_balance_point_and_the_heating_slope(project):
    path, folder = project
    report = json.loads(_run("profile", path, "--json", "--xlsx", folder / "p.xlsx"))
    weather = report["meters"][0]["figures"]["weather response"]
    therm_kwh = 105.505585262e6 / 3.6e6  # NIST SP 811: therm (EC) = 1.055 056 E+08 J
    assert weather["kind"] == "heating"
    assert weather["heating balance point °C"] == pytest.approx(BASE_C, abs=0.5)
    assert weather["heating slope kWh per °C-day"] == pytest.approx(SLOPE * therm_kwh, rel=0.03)
    assert weather["weather-independent kWh per day"] == pytest.approx(
        BASE_LOAD * therm_kwh, rel=0.05
    )


def test_profile_workbook_holds_the_same_figures(project):
    path, folder = project
    report = json.loads(_run("profile", path, "--json", "--xlsx", folder / "q.xlsx"))
    book = CalamineWorkbook.from_path(report["workbook"])
    rows = book.get_sheet_by_name("Key figures").to_python()
    cells = {row[0]: row[1] for row in rows if len(row) > 1}
    expected = report["meters"][0]["figures"]["total energy"]["value"]
    assert cells["total energy"] == pytest.approx(expected, rel=1e-12)
    assert "Monthly by year" in book.sheet_names


def test_profile_workbook_prints_tables_in_full_and_chart_data_as_a_note(project):
    """Page setup as a spreadsheet stores it (ECMA-376 Part 1, pageSetup, headerFooter)."""
    path, folder = project
    report = json.loads(_run("profile", path, "--json", "--xlsx", folder / "r.xlsx"))
    book = load_workbook(report["workbook"])
    for sheet in book.worksheets:
        assert (sheet.page_setup.fitToWidth, sheet.page_setup.fitToHeight) == (1, 0)
        assert sheet.sheet_properties.pageSetUpPr.fitToPage
        assert sheet.print_title_rows == "$1:$1"  # the sheet's title or its note
        assert sheet.oddHeader.left.text == "site"  # the project's name
        assert sheet.oddHeader.right.text == "Page &P of &N"
        last_row = int(sheet.print_area.rsplit("$", 1)[1])
        if sheet.title in ("Key figures", "Monthly by year"):
            assert last_row >= sheet.max_row > 10
        elif sheet.max_row == 1:  # daily readings have no typical day within a day
            assert sheet["A1"].value == "No meter has data for this table."
        else:  # hundreds of rows of chart data: the note alone prints
            assert last_row == 1 and "for screens" in sheet["A1"].value
            assert sheet.max_row > 300
    assert book["Daily vs temperature"].max_row > 300  # the rule above was put to work
