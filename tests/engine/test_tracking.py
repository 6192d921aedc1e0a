"""Adopted budgets tracked against actuals, on an invented campus with a known weather response.

Invented scenario (ground truth by construction): two hourly meters on US Mountain time
(local stamps, so months and daylight saving are the site's) over 2022–2025, a
hall (base, weekday hours, heating below 12 °C at 3 kWh per °C-hour) and a boiler house
(heating below 14 °C at 9 kWh per °C-hour), each with 4–5 % multiplicative noise, under a
seasonal climate with iid hourly noise. The winter of 2025 (January to March) is made
``WARM_SHIFT`` °C warmer than any before it. A fiscal-year budget for 2025 is adopted as of
2024-12-31 (so it assumes the usual winters) and tracked as of 2025-06-15.

The known truth of the weather effect: what the meters would have used in those hours had the
winter not been warmer, minus what they used — the heating terms at ``T − WARM_SHIFT`` and at
``T`` — which the adopted model's weather effect must come close to.
"""

from __future__ import annotations

import shutil
import sqlite3
from datetime import date
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

from engine.budget.periods import BudgetWindow
from engine.errors import InputError
from engine.export.tracking_workbook import write_tracking_workbook
from engine.project import Project
from engine.reading import ReadOptions
from engine.steps.adopting import adopt_budget
from engine.steps.budgeting import budget_project, budget_request
from engine.steps.fitting import fit_meter
from engine.steps.importing import create_project, read_project_files
from engine.steps.tracking import (
    COMPLETE,
    NOT_BEGUN,
    UNDER_WAY,
    _attach_outlook,
    _reading_cautions,
    track_budget,
)
from engine.tracking.actuals import expected_readings
from tests.cli.cli_support import write_hall_and_boiler

RATE_CARD = Path(__file__).parents[2] / "sample/tariffs/orrinvale-main-electric.ratecard.toml"
WARM_SHIFT = 6.0
WARM_MONTHS = ("2025-01", "2025-02", "2025-03")
BUDGET = "FY2025"
ADOPTED_AS_OF = date(2024, 12, 31)
TRACKED_AS_OF = date(2025, 6, 15)
HALL_HEATING = (12.0, 3.0)  # balance °C, kWh per °C-hour
BOILER_HEATING = (14.0, 9.0)
ZONE = "America/Denver"


def _campus(hours: pd.DatetimeIndex, rng: np.random.Generator) -> dict[str, np.ndarray]:
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    temps = temps + np.where(_warm(hours), WARM_SHIFT, 0.0)
    busy = (hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 18)
    hall = 50 + 60 * busy + HALL_HEATING[1] * np.maximum(HALL_HEATING[0] - temps, 0)
    boiler = 5 + BOILER_HEATING[1] * np.maximum(BOILER_HEATING[0] - temps, 0)
    return {
        "temps": temps,
        "Hall": hall * (1 + rng.normal(0, 0.04, len(hours))),
        "Boiler gas": boiler * (1 + rng.normal(0, 0.05, len(hours))),
    }


def _warm(hours: pd.DatetimeIndex) -> np.ndarray:
    return np.asarray((hours >= "2025-01-01") & (hours < "2025-04-01"))


@pytest.fixture(scope="module")
def campus(tmp_path_factory) -> dict:
    """The campus project with the FY2025 budget adopted, its tracking report and the truth."""
    folder = tmp_path_factory.mktemp("tracking")
    hours = pd.date_range("2022-01-01", "2025-12-31 23:00", freq="h")
    data = _campus(hours, np.random.default_rng(5))
    meters, weather = write_hall_and_boiler(
        folder, hours, data["Hall"], data["Boiler gas"], data["temps"]
    )
    files = read_project_files([meters], (), [weather], ReadOptions(timezone=ZONE))
    path = folder / "campus.loadledger"
    create_project(path, files, timezone=ZONE).close()
    months = [f"2025-{m:02d}" for m in range(1, 13)]
    with Project.open(path) as project:
        for name in ("Hall", "Boiler gas"):
            fit_meter(project, name, families=["daily_change_point"], origins=2)
        request = budget_request(
            project, months, as_of=ADOPTED_AS_OF, paths=200, tariff_file=RATE_CARD
        )
        adopt_budget(project, BUDGET, budget_project(project, request, workers=1), request)
        report = track_budget(project, BUDGET, as_of=TRACKED_AS_OF, workers=1)
    return {"path": path, "hours": hours, "data": data, "report": report}


def _groups(report: dict) -> list[dict]:
    return [*report["meters"], *report["utilities"], report["campus"]]


