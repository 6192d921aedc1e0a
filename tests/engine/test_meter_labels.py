"""Meter display names, utilities and units read in; the site's temperature unit."""

from __future__ import annotations

import dataclasses
import re
import shutil
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from engine import units
from engine.errors import InputError
from engine.export.profile_workbook import write_profile_workbook
from engine.meter_labels import (
    MeterLabel,
    checked_temperature_unit,
    in_temperature_unit,
    shown_name,
    with_shown_names,
)
from engine.progress import Progress
from engine.project import Project
from engine.reading import ReadOptions, read_file
from engine.steps.budgeting import budget_project, budget_request
from engine.steps.cleaning import review_meter
from engine.steps.fitting import fit_meters
from engine.steps.importing import ImportedFiles, store_files
from engine.steps.labels import (
    meter_label,
    meter_labels,
    relabelled,
    set_temperature_unit,
    store_label,
    temperature_unit,
)
from engine.steps.profiling import profile_project_meter

SAMPLE = Path(__file__).resolve().parents[2] / "sample" / "data"


@pytest.fixture
def site(new_site, tmp_path) -> Project:
    path = tmp_path / "site.loadledger"
    shutil.copyfile(new_site, path)
    with Project.open(path) as project:
        yield project


def test_a_meter_starts_under_its_raw_name_in_the_unit_found(site):
    labels = meter_labels(site)
    assert list(labels) == ["Hall", "Boiler gas"]
    hall = labels["Hall"]
    assert (hall.shown, hall.read_unit, hall.other_unit) == ("Hall", "kWh", None)
    assert hall.utility == site.summary()["meters"][0]["utility"]


def test_a_label_is_kept_and_named_everywhere_by_its_display_name(site):
    label = relabelled(
        site, "Boiler gas", display_name="  Boiler  house ", utility="natural gas",
        read_unit="therms",
    )  # fmt: skip
    store_label(site, label)
    with Project.open(site.path) as again:
        kept = meter_label(again, "Boiler gas")
        utilities = {m["name"]: m["utility"] for m in again.summary()["meters"]}
    assert kept == MeterLabel("Boiler gas", "natural_gas", "therm", "Boiler house")
    assert utilities["Boiler gas"] == "natural_gas"  # roll-ups and prices follow the utility
    assert shown_name(meter_labels(site), "Boiler gas") == "Boiler house"
    assert shown_name(meter_labels(site), "natural_gas") == "natural_gas"
    assert kept.as_dict()["display_name"] == "Boiler house"


def test_a_label_put_back_is_the_label_before(site):
    before = meter_label(site, "Hall")
    store_label(site, relabelled(site, "Hall", display_name="Great Hall", read_unit="MWh"))
    store_label(site, before)
    assert meter_label(site, "Hall") == before


def test_the_raw_name_as_display_name_clears_it(site):
    store_label(site, relabelled(site, "Hall", display_name="Great Hall"))
    assert relabelled(site, "Hall", display_name="Hall").display_name == ""


@pytest.mark.parametrize(
    ("change", "words"),
    [
        ({"display_name": "boiler GAS"}, "already shown as 'Boiler gas'"),
        ({"read_unit": "furlongs"}, "not a unit energy can be shown in"),
        ({"read_unit": "kW"}, "not a unit energy can be shown in"),
        ({"utility": "water"}, "not a utility"),
        ({"display_name": "x" * 81}, "81 characters"),
    ],
)
def test_bad_labels_are_refused_in_words(site, change, words):
    with pytest.raises(InputError, match=words) as raised:
        relabelled(site, "Hall", **change)
    assert raised.value.hint


def test_an_unknown_meter_is_refused_naming_the_meters(site):
    with pytest.raises(InputError, match="no meter 'Gym'") as raised:
        relabelled(site, "Gym", display_name="Gym")
    assert "Hall, Boiler gas" in raised.value.hint


def test_two_meters_cannot_share_a_display_name(site):
    store_label(site, relabelled(site, "Hall", display_name="Main"))
    with pytest.raises(InputError, match="already shown as 'Main'"):
        relabelled(site, "Boiler gas", display_name="main")


def test_figures_in_the_unit_read_use_the_nist_factors():
    # NIST SP 811 (2008), B.8: therm (EC) = 1.055 06 E+08 J and kWh = 3.6 E+06 J, so one therm
    # is 29.3072 kWh (common practice rounds it to 29.3071); a ton of refrigeration is
    # 3.516 853 E+03 W, so a ton-hour is 3.516 853 kWh.
    gas = MeterLabel("g", "natural_gas", "therm")
    assert gas.in_read_unit(29.3072) == pytest.approx(1.0, rel=1e-5)
    chilled = MeterLabel("c", "chilled_water", "ton-hour")
    assert chilled.in_read_unit(3516.853) == pytest.approx(1000.0, rel=1e-6)
    assert gas.in_read_unit(None) is None
    # a ccf at the default 1,036 Btu/ft³ (EIA): 100 ft³ × 1,036 Btu × 1.055 056 E+03 J / 3.6 E+06
    assert MeterLabel("v", "natural_gas", "ccf").in_read_unit(
        100 * 1036 * 1055.056 / 3.6e6
    ) == pytest.approx(1.0, rel=1e-6)


