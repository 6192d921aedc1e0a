"""Text from the user's files reaches the workbooks as text, never as a formula.

OWASP's guidance on CSV (formula) injection, from memory: a cell whose text starts with
``=``, ``+``, ``-``, ``@``, a tab or a carriage return may be run as a formula by a
spreadsheet. Here meter names, file names, the rate card's name and cleaning notes start with
each of them; the finance and profile workbooks written by the command line are opened with
openpyxl, every such text must be a string cell ('s'), and the only formulas in either
workbook are the finance workbook's own month totals.

The site is invented: four meters (one with a planted spike, so cleaning logs a step), a
weather station and a year of bills, two years hourly.
"""

from __future__ import annotations

import json
import re
import sqlite3
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from engine.cli.main import main

ROOT = Path(__file__).resolve().parents[2]
RATE_CARD = ROOT / "sample" / "tariffs" / "orrinvale-main-electric.ratecard.toml"
METERS = ("=Hall", "+Boiler gas", "-Lab", "@Gym")
TARIFF = '=HYPERLINK("http://example.invalid","rates")'
NOTES = ("\r=1+1", "\t@SUM(A1:A2)")
OWN_FORMULA = re.compile(r"=SUM\([A-Z]+\d+:[A-Z]+\d+\)")


def _run(*args) -> None:
    assert main([str(arg) for arg in args]) == 0


def _write_site(folder: Path) -> tuple[Path, Path, Path, Path]:
    rng = np.random.default_rng(9)
    hours = pd.date_range("2024-01-01", "2025-12-31 23:00", freq="h", name="Timestamp")
    temps = 11 - 12 * np.cos(2 * np.pi * (hours.day_of_year.to_numpy() - 20) / 365)
    temps = temps + rng.normal(0, 2, len(hours))
    shapes = (50 + 3 * np.maximum(12 - temps, 0), 5 + 9 * np.maximum(14 - temps, 0),
              np.full(len(hours), 30.0), np.full(len(hours), 20.0))  # fmt: skip
    noise = rng.normal(1, 0.03, (len(hours), len(METERS)))
    meters = pd.DataFrame(np.column_stack(shapes) * noise, index=hours,
                          columns=[f"{name} (kWh)" for name in METERS])  # fmt: skip
    meters.iloc[5000, 0] *= 40  # serious spikes the recommended fixes answer
    meters.iloc[9000, 2] *= 40
    paths = (folder / "=meters.csv", folder / "\tstation.csv", folder / "@bills.csv",
             folder / "+rates.ratecard.toml")  # fmt: skip
    meters.to_csv(paths[0], float_format="%.3f", date_format="%Y-%m-%d %H:%M")
    weather = pd.DataFrame({"Dry bulb (°C)": temps}, index=hours)
    weather.to_csv(paths[1], float_format="%.2f", date_format="%Y-%m-%d %H:%M")
    months = pd.period_range("2025-01", "2025-12", freq="M")
    pd.DataFrame({"Service From": months.start_time.strftime("%Y-%m-%d"),
                  "Service To": months.end_time.strftime("%Y-%m-%d"), "Billed kWh": 40_000,
                  "Max Demand kW": 90.0, "Total Charges ($)": 4_000.0}).to_csv(
        paths[2], index=False)  # fmt: skip
    card = RATE_CARD.read_text(encoding="utf-8")
    card = re.sub(r'(?m)^name = ".*"$', lambda _: f"name = {json.dumps(TARIFF)}", card, count=1)
    paths[3].write_text(card, encoding="utf-8")
    return paths


@pytest.fixture(scope="module")
def workbooks(tmp_path_factory) -> tuple[Path, Path]:
    folder = tmp_path_factory.mktemp("hostile")
    meters, weather, bills, card = _write_site(folder)
    project = folder / "site.loadledger"
    _run("new", project, "--meters", meters, "--weather", weather, "--bills", bills,
         "--timezone", "UTC")  # fmt: skip
    _run("clean", project, "--apply-recommended")
    with sqlite3.connect(project) as conn:  # notes as a person might type them in the window
        ids = [i for (i,) in conn.execute("SELECT id FROM cleaning_steps ORDER BY id")]
        assert len(ids) >= len(NOTES), "the planted spikes should be cleaned"
        for step, note in zip(ids, NOTES, strict=False):
            conn.execute("UPDATE cleaning_steps SET note = ? WHERE id = ?", (note, step))
    conn.close()
    finance, profile = folder / "=finance.xlsx", folder / "@profile.xlsx"
    _run("profile", project, "--xlsx", profile)
    _run("budget", project, "--start", "2026-01", "--months", "3", "--paths", "100",
         "--workers", "1", "--tariff", card, "--xlsx", finance)  # fmt: skip
    return finance, profile


def _read_back(value: str, text: str) -> bool:
    """Whether a cell read back holds ``text`` (XML readers turn a carriage return into a
    line feed)."""
    return value.startswith(text) or value.startswith(text.replace("\r", "\n"))


def _cells(path: Path) -> list:
    return [cell for sheet in load_workbook(path) for row in sheet.iter_rows() for cell in row]


def test_the_only_formulas_are_the_workbook_s_own_totals(workbooks):
    for path in workbooks:
        formulas = [c.value for c in _cells(path) if c.data_type == "f"]
        assert all(OWN_FORMULA.fullmatch(f) for f in formulas), (path.name, formulas[:5])


@pytest.mark.parametrize(
    ("which", "texts"),
    [("finance", (*METERS, TARIFF, *NOTES)), ("profile", METERS)],
)
def test_user_text_starting_like_a_formula_is_a_string_cell(workbooks, which, texts):
    path = workbooks[0] if which == "finance" else workbooks[1]
    cells = _cells(path)
    for text in texts:
        holding = [c for c in cells if isinstance(c.value, str) and _read_back(c.value, text)]
        assert holding, f"{text!r} is not in {path.name}"
        assert {c.data_type for c in holding} == {"s"}, text
    risky = [c for c in cells if isinstance(c.value, str) and c.value[:1] in "=+-@\t\r\n"
             and not (c.data_type == "f" and OWN_FORMULA.fullmatch(c.value))]  # fmt: skip
    assert {c.data_type for c in risky} == {"s"}
