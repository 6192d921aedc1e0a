"""Budget modelling kept in the project between runs: reused while its inputs are unchanged,
made again for exactly the meters whose inputs changed, and never stale.

Ground truth by construction: two invented hourly meters over two years sharing an invented
weather station (the same site as the budget command's tests, smaller). Whether a budget made
its meters' models again is read from the project file itself: a kept row is added only when
a meter was modelled.
"""

from __future__ import annotations

import shutil
import sqlite3
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from engine import calendar_edit
from engine.budgeting import budget_project, budget_request
from engine.cleaning.steps import range_step
from engine.kept_models import KEEP_PER_METER
from engine.modelling import fit_meter
from engine.project import Project
from tests.cli.cli_support import loadledger

METERS = ("Hall", "Boiler gas")


@pytest.fixture(scope="module")
def fitted_site(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("kept")
    rng = np.random.default_rng(11)
    hours = pd.date_range("2024-01-01", "2025-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    busy = (hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 18)
    hall = (50 + 60 * busy + 3 * np.maximum(12 - temps, 0)) * (1 + rng.normal(0, 0.04, len(hours)))
    boiler = (5 + 9 * np.maximum(14 - temps, 0)) * (1 + rng.normal(0, 0.05, len(hours)))
    meters = folder / "campus.csv"
    meters.write_text("Timestamp,Hall (kWh),Boiler gas (kWh)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{a:.3f},{b:.3f}"
        for t, a, b in zip(hours, hall, boiler, strict=True)))  # fmt: skip
    weather = folder / "station.csv"
    weather.write_text("Timestamp,Dry bulb (°C)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in zip(hours, temps, strict=True)))  # fmt: skip
    project = folder / "site.loadledger"
    loadledger("new", project, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    with Project.open(project) as opened:
        for name in METERS:
            fit_meter(opened, name, families=["seasonal_naive"], origins=2)
    return project


@pytest.fixture
def site(fitted_site, tmp_path) -> Path:
    copy = tmp_path / "site.loadledger"
    shutil.copyfile(fitted_site, copy)
    return copy


def _budget(project: Project, weather: str = "typical", **options) -> dict:
    as_of = options.pop("as_of", None)
    request = budget_request(project, ["2026-01"], as_of=as_of, weather=weather, paths=100)
    return budget_project(project, request, workers=1, **options).run.to_json()


def _kept_rows(path: Path) -> dict[str, list[int]]:
    """Ids of the kept rows per meter, read with plain SQL."""
    with sqlite3.connect(path) as conn:
        rows = conn.execute("SELECT meter, id FROM kept_models ORDER BY id").fetchall()
    kept: dict[str, list[int]] = {name: [] for name in METERS}
    for meter, row_id in rows:
        kept[meter].append(row_id)
    return kept


def _remodelled(before: dict[str, list[int]], after: dict[str, list[int]]) -> set[str]:
    return {name for name in METERS if max(after[name]) > max(before[name])}


def test_a_second_budget_reuses_the_kept_models(site):
    with Project.open(site) as project:
        first = _budget(project, "typical")
        kept = _kept_rows(site)
        assert all(len(ids) == 1 for ids in kept.values())
        again = _budget(project, "past-years")
        longer = budget_project(
            project, budget_request(project, ["2026-01", "2026-02"], paths=100), workers=1
        ).run.to_json()
    assert _kept_rows(site) == kept  # nothing was modelled again
    assert again["weather"] != first["weather"]
    assert longer["months"] == ["2026-01", "2026-02"]


def test_kept_models_give_the_numbers_a_fresh_run_gives(site, tmp_path):
    fresh_copy = tmp_path / "fresh.loadledger"
    shutil.copyfile(site, fresh_copy)
    with Project.open(site) as project:
        _budget(project)
        reused = _budget(project)
    with Project.open(fresh_copy) as project:
        fresh = _budget(project)
    for mine, theirs in zip(reused["meters"], fresh["meters"], strict=True):
        assert mine["total"] == theirs["total"]


def _add_cleaning_step(project: Project, _: Path) -> set[str]:
    step = range_step(
        "interpolate",
        "Hall",
        pd.Timestamp("2025-06-02 10:00", tz="UTC"),
        pd.Timestamp("2025-06-02 14:00", tz="UTC"),
        "a fix the user logged",
    )
    project.add_cleaning_step(step.to_dict())
    return {"Hall"}


def _change_calendar(project: Project, _: Path) -> set[str]:
    calendar_edit.store(project, calendar_edit.with_holidays(calendar_edit.current(project), "GB"))
    return set(METERS)


def _change_weather(project: Project, _: Path) -> set[str]:
    (station,) = project.weather_stations()
    temps = project.load_weather(station)
    source = next(s["id"] for s in project.sources() if s["kind"] == "weather")
    project.remove_weather(station)
    project.add_weather(station, temps + 0.5, temps + 0.5, source_id=source)
    return set(METERS)


def _change_model(project: Project, _: Path) -> set[str]:
    fit_meter(project, "Boiler gas", families=["daily_change_point"], origins=2)
    return {"Boiler gas"}


@pytest.mark.parametrize(
    "change", [_add_cleaning_step, _change_calendar, _change_weather, _change_model]
)
def test_a_changed_dependency_remodels_exactly_the_meters_it_touches(site, change):
    with Project.open(site) as project:
        _budget(project)
        before = _kept_rows(site)
        touched = change(project, site)
        _budget(project)
    assert _remodelled(before, _kept_rows(site)) == touched


def test_another_as_of_date_is_modelled_again_and_old_entries_are_pruned(site):
    with Project.open(site) as project:
        for day in (31, 30, 29, 28, 27):
            _budget(project, as_of=date(2025, 12, day))
            assert project.count_kept() <= KEEP_PER_METER * len(METERS)
        ids = _kept_rows(site)
    assert all(len(rows) == KEEP_PER_METER for rows in ids.values())
