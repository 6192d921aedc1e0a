"""The budget's refits take the months the fit wizard's backtest already fitted from the
backtest, and those equal refits made from scratch (same models, same errors to 1e-8)."""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest

from engine.budget import RollingRefits, rolling_refits
from engine.weather import TypicalYears
from engine.wizard import MeterJob, compare_models, model_meter
from tests.engine.test_budget_campus import make_campus


@pytest.fixture(scope="module")
def inputs():
    campus = make_campus(5, hourly=True, first_day=date(2022, 1, 1), last_day=date(2023, 12, 31))
    name = next(iter(campus.inputs))
    return campus.inputs[name], campus.weather


def test_refits_taken_from_the_backtest_equal_refits_from_scratch(inputs):
    history, weather = inputs
    compared = compare_models(
        history,
        weather,
        families=["calendar_regression", "seasonal_naive"],
        origins=4,
        keep_fitted=True,
    )
    for family in ("calendar_regression", "seasonal_naive"):
        reused = RollingRefits.from_backtest(compared.backtest, family)
        assert len(reused.models) == 4
        model = compared.models[family]
        both = rolling_refits(model, history, 7, reuse=reused)
        scratch = rolling_refits(model, history, 7)
        assert list(both.models) == list(scratch.models)
        assert both.errors.index.equals(scratch.errors.index)
        np.testing.assert_allclose(both.errors, scratch.errors, rtol=1e-8, atol=1e-9)
        ahead = history.window(start=both.errors.index[-48]).without_energy()
        for month, fitted in both.models.items():
            np.testing.assert_allclose(
                fitted.predict(ahead), scratch.models[month].predict(ahead), rtol=1e-8
            )


def test_the_refits_survive_the_project_files_json(inputs):
    history, weather = inputs
    typical = TypicalYears(weather, history.timezone)
    job = MeterJob("meter", history, typical, families=("seasonal_naive",), refit_months=3)
    made = model_meter(job)
    restored = RollingRefits.from_dict(made.refits.to_dict())
    assert restored.errors.equals(made.refits.errors)
    assert list(restored.models) == list(made.refits.models)
    assert restored.failed == made.refits.failed


def test_the_main_backtest_reuses_the_tuning_fits_of_the_chosen_settings(inputs):
    from engine.backtest import run_backtest
    from engine.models import CalendarRegressionModel
    from engine.wizard import TUNING_ORIGINS, _tune

    history, weather = inputs
    chosen, fitted = _tune(CalendarRegressionModel(), history, weather)
    assert len(fitted) == TUNING_ORIGINS
    reused = run_backtest({"c": chosen}, history, origins=5, weather_history=weather,
                          keep_fitted=True, fitted={"c": fitted})  # fmt: skip
    fresh = run_backtest({"c": chosen}, history, origins=5, weather_history=weather)
    for origin, (model, _) in fitted.items():
        assert reused.fitted["c"][origin] is model  # taken, not fitted again
    # Fits sharing work across other sets of windows agree to rounding, not bit for bit.
    scores = [run.summary().drop(columns="mean fit seconds") for run in (reused, fresh)]
    pd.testing.assert_frame_equal(*scores, rtol=1e-9)
