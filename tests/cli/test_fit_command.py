"""`loadledger fit` on a real project: scorecard, recommendation, and a stored model that
predicts identically after the project is reopened (no pickle: JSON in the project file).

Ground truth by construction: an invented building whose hourly energy is a weekday occupancy
shape (smooth arrival and departure ramps) plus a heating response below 12 °C plus 3 % noise.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from engine.project import Project
from engine.steps.fitting import chosen_model, meter_inputs
from tests.cli.cli_support import loadledger


def _run(*args):
    return loadledger(*args).stdout


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fit")
    rng = np.random.default_rng(5)
    hours = pd.date_range("2023-01-01", "2024-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 11 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    clock = hours.hour.to_numpy() + 0.5
    ramp = 1 / (1 + np.exp(-(clock - 8) / 0.7)) - 1 / (1 + np.exp(-(clock - 18) / 0.7))
    occupied = (hours.day_of_week < 5) * ramp  # people arrive around 8 h and leave around 18 h
    truth = 40 + 60 * occupied + 4.0 * np.maximum(12 - temps, 0)
    energy = truth * (1 + rng.normal(0, 0.03, len(hours)))
    noise_cv = 100 * np.sqrt(np.mean((0.03 * truth) ** 2)) / np.mean(truth)
    meters = folder / "hall.csv"
    meters.write_text("Timestamp,Hall (kWh)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.3f}" for t, v in zip(hours, energy, strict=True)))  # fmt: skip
    weather = folder / "station.csv"
    weather.write_text("Timestamp,Dry bulb (°C)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in zip(hours, temps, strict=True)))  # fmt: skip
    target = folder / "hall.loadledger"
    _run("new", target, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    return target, noise_cv


def test_fit_recommends_the_explainable_model_over_the_naive_benchmark(project):
    project, noise_cv = project
    report = json.loads(
        _run(
            "fit",
            project,
            "--models",
            "calendar_regression,seasonal_naive",
            "--origins",
            "3",
            "--json",
        )
    )
    (meter,) = report["meters"]
    assert meter["recommended"] == "calendar_regression"
    ranking = {row["model"]: row for row in meter["ranking"]}
    assert (ranking["calendar_regression"]["month-total MAPE %"]
            < ranking["seasonal_naive"]["month-total MAPE %"])  # fmt: skip
    # with the actual weather of the forecast months only the known noise is left to miss
    # (its CV is 0.03 × RMS/mean of the true load); Guideline 14's hourly limit is 30 %
    actual = next(
        row
        for row in meter["scorecard"]
        if row["model"] == "calendar_regression" and row["weather"] == "actual weather"
    )
    assert actual["CV(RMSE) %"] < 1.15 * noise_cv
    assert meter["explanation"], "the calendar regression explains itself in physical units"
    # heating acts below 12 °C only: a large share in January, none in July (by construction)
    shares = {row["month"][-2:]: row for row in meter["contributions"]}
    assert shares["01"]["heating"] > 15 and abs(shares["07"]["heating"]) < 2
    for row in meter["contributions"]:  # the components add up to the modelled energy
        parts = ("base", "daily", "weekly", "annual", "calendar", "heating", "cooling", "trend")
        assert sum(row.get(p, 0) for p in parts) == pytest.approx(100, abs=0.1)


def test_the_stored_model_predicts_identically_after_reopening(project):
    project, _ = project
    _run("fit", project, "--models", "calendar_regression", "--origins", "2", "--json")
    with Project.open(project) as opened:
        first, _ = chosen_model(opened, "Hall")
        inputs = meter_inputs(opened, "Hall")
    with Project.open(project) as reopened:
        again, choice = chosen_model(reopened, "Hall")
    assert choice["chosen"] == "calendar_regression"
    future = inputs.window(start=inputs.index[-24 * 30]).without_energy()
    assert np.array_equal(first.predict(future).to_numpy(), again.predict(future).to_numpy())


def test_the_orders_are_chosen_by_backtest(project):
    from engine.backtest import ACTUAL_WEATHER, run_backtest
    from engine.models import CalendarRegressionModel
    from engine.steps.fitting import hourly_weather
    from engine.wizard import TUNING_ORIGINS, tuned

    path, _ = project
    with Project.open(path) as opened:
        inputs, weather = meter_inputs(opened, "Hall"), hourly_weather(opened)
    chosen = tuned(CalendarRegressionModel(), inputs, weather)
    # score every candidate the same way, independently of the chooser
    settings = [{}, *CalendarRegressionModel.candidate_settings()]
    scores = []
    for candidate in settings:
        models = {"m": CalendarRegressionModel(**candidate)}
        result = run_backtest(
            models, inputs, origins=TUNING_ORIGINS, horizons=(1,), weather_history=weather
        )
        scores.append(result.scorecard("m", ACTUAL_WEATHER).cv_rmse)
    best = CalendarRegressionModel(**settings[int(np.argmin(scores))])
    assert chosen.settings() == best.settings()
