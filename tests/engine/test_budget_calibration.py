"""Calibration of budget ranges: the coverage check, the split-conformal scale, and the backtest.

The rolling month-ahead backtest runs on the synthetic campus of ``test_budget_campus``
(documented there, known noise), at daily resolution to stay fast.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest
from scipy.stats import norm

from engine.budget import (
    BudgetBacktest,
    Calibration,
    WeatherAssumption,
    backtest_budget,
    calibrate,
    conformal_scale,
    rolling_calibration,
    simulate_budget,
)
from engine.errors import InputError
from tests.engine.test_budget_campus import Campus, campus_plans, make_campus


def _pairs(actual: np.ndarray, p10: np.ndarray, p50: np.ndarray, p90: np.ndarray) -> pd.DataFrame:
    return pd.DataFrame({"actual kWh": actual, "P10": p10, "P50": p50, "P90": p90})


def test_the_conformal_scale_is_the_rank_the_method_names() -> None:
    # Twelve months, P10–P90 = 90–110 around a P50 of 100; misses of these sizes give the
    # scores |miss| / 10, and ⌈(12 + 1) · 0.8⌉ = 11, so the scale is the 11th smallest score.
    misses = np.array([-3, 5, 12, -15, 8, 20, -1, 30, 4, -19, 25, 2], dtype=float)
    actual = 100 + misses
    flat = np.full(12, 1.0)
    scores = np.sort(np.abs(misses) / 10)
    scale = conformal_scale(actual, 100 * flat, 90 * flat, 110 * flat, 0.8)
    assert scale == pytest.approx(scores[10]) == pytest.approx(2.5)
    result = calibrate(_pairs(actual, 90 * flat, 100 * flat, 110 * flat))
    # Six of twelve held, 50 % against a nominal 80 %: off, so corrected.
    assert (result.held, result.tried) == (6, 12)
    assert result.scale == pytest.approx(2.5)
    assert "widened by a factor 2.50" in result.sentence()
    assert "split-conformal" in result.method


def test_misses_are_scored_on_their_own_side_of_the_p50() -> None:
    # A range 95–120 around 100: a miss below is measured against 5, above against 20.
    actual = np.array([90.0, 140.0])
    ones = np.ones(2)
    assert conformal_scale(actual, 100 * ones, 95 * ones, 120 * ones, 0.5) == pytest.approx(2.0)


def test_ranges_half_as_wide_as_they_should_be_are_doubled() -> None:
    # Normal errors with ranges at half the true P10–P90 (z = 1.2816, the standard normal 90th
    # percentile from scipy.stats.norm): the conformal scale comes back near 2 and the widened
    # ranges hold 80 % of fresh months.
    rng = np.random.default_rng(8)
    z90 = norm.ppf(0.9)
    actual = rng.standard_normal(50_000)
    zeros = np.zeros_like(actual)
    result = calibrate(_pairs(actual, zeros - z90 / 2, zeros, zeros + z90 / 2))
    assert result.coverage == pytest.approx(2 * norm.cdf(z90 / 2) - 1, abs=0.01)
    assert result.scale == pytest.approx(2.0, rel=0.02)
    fresh = rng.standard_normal(50_000)
    assert np.mean(np.abs(fresh) <= result.scale * z90 / 2) == pytest.approx(0.8, abs=0.01)


def test_a_range_near_its_nominal_coverage_is_left_alone() -> None:
    # Forty months and a 5-point tolerance: 30 to 34 held (75–85 %) is on target.
    ones = np.ones(40)
    for held, corrected in ((30, False), (34, False), (29, True), (35, True)):
        actual = np.r_[np.linspace(-0.9, 0.9, held), np.full(40 - held, 5.0)]
        result = calibrate(_pairs(actual, -ones, 0 * ones, ones))
        assert result.held == held
        assert (result.scale != 1.0) is corrected
    few = calibrate(_pairs(np.full(8, 5.0), -np.ones(8), np.zeros(8), np.ones(8)))
    assert few.scale == 1.0 and "fewer than the 12" in few.method
    with pytest.raises(InputError, match="P10"):
        calibrate(pd.DataFrame({"actual kWh": [1.0]}))


@pytest.fixture(scope="module")
def campus() -> Campus:
    return make_campus(seed=11)


@pytest.fixture(scope="module")
def past(campus: Campus) -> BudgetBacktest:
    """Month-ahead budgets for the 48 months 2021–2024, weather from the 10 years before each."""
    return backtest_budget(
        lambda as_of: campus_plans(campus, as_of),
        campus.inputs,
        48,
        weather=WeatherAssumption.past_years(campus.weather, years=10),
        paths=300,
        rng=36,
    )


def test_corrected_month_ahead_ranges_hold_about_four_months_in_five(
    past: BudgetBacktest,
) -> None:
    """36 rolling month-ahead budgets per meter, each corrected by the months before it only.

    Uncorrected, ten weather years and week-long blocks make the ranges a little narrow (a
    new year's weather falls inside the P10–P90 of ten past years less often than 80 %, and
    block joins drop some of the errors' dependence); the rolling correction brings the
    held-out coverage into 70–90 %.
    """
    pairs = past.pairs
    assert past.skipped.empty
    assert pairs["month"].nunique() == 48
    assert (pairs["month"].iloc[0], pairs["month"].iloc[-1]) == ("2021-01", "2024-12")
    meters = pairs[pairs["kind"] == "meter"]
    replayed = pd.concat(
        [rolling_calibration(rows.reset_index(drop=True)) for _, rows in meters.groupby("name")]
    )
    assert len(replayed) == 3 * 36
    assert 0.70 <= replayed["held corrected"].mean() <= 0.90
    assert replayed["held corrected"].mean() >= replayed["held"].mean()
    for name, calibration in past.calibrations().items():
        rows = meters[meters["name"] == name]
        assert calibration.tried == 48
        assert calibration.held == int(
            ((rows["actual kWh"] >= rows["P10"]) & (rows["actual kWh"] <= rows["P90"])).sum()
        )


def test_a_calibration_scales_a_meters_ranges_and_is_reported(campus: Campus) -> None:
    plans = campus_plans(campus, date(2024, 6, 30))
    weather = WeatherAssumption.past_years(campus.weather)
    widened = Calibration(10, 90, 20, 36, 1.5, "split-conformal scaling (test)")
    months = ["2024-07", "2024-08"]
    plain = simulate_budget(plans, months, "2024-06-30", weather, paths=300, rng=6)
    scaled = simulate_budget(
        plans,
        months,
        "2024-06-30",
        weather,
        paths=300,
        rng=6,
        calibration={"Boiler House": widened},
    )
    for before, after in zip(plain.meters, scaled.meters, strict=True):
        factor = 1.5 if before.name == "Boiler House" else 1.0
        for one, two in zip(before.months, after.months, strict=True):
            middle = one.energy.quantiles["50"]
            assert two.energy.quantiles["50"] == pytest.approx(middle, rel=1e-12)
            for level in ("10", "90"):
                assert two.energy.quantiles[level] - middle == pytest.approx(
                    factor * (one.energy.quantiles[level] - middle), rel=1e-9
                )
        spread = before.daily["P90"] - before.daily["P50"]
        pd.testing.assert_series_equal(
            after.daily["P90"] - after.daily["P50"], factor * spread, rtol=1e-9
        )
    assert scaled.calibration == {"Boiler House": widened}
    assert "widened by a factor 1.50" in scaled.assumptions["calibration"]["Boiler House"]
    assert any("Quarry Library" in caution for caution in scaled.cautions)
    assert scaled.to_json()["calibration"]["Boiler House"]["coverage"] == pytest.approx(20 / 36)