def _meter(report: dict, name: str) -> dict:
    return next(meter for meter in report["meters"] if meter["name"] == name)


def test_the_parts_add_up_to_the_variance(campus):
    counted = 0
    for group in _groups(campus["report"]):
        for month in group["months"]:
            if month["status"] == NOT_BEGUN:
                continue
            variance = month["variance_kwh"]
            assert variance == pytest.approx(month["actual"] - month["budget_to_date"], abs=1e-6)
            assert month["weather_kwh"] + month["usage_kwh"] == pytest.approx(variance, abs=1e-6)
            if month.get("actual_cost") is not None:
                parts = month["weather_cost"] + month["usage_cost"] + month["price_cost"]
                assert parts == pytest.approx(month["variance_cost"], abs=1e-6)
                assert month["variance_cost"] == pytest.approx(
                    month["actual_cost"] - month["budget_cost"]["quantiles"]["50"], abs=1e-6
                )
                counted += 1
    assert counted >= 5 * 2  # the hall's complete months, and its utility's roll-up


def test_a_warm_winter_shows_a_negative_heating_weather_effect_of_the_known_size(campus):
    # Ground truth by construction: the heating the warmer hours did not need.
    hours, temps = campus["hours"], campus["data"]["temps"]
    for name, (balance, slope) in (("Hall", HALL_HEATING), ("Boiler gas", BOILER_HEATING)):
        saved = slope * (
            np.maximum(balance - temps, 0) - np.maximum(balance - (temps - WARM_SHIFT), 0)
        )
        truth = pd.Series(saved, index=hours).resample("MS").sum()
        for month in _meter(campus["report"], name)["months"]:
            if month["month"] not in WARM_MONTHS:
                continue
            expected = truth[pd.Timestamp(month["month"] + "-01")]
            assert month["weather_kwh"] < 0
            assert month["weather_kwh"] == pytest.approx(expected, rel=0.15)
            # the usage did not change: the rest of the variance is small beside the weather
            assert abs(month["usage_kwh"]) < 0.1 * abs(month["weather_kwh"])


def test_actuals_equal_the_stored_readings_summed_by_month_with_plain_pandas(campus):
    # Computed another way: the readings table read with sqlite3 and resampled by pandas.
    with sqlite3.connect(campus["path"]) as conn:
        frame = pd.read_sql_query(
            "SELECT m.name, r.t, r.kwh FROM readings r JOIN meters m ON m.id = r.meter_id", conn
        )
    frame["t"] = pd.to_datetime(frame["t"], unit="s", utc=True).dt.tz_convert(ZONE)
    cut = pd.Timestamp(TRACKED_AS_OF, tz=ZONE) + pd.Timedelta(days=1)
    for name, rows in frame.groupby("name"):
        series = rows.set_index("t")["kwh"].sort_index()
        monthly = series[series.index < cut].resample("MS").sum()
        for month in _meter(campus["report"], name)["months"]:
            start = pd.Timestamp(month["month"] + "-01", tz=ZONE)
            if month["status"] == NOT_BEGUN:
                assert month["actual"] is None and month["complete"] is False
                continue
            assert month["actual"] == pytest.approx(monthly[start], rel=1e-12)
            assert month["complete"] is (month["status"] == COMPLETE)


def test_months_are_complete_under_way_or_not_begun_and_ranges_are_judged_when_complete(campus):
    report = campus["report"]
    assert report["status"]["2025-05"] == COMPLETE
    assert report["status"]["2025-06"] == UNDER_WAY
    assert report["status"]["2025-07"] == NOT_BEGUN
    boiler = _meter(report, "Boiler gas")["months"]
    for month in boiler:
        if month["status"] == COMPLETE:
            q = month["budget"]["quantiles"]
            outside = month["actual"] < q["10"] or month["actual"] > q["90"]
            assert month["outside_range"] is outside
        else:
            assert month["outside_range"] is None
    assert all(boiler[number]["outside_range"] for number in range(3))  # the warm winter


def test_the_outlook_is_nearer_the_true_year_than_the_adopted_total(campus):
    # The readings to the year's end are in the project (the tracking ignores them after the
    # as-of date): the true year is their total.
    for group in _groups(campus["report"]):
        names = group.get("meters") or [group["name"]]
        truth = sum(
            pd.Series(campus["data"][name], index=campus["hours"])["2025"].sum() for name in names
        )
        outlook = group["outlook"]["quantiles"]["50"]
        adopted = group["adopted_total"]["quantiles"]["50"]
        assert abs(outlook - truth) <= abs(adopted - truth)
        done = sum(m["actual"] for m in group["months"] if m["actual"] is not None)
        assert group["outlook"]["actual_to_date"] == pytest.approx(done, rel=1e-9)


