"""Where a project stands on the way to a budget, as the window's step list shows it."""

from __future__ import annotations

import shutil

from engine.project import Project
from engine.steps.checklist import StepState, checklist
from engine.steps.fitting import fit_meter


def _models_state(path) -> StepState:
    with Project.open(path) as project:
        state = next(step for step in checklist(project) if step.step == "Models")
    return state


def test_without_a_project_nothing_is_done() -> None:
    states = checklist(None)
    assert states and not any(state.done for state in states)


def test_the_models_step_counts_meters_with_a_chosen_model_in_plain_words(
    new_site, fitted_site, tmp_path
) -> None:
    none = _models_state(new_site)
    assert not none.done and none.found == "0 of 2 meters have a chosen model."
    assert "Fit and compare the 2 meters without one" in none.next
    one = shutil.copyfile(new_site, tmp_path / "one.loadledger")
    with Project.open(one) as project:
        fit_meter(project, "Hall", families=["seasonal_naive"], origins=2)
    assert _models_state(one).found == "1 of 2 meters has a chosen model."
    both = _models_state(fitted_site)
    assert both.done and both.found == "2 of 2 meters have a chosen model."
