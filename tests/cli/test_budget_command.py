"""`loadledger budget` as scripts use it: the JSON shape, a month under way, cost, workbook.

Ground truth by construction: two invented meters (hourly, two years) sharing one invented
weather station; the sample's invented rate card prices the electricity meter.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from python_calamine import CalamineWorkbook

from engine.export.finance_workbook import write_finance_workbook
from engine.project import Project
from engine.steps.budgeting import latest_budget
from tests.cli.cli_support import loadledger, write_hall_and_boiler

ROOT = Path(__file__).resolve().parents[2]
RATE_CARD = ROOT / "sample" / "tariffs" / "orrinvale-main-electric.ratecard.toml"


def _run(*args, expect=0):
    return loadledger(*args, expect=expect)


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    folder = tmp_path_factory.mktemp("budget")
    rng = np.random.default_rng(3)
    hours = pd.date_range("2024-01-01", "2025-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    clock = hours.hour.to_numpy() + 0.5
    ramp = 1 / (1 + np.exp(-(clock - 8) / 0.7)) - 1 / (1 + np.exp(-(clock - 18) / 0.7))
    busy = (hours.day_of_week < 5) * ramp
    hall = (50 + 70 * busy + 3 * np.maximum(12 - temps, 0)) * (1 + rng.normal(0, 0.04, len(hours)))
    boiler = (5 + 9 * np.maximum(14 - temps, 0)) * (1 + rng.normal(0, 0.05, len(hours)))
    meters, weather = write_hall_and_boiler(folder, hours, hall, boiler, temps)
    project = folder / "site.loadledger"
    _run("new", project, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    for name in ("Hall", "Boiler gas"):
        _run("fit", project, "--meter", name, "--models", "calendar_regression,seasonal_naive",
             "--origins", "3")  # fmt: skip
    frame = pd.DataFrame({"Hall": hall, "Boiler gas": boiler}, index=hours)
    return project, folder, frame


def test_budget_json_has_the_documented_shape(site):
    project, folder, _ = site
    done = _run("budget", project, "--start", "2026-01", "--months", "3", "--paths", "200",
                "--tariff", RATE_CARD, "--xlsx", folder / "budget.xlsx", "--json")  # fmt: skip
    report = json.loads(done.stdout)
    assert report["months"] == ["2026-01", "2026-02", "2026-03"]
    assert report["as_of"] == "2025-12-31"
    hall = next(m for m in report["meters"] if m["name"] == "Hall")
    assert (hall["utility"], hall["unit"]) == ("electricity", "kWh")
    assert hall["model"]
    for month in [*hall["months"], hall["total"]]:
        assert set(month["quantiles"]) == {"10", "50", "90"}
        q = month["quantiles"]
        assert q["10"] <= q["50"] <= q["90"]
        assert month["actual_to_date"] == 0.0
        assert "cost" in month  # the electricity meter is priced by the rate card
    assert [m["month"] for m in hall["months"]] == report["months"]
    # the period's mean is the sum of the monthly means (means add up; quantiles do not)
    assert hall["total"]["mean"] == pytest.approx(sum(m["mean"] for m in hall["months"]))
    groups = {u["group"] for u in report["utilities"]}
    assert groups == {"electricity", "natural_gas"}
    assert report["campus"]["meters"] == ["Hall", "Boiler gas"]
    assert any("licensed engineer" in c for c in report["cautions"])
    book = CalamineWorkbook.from_path(report["workbook"])
    assert {"Overview", "Monthly"} <= set(book.sheet_names)


def test_a_month_under_way_adds_the_actual_to_date(site):
    project, _, frame = site
    done = _run("budget", project, "--start", "2025-12", "--as-of", "2025-12-10",
                "--paths", "200", "--json")  # fmt: skip
    report = json.loads(done.stdout)
    hall = next(m for m in report["meters"] if m["name"] == "Hall")
    (december,) = hall["months"]
    metered = frame.loc["2025-12-01":"2025-12-10 23:00", "Hall"].round(3).sum()
    assert december["actual_to_date"] == pytest.approx(metered, rel=1e-9)
    assert december["quantiles"]["10"] > metered  # the rest of the month comes on top


def test_bad_budget_options_exit_2_with_one_line(site):
    project, _, _ = site
    for args in (["--start", "2026-13"], ["--start", "2026-01", "--levels", "10,90"],
                 ["--start", "2026-01", "--weather", "sunny"],
                 ["--start", "2026-01", "--months", "0"],  # was taken as one month
                 ["--start", "1999-01"],
                 # years after the readings: there are no model errors to draw from
                 ["--start", "2030-02", "--as-of", "2030-01-31"]):  # fmt: skip
        done = _run("budget", project, *args, expect=2)
        assert done.stderr.count("\n") == 1 and "Traceback" not in done.stderr


def test_a_budget_of_months_already_metered_is_refused(site):
    # The readings end on 2025-12-31: months up to December are all metered (or before the
    # readings), so a budget of them forecasts nothing; it was made, guessing 1999 backwards.
    project, _, _ = site
    done = _run("budget", project, "--start", "2025-10", "--months", "3", expect=2)
    assert "2025-10 .. 2025-12" in done.stderr and "from 2026-01 on" in done.stderr
    # A period that reaches past the as-of date is a budget, its passed months metered.
    _run("budget", project, "--start", "2025-12", "--months", "2", "--paths", "200", "--json")


def test_one_shot_budget_from_files(site, tmp_path):
    _, folder, frame = site
    done = _run("budget", "--meters", folder / "campus.csv", "--weather-file",
                folder / "station.csv", "--timezone", "UTC", "--start", "2026-01",
                "--paths", "200", "--json")  # fmt: skip
    report = json.loads(done.stdout)
    names = [m["name"] for m in report["meters"]]
    assert names == ["Hall", "Boiler gas"]
    hall = report["meters"][0]["total"]
    # the budget month sits within the spread of the same month in the invented history
    january = frame["Hall"].groupby(frame.index.to_period("M")).sum()
    assert 0.8 * january.min() < hall["quantiles"]["50"] < 1.2 * january.max()
    assert not list(tmp_path.glob("*.loadledger"))  # nothing is left behind


def test_one_shot_needs_files_or_a_project_not_both(site):
    project, folder, _ = site
    done = _run("budget", project, "--meters", folder / "campus.csv", "--start", "2026-01",
                expect=2)  # fmt: skip
    assert "either a project" in done.stderr


def test_without_a_year_of_weather_the_budget_runs_on_the_calendar_and_says_so(site):
    """Four months of history cannot give a typical year: no invented climate, a caution."""
    project, _, frame = site
    done = _run("budget", project, "--start", "2024-05", "--as-of", "2024-04-30",
                "--paths", "200", "--json")  # fmt: skip
    report = json.loads(done.stdout)
    assert any("runs without weather" in caution for caution in report["cautions"])
    assert report["weather"].startswith("no weather")
    hall = next(m for m in report["meters"] if m["name"] == "Hall")
    may = frame.loc["2024-05", "Hall"].sum()
    q = hall["months"][0]["quantiles"]
    assert q["10"] <= q["50"] <= q["90"]
    assert 0.8 * may < q["50"] < 1.2 * may  # the hall's weekly rhythm carries most of it


def _cells(path) -> dict[str, list]:
    book = CalamineWorkbook.from_path(str(path))
    return {name: book.get_sheet_by_name(name).to_python() for name in book.sheet_names}


def test_the_kept_budget_comes_back_as_it_was_run(site):
    project, folder, _ = site
    first = folder / "as-run.xlsx"
    done = _run("budget", project, "--start", "2026-02", "--months", "2", "--paths", "200",
                "--tariff", RATE_CARD, "--xlsx", first, "--json")  # fmt: skip
    report = json.loads(done.stdout)
    with Project.open(project) as opened:
        kept = latest_budget(opened)
    assert kept.run.to_json() == {k: v for k, v in report.items() if k != "workbook"}
    again = write_finance_workbook(
        folder / "from-the-project.xlsx", kept.run, quality=kept.quality, steps=kept.steps,
        scorecards=kept.scorecards, data_range=kept.data_range,
    )  # fmt: skip
    # Every sheet of the workbook written from the kept budget holds the same cells, the daily
    # figures included.
    assert _cells(again) == _cells(first)
    assert len(_cells(again)["Daily"]) > 2 * 28