def test_every_tracking_and_adopted_budget_carries_the_design_load_caution(campus):
    assert any("not a design load" in c for c in campus["report"]["cautions"])
    with Project.open(campus["path"]) as project:
        adopted = project.adopted_budget(BUDGET)["body"]
    assert any("licensed engineer under local codes" in c for c in adopted["run"]["cautions"])


def test_the_workbook_has_the_tracking_sheet_a_chart_and_the_cautions(campus, tmp_path):
    written = write_tracking_workbook(tmp_path / "tracking.xlsx", campus["report"])
    book = openpyxl.load_workbook(written)
    assert book.sheetnames == ["Tracking", "Notes"]
    sheet = book["Tracking"]
    assert len(sheet._charts) == 1
    texts = [cell for row in sheet.iter_rows(values_only=True) for cell in row if cell]
    assert "weather effect (kWh)" in texts and "cost: price effect (USD)" in texts
    campus_actual = campus["report"]["campus"]["months"][0]["actual"]
    assert campus_actual in texts
    notes = " ".join(str(c) for r in book["Notes"].iter_rows(values_only=True) for c in r if c)
    assert "not a design load" in notes and "weather_kwh + usage_kwh" in notes


def _stored_row(path: Path) -> tuple:
    with sqlite3.connect(path) as conn:
        return conn.execute("SELECT name, adopted_at, body FROM adopted_budgets").fetchall()


def test_the_adopted_budget_is_unchanged_by_later_cleaning_and_refits(campus, tmp_path):
    from engine.cleaning.steps import range_step
    from engine.steps.cleaning import apply_recommended, review_meter

    path = tmp_path / "later.loadledger"
    shutil.copyfile(campus["path"], path)
    before = _stored_row(path)
    with Project.open(path) as project:
        start, end = pd.Timestamp("2025-02-02", tz="UTC"), pd.Timestamp("2025-02-03", tz="UTC")
        step = range_step("interpolate", "Boiler gas", start, end, "a fix logged later")
        project.add_cleaning_step(step.to_dict())
        apply_recommended(project, review_meter(project, "Hall"))
        fit_meter(project, "Hall", families=["seasonal_naive"], origins=2)
        again = track_budget(project, BUDGET, as_of=date(2025, 2, 28), workers=1)
    assert _stored_row(path) == before
    tracked = _meter(campus["report"], "Hall")["months"][0]
    assert _meter(again, "Hall")["months"][0]["budget"] == tracked["budget"]
    assert _meter(again, "Hall")["months"][0]["weather_kwh"] == pytest.approx(
        tracked["weather_kwh"], rel=1e-9
    )


def test_adopting_a_taken_name_is_refused_and_changes_nothing(campus, tmp_path):
    path = tmp_path / "again.loadledger"
    shutil.copyfile(campus["path"], path)
    before = _stored_row(path)
    with (
        Project.open(path) as project,
        pytest.raises(InputError, match="already adopted as 'FY2025'"),
    ):
        adopt_budget(project, BUDGET, None, None)  # refused before anything is read
    assert _stored_row(path) == before


@pytest.mark.parametrize(
    ("name", "as_of", "words"),
    [
        ("FY2024", TRACKED_AS_OF, "no budget is adopted as 'FY2024'"),
        (BUDGET, date(2024, 12, 30), "comes before the budget 'FY2025' begins"),
    ],
)
def test_bad_tracking_requests_say_why_and_store_nothing(campus, tmp_path, name, as_of, words):
    path = tmp_path / "bad.loadledger"
    shutil.copyfile(campus["path"], path)
    before = path.read_bytes()
    with Project.open(path) as project, pytest.raises(InputError, match=words):
        track_budget(project, name, as_of=as_of, workers=1)
    assert path.read_bytes() == before


def test_a_model_blind_to_weather_puts_the_whole_variance_in_usage_and_says_so(campus, tmp_path):
    path = tmp_path / "blind.loadledger"
    shutil.copyfile(campus["path"], path)
    months = ["2025-01", "2025-02"]
    with Project.open(path) as project:
        fit_meter(project, "Hall", families=["seasonal_naive"], origins=2)
        request = budget_request(project, months, as_of=ADOPTED_AS_OF, paths=100)
        adopt_budget(project, "blind", budget_project(project, request, workers=1), request)
        report = track_budget(project, "blind", as_of=date(2025, 2, 28), workers=1)
    for month in _meter(report, "Hall")["months"]:
        assert month["weather_kwh"] == 0.0
        assert month["usage_kwh"] == month["variance_kwh"]
    assert any("meter 'Hall'" in c and "does not respond" in c for c in report["cautions"])
    boiler = [c for c in report["cautions"] if "meter 'Boiler gas'" in c]
    assert not any("does not respond" in c for c in boiler)


