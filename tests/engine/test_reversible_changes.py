"""Every change a person makes to a project can be taken back and made again by the engine."""

from __future__ import annotations

import shutil
from functools import partial

import pandas as pd
import pytest

from engine.calendar import CampusCalendar
from engine.cleaning import accepted_step
from engine.project import Project
from engine.steps import calendar_edit
from engine.steps.cleaning import apply_recommended_everywhere, review_meter
from engine.steps.cleaning_changes import logged_change, make_again, take_back
from engine.steps.fitting import (
    choice_since,
    chosen_model,
    fit_meter,
    keep_choice_again,
    newest_model_id,
    take_back_choice,
    use_ranked_model,
)


@pytest.fixture
def site(new_site, tmp_path) -> Project:
    path = shutil.copyfile(new_site, tmp_path / "site.loadledger")
    with Project.open(path) as project:
        yield project


def _cleaned(project: Project, name: str) -> pd.Series:
    return review_meter(project, name).cleaned.values


def test_logging_every_recommended_fix_is_undone_and_redone_exactly(site):
    raw = {name: _cleaned(site, name) for name in site.meter_names()}
    change = logged_change(site, apply_recommended_everywhere)
    after_steps = site.cleaning_steps(active_only=False)
    after = {name: _cleaned(site, name) for name in site.meter_names()}
    take_back(site, change)
    assert site.cleaning_steps(active_only=False) == []
    for name, values in raw.items():
        pd.testing.assert_series_equal(_cleaned(site, name), values)
    make_again(site, change)
    assert site.cleaning_steps(active_only=False) == after_steps  # same ids, places, times
    for name, values in after.items():
        pd.testing.assert_series_equal(_cleaned(site, name), values)


def test_removing_switching_and_accepting_steps_are_taken_back(site):
    a, b = (
        site.add_cleaning_step(
            {"kind": "exclude", "meter": "Hall", "params": {"start": start, "end": end}}
        )
        for start, end in (("2024-02-01", "2024-02-02"), ("2024-03-01", "2024-03-02"))
    )
    site.move_cleaning_step(b, 0)
    log = site.cleaning_steps(active_only=False)
    for change in (
        partial(Project.remove_cleaning_step, step_id=b),
        partial(Project.set_step_active, step_id=a, active=False),
    ):
        done = logged_change(site, change)
        assert done.meters == ("Hall",)
        changed = site.cleaning_steps(active_only=False)
        assert changed != log
        take_back(site, done)
        assert site.cleaning_steps(active_only=False) == log  # b still first: its place kept
        make_again(site, done)
        assert site.cleaning_steps(active_only=False) == changed
        take_back(site, done)
    finding = review_meter(site, "Boiler gas").findings[0]
    accepted = logged_change(
        site, partial(Project.add_cleaning_step, step=accepted_step(finding).to_dict())
    )
    assert finding.id not in {f.id for f in review_meter(site, "Boiler gas").findings}
    take_back(site, accepted)
    assert finding.id in {f.id for f in review_meter(site, "Boiler gas").findings}


def test_a_change_that_changes_nothing_is_empty(site):
    assert not logged_change(site, lambda project: project.cleaning_steps())


def test_a_model_chosen_by_hand_is_taken_back_and_kept_again(site):
    fit_meter(site, "Hall", families=["seasonal_naive", "daily_change_point"], origins=2)
    recommended, choice = chosen_model(site, "Hall")
    other = next(row["model"] for row in choice["ranking"] if row["model"] != choice["chosen"])
    before = newest_model_id(site, "Hall")
    use_ranked_model(site, "Hall", other)
    change = choice_since(site, "Hall", before)
    assert choice_since(site, "Hall", newest_model_id(site, "Hall")) is None
    take_back_choice(site, change)
    model, again = chosen_model(site, "Hall")
    assert again["chosen"] == choice["chosen"] and model.to_dict() == recommended.to_dict()
    keep_choice_again(site, change)
    assert chosen_model(site, "Hall")[1]["chosen"] == other
    assert newest_model_id(site, "Hall") == change.stored[0]


def test_a_calendar_edit_is_taken_back_by_storing_the_one_before(site):
    before = calendar_edit.current(site)
    assert before == CampusCalendar()
    calendar_edit.store(site, calendar_edit.with_holidays(before, "US-IL"))
    assert calendar_edit.current(site).subdivision == "IL"
    calendar_edit.store(site, before)
    assert calendar_edit.current(site) == before