def test_temperatures_are_shown_in_fahrenheit_by_the_nist_formula():
    # NIST SP 811 (2008), B.8: t/°F = 1.8 t/°C + 32, a °F interval is 5/9 K
    celsius = np.array([-40.0, 0.0, 100.0, 18.3])
    assert units.from_celsius(celsius, "°F") == pytest.approx([-40.0, 32.0, 212.0, 64.94])
    assert units.convert_temperature(units.from_celsius(celsius, "°F"), "°F") == pytest.approx(
        celsius
    )
    assert units.per_degree_in(9.0, "°F") == pytest.approx(5.0)
    assert units.per_degree_in(9.0, "°C") == 9.0


def test_the_temperature_unit_is_a_changeable_setting(site):
    assert temperature_unit(site) == "°C"  # the invented station reads °C
    set_temperature_unit(site, "fahrenheit")
    assert temperature_unit(site) == "°F"
    assert checked_temperature_unit("C") == "°C"
    with pytest.raises(InputError, match="not a temperature unit"):
        set_temperature_unit(site, "kWh")


def test_weather_read_in_fahrenheit_makes_the_project_show_fahrenheit(tmp_path):
    options = ReadOptions(timezone="America/Chicago")
    weather = read_file(SAMPLE / "weather-station.csv", options)  # "Dry Bulb (°F)"
    assert weather.unit_found == "°F"
    with Project.create(tmp_path / "f.loadledger", timezone="America/Chicago") as project:
        store_files(project, ImportedFiles([], [], [weather], options))
        assert temperature_unit(project) == "°F"
        set_temperature_unit(project, "C")
        second = dataclasses.replace(weather, station="second station")
        store_files(project, ImportedFiles([], [], [second], options))
        assert temperature_unit(project) == "°C"  # a later import keeps the person's choice


def test_the_profile_workbook_gives_the_weather_response_in_fahrenheit(site, tmp_path):
    profile = profile_project_meter(site, "Hall")
    response = profile.key_figures()["weather response"]
    path = write_profile_workbook(tmp_path / "p.xlsx", [profile], temperature_unit="°F")
    rows = {row[0]: row[1] for row in load_workbook(path)["Key figures"].values if row[0]}
    # NIST SP 811 (2008), B.8: t/°F = 1.8 t/°C + 32; a °F interval is 5/9 K
    celsius = response["heating balance point °C"]
    assert rows["heating balance point °F"] == pytest.approx(1.8 * celsius + 32)
    per_c = response["heating slope kWh per °C-day"]
    assert rows["heating slope kWh per °F-day"] == pytest.approx(per_c / 1.8)
    assert rows["weather-independent kWh per day"] == pytest.approx(
        response["weather-independent kWh per day"]
    )
    assert not any("°C" in str(name) for name in rows)
    assert in_temperature_unit(5.0, "kWh", "°F") == (5.0, "kWh")


def test_shown_names_replace_whole_raw_names_once():
    labels = {
        "Hall": MeterLabel("Hall", "electricity", display_name="Main Hall"),
        "PLANT-CHW-E": MeterLabel("PLANT-CHW-E", "chilled_water", display_name="East plant"),
        "Boiler gas": MeterLabel("Boiler gas", "natural_gas"),  # no display name: kept
    }
    text = "Looking for spikes in PLANT-CHW-E; 'Hall' done; Hallway, PLANT-CHW-EAST, Boiler gas"
    shown = with_shown_names(text, labels)
    assert shown == (
        "Looking for spikes in East plant; 'Main Hall' done; Hallway, PLANT-CHW-EAST, Boiler gas"
    )
    assert with_shown_names(shown, labels) == shown  # "Main Hall" does not become "Main Main Hall"


def test_progress_and_cautions_name_meters_by_their_display_names(fitted_site, tmp_path):
    """Cleaning, fitting (backtest included) and budget progress, and the budget's cautions,
    name the meters as the person named them; the JSON keys stay the raw names."""
    path = tmp_path / "site.loadledger"
    shutil.copyfile(fitted_site, path)
    with Project.open(path) as project:
        store_label(project, relabelled(project, "Hall", display_name="Main Hall"))
        store_label(project, relabelled(project, "Boiler gas", display_name="Gas main"))
        heard: list[str] = []
        listening = Progress(lambda _fraction, message: heard.append(message))
        review_meter(project, "Boiler gas", progress=listening)
        fit_meters(project, ["Hall"], families=["seasonal_naive"], origins=2, progress=listening)
        # the electricity account's bills beside the Hall meter: a caution names the meter
        bills = tmp_path / "hall-account.csv"
        starts = pd.date_range("2024-01-01", "2025-11-01", freq="MS")
        rows = "".join(
            f"{s:%Y-%m-%d},{s + pd.offsets.MonthEnd(0):%Y-%m-%d},{20000 + 500 * s.month},2400\n"
            for s in starts
        )
        bills.write_text("Service From,Service To,Billed kWh,Total Charges ($)\n" + rows)
        options = ReadOptions(timezone="UTC")
        store_files(project, ImportedFiles([], [read_file(bills, options)], [], options))
        request = budget_request(
            project, ["2026-01"], as_of=date(2025, 12, 31), weather="typical", paths=100
        )
        run = budget_project(project, request, workers=1, progress=listening).run
    said = " | ".join(heard)
    assert "Gas main" in said and "Main Hall" in said
    assert "Main Main Hall" not in said
    assert not any(re.search(r"(?<!Main )\bHall\b|Boiler gas", message) for message in heard)
    beside = [caution for caution in run.cautions if "beside the meter" in caution]
    assert beside and "beside the meter Main Hall of" in beside[0], run.cautions
    assert {"Hall", "Boiler gas"} <= {meter.name for meter in run.meters}  # raw names as keys
