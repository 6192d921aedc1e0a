"""Choosing another model of a meter's ranking keeps it without a new backtest."""

from __future__ import annotations

import shutil

import pytest

from engine.backtest import BacktestResult
from engine.errors import InputError
from engine.project import Project
from engine.steps.fitting import chosen_model, fit_meter, use_ranked_model


def test_another_ranked_model_is_kept_with_its_backtested_settings(new_site, tmp_path):
    path = shutil.copyfile(new_site, tmp_path / "site.loadledger")
    with Project.open(path) as project:
        fit_meter(project, "Hall", families=["seasonal_naive", "daily_change_point"], origins=2)
        _, before = chosen_model(project, "Hall")
        other = next(row["model"] for row in before["ranking"] if row["model"] != before["chosen"])
        backtests = len(project.results("backtest", "Hall"))
        model, choice = use_ranked_model(project, "Hall", other)
        assert model.family == other and choice["chosen"] == other
        assert "chosen by hand" in choice["reasons"][0]
        assert choice["ranking"] == before["ranking"]  # the backtest's scores, unchanged
        # The settings are those the backtest ran, read back from its stored result.
        stored = BacktestResult.from_dict(project.results("backtest", "Hall")[-1]["body"])
        assert model.settings() == stored.models[other].settings
        assert len(project.results("backtest", "Hall")) == backtests  # no new backtest
        kept, kept_choice = chosen_model(project, "Hall")
        assert kept.family == other and kept_choice["chosen"] == other
        with pytest.raises(InputError, match="not in the last ranking"):
            use_ranked_model(project, "Hall", "mstl_ets")
