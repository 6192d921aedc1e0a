"""`loadledger meter`: display names, utilities and units read in, kept in the project."""

from __future__ import annotations

import json
from dataclasses import replace

import pandas as pd
import pytest
from openpyxl import load_workbook

from engine.budget import WeatherAssumption, simulate_budget
from engine.cli.output import with_display_units
from engine.cli.text import budget_report
from engine.meter_labels import MeterLabel
from tests.cli.cli_support import loadledger
from tests.engine.test_budget_cost import AS_OF, TARIFF, annex


def _run(*args):
    return json.loads(loadledger(*args, "--json").stdout)


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    folder = tmp_path_factory.mktemp("meter")
    stamps = pd.date_range("2025-01-01", periods=24 * 20, freq="h")
    meters = folder / "m.csv"
    meters.write_text(
        "Timestamp,Hall (kWh),GM-2 (kWh)\n"
        + "".join(f"{t:%Y-%m-%d %H:%M},1,{29.3072 * (1 + t.hour % 3):.4f}\n" for t in stamps)
    )
    weather = folder / "w.csv"
    weather.write_text("Timestamp,Dry bulb (°F)\n" + "".join(
        f"{t:%Y-%m-%d %H:%M},{50 + t.hour}\n" for t in stamps))  # fmt: skip
    target = folder / "p.loadledger"
    loadledger("new", target, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    return target


def test_a_meter_gets_a_display_name_a_utility_and_a_unit(project):
    report = _run("meter", project, "GM-2", "--display-name", "Gas main", "--utility",
                  "natural_gas", "--read-unit", "therms")  # fmt: skip
    assert report["changed"]
    assert report["meters"] == [
        {"name": "GM-2", "display_name": "Gas main", "utility": "natural_gas", "read_unit": "therm"}
    ]
    assert report["temperature_unit"] == "°F"  # the weather file was read in °F
    listed = _run("meter", project)
    assert [m["name"] for m in listed["meters"]] == ["Hall", "GM-2"]
    assert not listed["changed"]
    info = _run("info", project)
    gas = next(m for m in info["meters"] if m["name"] == "GM-2")  # JSON keys stay raw
    assert (gas["display_name"], gas["utility"]) == ("Gas main", "natural_gas")
    words = loadledger("info", project).stdout
    assert "Gas main" in words and "GM-2" not in words
    book = project.parent / "profiles.xlsx"
    profiled = _run("profile", project, "--xlsx", book)
    assert [m["display_name"] for m in profiled["meters"]] == ["Hall", "Gas main"]
    headings = {c for row in load_workbook(book)["Key figures"].values for c in row if c}
    assert "Gas main (natural gas)" in headings and "GM-2 (natural_gas)" not in headings


def test_the_temperature_unit_can_be_changed(project):
    assert _run("meter", project, "--temperature-unit", "C")["temperature_unit"] == "°C"
    assert _run("meter", project, "--temperature-unit", "F")["temperature_unit"] == "°F"


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (("Gym", "--display-name", "Gym"), "no meter 'Gym'"),
        (("Hall", "--read-unit", "parsecs"), "not a unit energy can be shown in"),
        (("Hall", "--utility", "water"), "not a utility"),
        (("--display-name", "Hall"), "say which meter"),
    ],
)
def test_bad_changes_are_one_line_and_change_nothing(project, args, words):
    before = _run("meter", project)
    done = loadledger("meter", project, *args, expect=2)
    assert words in done.stderr and len(done.stderr.strip().splitlines()) == 1
    assert _run("meter", project) == before


def test_two_meters_cannot_be_shown_under_one_name(project):
    _run("meter", project, "GM-2", "--display-name", "Gas main")
    done = loadledger("meter", project, "Hall", "--display-name", "gas MAIN", expect=2)
    assert "already shown as 'Gas main'" in done.stderr


def test_budget_text_names_meters_as_shown_and_in_the_unit_read_in():
    # one invented gas meter budgeted at 2,930.72 kWh at P50: 100 therms (NIST SP 811 (2008),
    # B.8: therm (EC) = 1.055 06 E+08 J, kWh = 3.6 E+06 J)
    total = {"mean": 2930.72, "quantiles": {"10": 2600.0, "50": 2930.72, "90": 3300.0}}
    label = MeterLabel("GM-2", "natural_gas", "therm", "Gas main")
    meter = with_display_units({"name": "GM-2", "total": total}, {"GM-2": label})
    assert meter["in_read_unit"]["quantiles"]["50"] == pytest.approx(100.0, rel=1e-5)
    report = {"levels": [10, 50, 90], "months": ["2027-01"], "as_of": "2026-12-31",
              "weather": "typical", "paths": 10, "meters": [meter], "utilities": [],
              "calibration": {"GM-2": {"summary": "held 9 of 11"}}, "cautions": []}  # fmt: skip
    words = budget_report(report)
    assert "Gas main" in words and "GM-2" not in words
    assert "(P50 100 therm)" in words


def test_budget_text_gives_the_campus_cost_of_its_priced_meters():
    """A real (small) budget with an unpriced gas meter: the campus line has no cost, the
    next line gives the priced meters' energy and cost and names the meter left out as
    shown."""
    metered = annex(10.0, tariff=TARIFF)
    boilers = replace(annex(10.0), name="GM-2", utility="natural_gas")
    run = simulate_budget(
        [metered, boilers], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=50, rng=6
    )
    labels = {"GM-2": MeterLabel("GM-2", "natural_gas", "therm", "Gas main")}
    report = run.to_json()
    report["meters"] = [with_display_units(m, labels) for m in report["meters"]]
    lines = budget_report(report).splitlines()
    campus = next(line for line in lines if line.strip().startswith("campus "))
    assert "cost" not in campus
    priced = lines[lines.index(campus) + 1]
    part = run.campus.priced_only.total
    assert priced.strip().startswith("campus, priced meters only")
    assert f"cost P50 USD {part.cost.quantiles['50']:,.0f}" in priced
    assert priced.endswith("(leaves out Gas main: no price)")


def test_budget_text_names_utilities_in_words():
    """A real (small) budget with a gas meter: its utility roll-up is 'natural gas', never the
    key 'natural_gas' (the JSON keeps the key)."""
    boilers = replace(annex(10.0), name="GM-2", utility="natural_gas")
    run = simulate_budget([boilers], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=20, rng=3)
    report = run.to_json()
    assert [group["group"] for group in report["utilities"]] == ["natural_gas"]
    words = budget_report(report)
    assert "natural_gas" not in words
    assert any(line.strip().startswith("natural gas ") for line in words.splitlines())