def test_months_of_ordinary_weather_show_little_weather_effect(campus):
    # Ground truth by construction: only January to March were shifted; April and May had
    # the climate's own weather, so their weather effect is near zero beside the warm months'.
    for meter in campus["report"]["meters"]:
        months = [m for m in meter["months"] if m["complete"]]
        warm = min(abs(m["weather_kwh"]) for m in months if m["month"] in WARM_MONTHS)
        ordinary = [abs(m["weather_kwh"]) for m in months if m["month"] not in WARM_MONTHS]
        assert ordinary and max(ordinary) < 0.02 * warm


def test_months_the_budget_already_knew_show_no_variance_and_no_weather_effect(campus, tmp_path):
    # A budget adopted in the middle of its period took the months before its as-of date
    # from the readings: tracked later, those months have nothing to explain.
    path = tmp_path / "midway.loadledger"
    shutil.copyfile(campus["path"], path)
    months = ["2024-11", "2024-12", "2025-01"]
    with Project.open(path) as project:
        request = budget_request(project, months, as_of=ADOPTED_AS_OF, paths=100)
        adopt_budget(project, "midway", budget_project(project, request, workers=1), request)
        report = track_budget(project, "midway", as_of=date(2025, 1, 31), workers=1)
    for meter in report["meters"]:
        known, tracked = meter["months"][:2], meter["months"][2]
        for month in known:
            # the budget forecast only hours it had no reading for (the clock change's)
            assert abs(month["variance_kwh"]) < 1e-3 * month["budget"]["quantiles"]["50"]
            assert month["weather_kwh"] == 0.0
            assert month["usage_kwh"] == month["variance_kwh"]
        assert tracked["weather_kwh"] < 0  # the warm January


def test_a_day_with_extra_readings_does_not_hide_another_days_gap() -> None:
    """A repeated stamp on one day must not cancel the count of readings missing on another."""
    window = BudgetWindow.of(["2026-01", "2026-02"], "America/Chicago")
    expected = expected_readings(window, pd.Timedelta(hours=1))
    readings = pd.DataFrame({"readings": expected.to_numpy().copy()}, index=window.days)
    readings.iloc[3, 0] -= 5  # 5 hours missing on 4 January
    readings.iloc[4, 0] += 30  # 30 extra readings on 5 January
    cautions = _reading_cautions("Hall", readings, expected, [COMPLETE, COMPLETE], window)
    assert len(cautions) == 1
    assert "misses 5 reading(s) in 2026-01" in cautions[0]


def test_a_finished_year_lands_on_its_actual_energy_and_says_which_cost_is_unknown(
    campus, tmp_path
):
    """Once every month is over, the outlook is what was metered; the rate card cannot price
    November (the file lacks the repeated hour of the fall-back night), so the year's cost is
    left out and a caution names the month and the missing hour."""
    path = Path(shutil.copyfile(campus["path"], tmp_path / "year-end.loadledger"))
    with Project.open(path) as project:
        report = track_budget(project, BUDGET, as_of=date(2026, 1, 1), workers=1)
    hall = _meter(report, "Hall")
    assert all(month["status"] == COMPLETE for month in hall["months"])
    actual = sum(month["actual"] for month in hall["months"])
    assert hall["outlook"]["mean"] == pytest.approx(actual, rel=1e-12)
    assert "cost" not in hall["outlook"]
    unknown = [c for c in report["cautions"] if "cost of meter 'Hall' in 2025-11 is unknown" in c]
    assert len(unknown) == 1 and "2025-11-02 01:00" in unknown[0]


def test_a_finished_year_with_every_month_priced_lands_on_its_actual_cost() -> None:
    """The outlook of a finished, fully priced year is the sum of its months' actual costs."""
    months = [
        {"actual": 100.0, "actual_cost": 12.5},
        {"actual": 80.0, "actual_cost": 10.25},
    ]
    meter = {"name": "Hall", "months": months}
    _attach_outlook([meter], {}, None, {"levels": [10, 50, 90]}, over=True)
    assert meter["outlook"]["mean"] == 180.0
    assert meter["outlook"]["cost"] == {
        "mean": 22.75,
        "quantiles": {"10": 22.75, "50": 22.75, "90": 22.75},
    }
