"""Budget modelling kept in the project between runs: reused while its inputs are unchanged,
made again for exactly the meters whose inputs changed, and never stale.

The site is ``tests/engine/conftest.py``'s invented two-meter campus. Whether a budget made
its meters' models again is read from the project file itself: a kept row is added only when
a meter was modelled.
"""

from __future__ import annotations

import shutil
import sqlite3
from datetime import date
from pathlib import Path

import pandas as pd
import pytest

from engine.cleaning.steps import range_step
from engine.project import Project
from engine.steps import calendar_edit
from engine.steps.budgeting import budget_project, budget_request
from engine.steps.fitting import fit_meter
from engine.steps.kept_models import KEEP_PER_METER
from tests.engine.conftest import METERS


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


def test_the_wizards_first_budget_is_kept_for_the_next_one(new_site, tmp_path):
    # No model chosen yet: the first budget runs the fit wizard and stores its choice; the
    # next budget starts from that stored choice and must find the work kept under it.
    path = tmp_path / "new.loadledger"
    shutil.copyfile(new_site, path)
    with Project.open(path) as project:
        _budget(project)
        assert all(project.results("model", name) for name in METERS)
        kept = _kept_rows(path)
        _budget(project, "past-years")
    assert _kept_rows(path) == kept


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


def test_a_budget_after_fit_finds_the_refits_the_fit_kept(new_site, tmp_path):
    path = tmp_path / "fitted.loadledger"
    shutil.copyfile(new_site, path)
    with Project.open(path) as project:
        for name in METERS:
            fit_meter(project, name, families=["seasonal_naive", "daily_change_point"], origins=2)
        kept = _kept_rows(path)
        assert all(len(ids) == 1 for ids in kept.values())
        _budget(project)
    assert _kept_rows(path) == kept


def _weather_file(project: Project, folder: Path) -> Path:
    """The station's temperatures and a January 2026 (January 2025's again), as a file."""
    (station,) = project.weather_stations()
    temps = project.load_weather(station)
    january = temps["2025-01-01":"2025-01-31 23:00"]
    ahead = pd.Series(january.to_numpy(), index=january.index + pd.DateOffset(years=1))
    both = pd.concat([temps, ahead])
    path = folder / "weather-that-happened.csv"
    path.write_text("Timestamp,Dry bulb (°C)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in both.tz_convert("UTC").items()))  # fmt: skip
    return path


def test_a_budget_on_given_weather_ranks_the_stored_choices_families_again(site, tmp_path):
    # The stored choices were ranked on typical weather; a budget on a weather file asks
    # what that weather does, so the wizard ranks the same families on the actual-weather
    # backtest, keeps that work apart, and leaves the meters' stored choices as they were.
    with Project.open(site) as project:
        _budget(project)
        before = _kept_rows(site)
        stored = {name: len(project.results("model", name)) for name in METERS}
        run = _budget(project, str(_weather_file(project, tmp_path)))
        assert {name: len(project.results("model", name)) for name in METERS} == stored
    assert _remodelled(before, _kept_rows(site)) == set(METERS)
    assert "weather that actually happened" in run["assumptions"]["model ranking"]
