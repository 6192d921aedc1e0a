"""Slow benchmark families stop at the origin from which they could no longer be recommended,
and the recommendation is the one a full backtest gives."""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest

from engine.backtest import STOPPED, Race, run_backtest
from engine.fit_brief import ranking_sentence
from engine.models import MODEL_FAMILIES
from engine.selection import EXPLAINABLE_MARGIN, recommend_model
from tests.engine.test_budget_campus import make_campus

FAMILIES = ("calendar_regression", "seasonal_naive", "daily_ets", "monthly_sarima")


@pytest.fixture(scope="module")
def meter():
    # Ground truth by construction: an invented weather-driven meter, whose calendar
    # regression forecasts month totals far better than weather-blind benchmarks can.
    campus = make_campus(8, hourly=True, first_day=date(2021, 1, 1), last_day=date(2023, 12, 31))
    name = next(iter(campus.inputs))
    return campus.inputs[name], campus.weather


def _backtest(meter, race, families=FAMILIES):
    inputs, weather = meter
    models = {name: MODEL_FAMILIES[name]() for name in families}
    return run_backtest(models, inputs, origins=8, weather_history=weather, race=race)


def test_a_raced_family_stops_and_the_recommendation_is_unchanged(meter):
    full = _backtest(meter, None)
    raced = _backtest(meter, Race(frozenset({"daily_ets", "monthly_sarima"}), EXPLAINABLE_MARGIN))
    stopped = raced.failures[raced.failures["stage"] == STOPPED]
    assert set(stopped["model"]) == {"daily_ets", "monthly_sarima"}
    fitted = raced.fits.groupby("model").size()
    assert fitted["calendar_regression"] == 8 and fitted["daily_ets"] < 8
    for model in ("daily_ets", "monthly_sarima"):
        assert raced.failed_origins(model, "typical weather") == 0  # stopping is no failure
        assert "stopped after" in raced.stopped(model)
    # The explainable and the unraced models' scores are those of the full run.
    for model in ("calendar_regression", "seasonal_naive"):
        assert raced.scorecard(model, "typical weather") == full.scorecard(model, "typical weather")
    chosen_full = recommend_model(full)
    chosen_raced = recommend_model(raced)
    assert chosen_raced.chosen == chosen_full.chosen == "calendar_regression"
    # A stopped family ranks after every model that ran all origins.
    ranking = chosen_raced.ranking.set_index("model")
    assert ranking.loc["daily_ets", "rank"] > ranking.loc["seasonal_naive", "rank"]
    # In one sentence: the best of the models that ran every month; the stopped ones apart.
    sentence = ranking_sentence(chosen_raced.to_dict(), raced)
    naive = ranking.loc["seasonal_naive", "month-total MAPE %"]
    assert ", best of 2; 2 models stopped early, unable to win; the benchmark " in sentence
    assert sentence.endswith(f"'seasonal naive benchmark' was {naive:.1f} %.")


def test_with_no_explainable_model_to_beat_a_raced_family_runs_every_origin(meter):
    race = Race(frozenset({"daily_ets"}), EXPLAINABLE_MARGIN)
    raced = _backtest(meter, race, families=("seasonal_naive", "daily_ets"))
    assert (raced.failures["stage"] != STOPPED).all()
    assert raced.fits.groupby("model").size()["daily_ets"] == 8
    assert np.isfinite(raced.scorecard("daily_ets", "typical weather").month_total_mape)
