"""A level that keeps up: a meter whose load drifts gets its budget's level corrected, and the
past month-ahead budgets show it helps; a meter without drift keeps its forecast as modelled.

The invented meters are the Quillmere Annex of the invented Thornbury campus: daily kWh =
(900 + 300 on weekdays) × (1 + 2 % AR(1) noise), one of them with its whole load growing by
8 % a year (known by construction: a new wing filling up). The model is the daily
change-point regression without temperatures (a calendar-only weekday model), which fits
the level its history averages, so on the drifting meter it runs low by a gap that persists.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest

from engine.budget import (
    MeterPlan,
    WeatherAssumption,
    backtest_budget,
    plans_from_refits,
    rolling_refits,
    simulate_budget,
)
from engine.budget.level import (
    MIN_GAIN,
    carried_share,
    check,
    day_sums,
    helping_centres,
    past_months,
)
from engine.models import MODEL_FAMILIES
from engine.models.base import ModelInputs

ZONE = "Europe/London"
FIRST, LAST = "2022-01-01", "2024-12-31"
AS_OF = date(2024, 12, 31)
GROWTH = 0.08  # of the load per year, on the drifting meter


def annex(growth: float, seed: int) -> tuple[ModelInputs, pd.Series]:
    """The meter's daily inputs and its noise-free truth (kWh per local day)."""
    days = pd.date_range(FIRST, LAST, freq="D").tz_localize(ZONE).tz_convert("UTC")
    local = days.tz_convert(ZONE)
    years = np.arange(len(days)) / 365.25
    truth = (900.0 + 300.0 * (local.day_of_week.to_numpy() < 5)) * (1 + growth * years)
    shocks = np.random.default_rng(seed).standard_normal(len(days)) * 0.02
    noise = pd.Series(shocks).ewm(alpha=0.5).mean().to_numpy()  # a little persistence
    energy = pd.Series(truth * (1 + noise), index=days)
    return ModelInputs(days, ZONE, energy), pd.Series(truth, index=days)


def _budgets(inputs: ModelInputs, correct_level: bool) -> pd.DataFrame:
    family = MODEL_FAMILIES["daily_change_point"]()
    refits = rolling_refits(family, inputs, 24)
    latest = MeterPlan("Annex", "electricity", refits.models[max(refits.models)], inputs)
    past = backtest_budget(
        plans_from_refits([latest], {"Annex": refits}),
        {"Annex": inputs},
        12,
        weather=WeatherAssumption.none(),
        paths=200,
        error_days=366,
        rng=4,
        correct_level=correct_level,
    )
    return past.pairs[past.pairs["kind"] == "meter"]


def _mape(pairs: pd.DataFrame) -> float:
    return float((pairs["P50"] / pairs["actual kWh"] - 1).abs().mean() * 100)


@pytest.fixture(scope="module")
def drifting() -> tuple[ModelInputs, pd.Series]:
    return annex(GROWTH, seed=8)


def test_a_drifting_level_is_corrected_and_the_past_budgets_improve(drifting) -> None:
    inputs, _ = drifting
    plain, corrected = _budgets(inputs, False), _budgets(inputs, True)
    # Centred on the model, which fits the level its history averages, the month-ahead
    # budgets miss the growing load by several percent; carrying the recent level, far less.
    assert _mape(corrected) < 0.7 * _mape(plain)


def test_the_drift_is_recovered_from_the_errors(drifting) -> None:
    inputs, truth = drifting
    family = MODEL_FAMILIES["daily_change_point"]()
    refits = rolling_refits(family, inputs, 24)
    start = pd.Timestamp("2024-12-01", tz=ZONE).tz_convert("UTC")
    model, errors = refits.models["2024-12"], refits.errors_before(start)
    plan = MeterPlan("Annex", "electricity", model, inputs, residuals=errors)
    run = simulate_budget(
        [plan], ["2024-12"], date(2024, 11, 30), WeatherAssumption.none(), paths=200, rng=5
    )
    sentence = run.assumptions["level_correction"]["Annex"]
    assert sentence.startswith("used:") and "raised" in sentence
    # A steady drift carries on: the share of the recent gap carried into the next month is
    # near one.
    months = past_months(day_sums(errors, inputs.energy, ZONE), 366)
    assert carried_share(months["L"].to_numpy(), months["r"].to_numpy()) > 0.8
    # The corrected P50 of December 2024 is nearer the noise-free truth than the model is.
    december = inputs.window(start=start)
    modelled = float(model.predict(december.without_energy()).sum())
    true_total = float(truth[truth.index >= start].sum())
    p50 = run.meters[0].months[0].energy.quantiles["50"]
    assert abs(p50 / true_total - 1) < 0.5 * abs(modelled / true_total - 1)


def test_a_steady_level_is_left_as_modelled() -> None:
    inputs, _ = annex(0.0, seed=9)
    plain, corrected = _budgets(inputs, False), _budgets(inputs, True)
    assert np.allclose(plain["P50"], corrected["P50"])  # not used at any origin


def test_the_check_learns_each_months_share_from_the_months_before_it() -> None:
    # Months that miss by exactly half the recent level before them: the check corrects
    # months 5 … 8 with share 0.5 learned before each, which leaves no miss at all.
    recent = np.array([0.02, -0.01, 0.03, 0.01, 0.02, -0.02, 0.01, 0.03])
    year = np.full(8, 0.01)
    months = pd.DataFrame({"r": 0.5 * recent, "L": recent, "b": year})
    done = check(months)
    assert done.months == 4
    r = 0.5 * recent[4:]
    assert done.mape["none"] == pytest.approx(np.mean(np.abs(r) / (1 + r)) * 100)
    assert done.mape["year"] == pytest.approx(np.mean(np.abs(r - 0.01) / (1 + r)) * 100)
    assert done.mape["recent"] == pytest.approx(0.0, abs=1e-12)
    assert done.statistic["recent"] > 0
    # Diebold & Mariano 1995 (from memory): mean loss difference over its standard error.
    gains = np.abs(r) / (1 + r) - np.abs(r - 0.01) / (1 + r)
    expected = gains.mean() / (gains.std(ddof=1) / np.sqrt(len(gains)))
    assert done.statistic["year"] == pytest.approx(expected)


def test_a_gain_within_luck_is_not_taken() -> None:
    # Twelve checked months that each ran 1 % high; the error window's mean error is +0.4 %
    # before seven of them and -0.4 % before five. Shifting by it misses by 0.6 % or 1.4 %
    # instead of 1 %: 6.7 % less error on average and better in more months than worse,
    # but a gain that the months' spread makes no evidence of (statistic about 0.56).
    year = np.r_[np.zeros(4), np.where(np.arange(12) < 7, 0.004, -0.004)]
    months = pd.DataFrame({"r": np.full(16, 0.01), "L": np.zeros(16), "b": year})
    done = check(months)
    assert done.months == 12
    assert done.mape["year"] <= (1 - MIN_GAIN) * done.mape["none"]
    assert done.statistic["year"] == pytest.approx(0.5625, abs=0.01)
    assert helping_centres(done) == []
    # The same shift before every month is a gain with no spread at all: taken.
    steady = check(months.assign(b=0.004))
    assert helping_centres(steady) == ["year"]
