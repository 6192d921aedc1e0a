"""Accuracy metrics: hand-worked examples, reference libraries and Guideline 14's limits.

Invented data are set on the invented Bramhope Technical College campus (the Kestrel Hall
meter), in an invented climate; expected values are worked by hand or computed by
scikit-learn or pandas, never by the code under test.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.metrics import (
    mean_absolute_error,
    mean_absolute_percentage_error,
    mean_pinball_loss,
    mean_squared_error,
    r2_score,
)

from engine.scoring import (
    GUIDELINE14_LIMITS,
    Scorecard,
    calibration_check,
    cv_rmse,
    interval_coverage,
    mae,
    mape,
    mase,
    mean_scaled_error,
    month_total_mape,
    month_totals,
    nmbe,
    pinball_loss,
    r_squared,
    rmse,
    score_forecast,
    seasonal_naive_mae,
    smape,
    total_by,
    winkler_score,
)

# A five-month worked example: measured and predicted monthly kWh of Kestrel Hall (invented).
MEASURED = np.array([100.0, 110.0, 90.0, 120.0, 80.0])
PREDICTED = np.array([98.0, 112.0, 95.0, 115.0, 84.0])


def test_cv_rmse_worked_example_by_hand() -> None:
    # ASHRAE Guideline 14-2014 (from memory): CV(RMSE) = 100·sqrt(Σ(y − ŷ)² / (n − p)) / ȳ.
    # Errors 2, −2, −5, 5, −4: SSE = 4 + 4 + 25 + 25 + 16 = 74; n − p = 5 − 1 = 4;
    # sqrt(74 / 4) = sqrt(18.5) = 4.3012; ȳ = 500 / 5 = 100  →  4.3012 %.
    assert cv_rmse(MEASURED, PREDICTED, n_parameters=1) == pytest.approx(4.30116, abs=1e-5)
    # With p = 0 (forecasts of unseen months): sqrt(74 / 5) / 100 = 3.8471 %.
    assert cv_rmse(MEASURED, PREDICTED) == pytest.approx(3.84708, abs=1e-5)


def test_nmbe_sign_follows_guideline_14() -> None:
    # ASHRAE Guideline 14-2014 (from memory): NMBE = 100·Σ(y − ŷ) / ((n − p)·ȳ), y measured.
    # Σ(y − ŷ) = 2 − 2 − 5 + 5 − 4 = −4: the model predicts 4 kWh too much in all, so NMBE is
    # negative: −4 / (4 · 100) = −1 % with p = 1, and −4 / (5 · 100) = −0.8 % with p = 0.
    assert nmbe(MEASURED, PREDICTED, n_parameters=1) == pytest.approx(-1.0)
    assert nmbe(MEASURED, PREDICTED) == pytest.approx(-0.8)
    # A model that predicts too little has a positive NMBE.
    assert nmbe([100.0, 100.0], [90.0, 90.0]) == pytest.approx(10.0)


def test_too_many_parameters_is_refused() -> None:
    with pytest.raises(ValueError, match="degrees of freedom"):
        cv_rmse(MEASURED, PREDICTED, n_parameters=5)
    with pytest.raises(ValueError, match="negative"):
        nmbe(MEASURED, PREDICTED, n_parameters=-1)


def test_point_metrics_match_scikit_learn() -> None:
    rng = np.random.default_rng(8102)
    actual = rng.uniform(40.0, 160.0, 500)
    predicted = actual * rng.lognormal(0.0, 0.1, 500) + rng.normal(0.0, 3.0, 500)
    # scikit-learn 1.9 as the reference implementation.
    assert mae(actual, predicted) == pytest.approx(mean_absolute_error(actual, predicted))
    assert rmse(actual, predicted) == pytest.approx(
        math.sqrt(mean_squared_error(actual, predicted))
    )
    assert r_squared(actual, predicted) == pytest.approx(r2_score(actual, predicted))
    # sklearn returns MAPE as a fraction; no actual is zero here, so the two coincide.
    assert mape(actual, predicted) == pytest.approx(
        100.0 * mean_absolute_percentage_error(actual, predicted)
    )
    for q in (0.1, 0.5, 0.9):
        assert pinball_loss(actual, predicted, q) == pytest.approx(
            mean_pinball_loss(actual, predicted, alpha=q)
        )
    # CV(RMSE) with p = 0 is the RMSE over the mean (Guideline 14 with n − 0).
    assert cv_rmse(actual, predicted) == pytest.approx(
        100.0 * math.sqrt(mean_squared_error(actual, predicted)) / actual.mean()
    )


def test_pairs_with_a_gap_are_ignored_not_filled() -> None:
    actual = np.array([100.0, np.nan, 90.0, 120.0, 80.0, 70.0])
    predicted = np.array([98.0, 112.0, np.nan, 115.0, 84.0, 71.0])
    keep = [0, 3, 4, 5]
    for metric in (mae, rmse, mape, smape, r_squared, cv_rmse, nmbe):
        assert metric(actual, predicted) == pytest.approx(metric(actual[keep], predicted[keep]))
    assert pinball_loss(actual, predicted, 0.9) == pytest.approx(
        mean_pinball_loss(actual[keep], predicted[keep], alpha=0.9)
    )
    # Nothing to compare: NaN, not zero.
    assert math.isnan(mae([np.nan], [1.0]))
    assert math.isnan(cv_rmse([np.nan, 1.0], [1.0, np.nan]))


def test_series_are_aligned_on_their_index() -> None:
    index = pd.date_range("2031-05-01", periods=4, freq="h", tz="UTC")
    actual = pd.Series([10.0, 20.0, 30.0, 40.0], index=index)
    shuffled = pd.Series([41.0, 29.0, 22.0, 10.0], index=index[::-1])
    # After alignment the errors are 0, −2, 1, −1: MAE = 4 / 4 = 1.
    assert mae(actual, shuffled) == pytest.approx(1.0)
    with pytest.raises(ValueError, match="length"):
        mae([1.0, 2.0], [1.0])


def test_smape_and_mape_by_hand() -> None:
    # sMAPE (Hyndman & Koehler 2006, from memory): mean of 2|y − ŷ| / (|y| + |ŷ|), in %.
    # Pairs (100, 80): 40/180 = 0.2222; (50, 60): 20/110 = 0.1818; (0, 0): no error.
    assert smape([100.0, 50.0, 0.0], [80.0, 60.0, 0.0]) == pytest.approx(
        100.0 * (40 / 180 + 20 / 110 + 0.0) / 3
    )
    # MAPE leaves out a zero actual: (20/100 + 10/50) / 2 = 20 %.
    assert mape([100.0, 50.0, 0.0], [80.0, 60.0, 5.0]) == pytest.approx(20.0)
    assert math.isnan(mape([0.0], [1.0]))


def test_mase_against_hand_computed_seasonal_naive_scale() -> None:
    # Season of 2: training 10, 20, 14, 22, 12, 26 → seasonal differences |14−10| = 4,
    # |22−20| = 2, |12−14| = 2, |26−22| = 4 → in-sample naive MAE = 12 / 4 = 3.
    training = [10.0, 20.0, 14.0, 22.0, 12.0, 26.0]
    assert seasonal_naive_mae(training, 2) == pytest.approx(3.0)
    # Forecast errors 3 and 6 → MAE 4.5 → MASE = 4.5 / 3 = 1.5 (Hyndman & Koehler 2006).
    assert mase([15.0, 30.0], [12.0, 24.0], training, 2) == pytest.approx(1.5)
    # A gap in the training drops the pairs it touches: |22−20| = 2, |26−22| = 4 → scale 3.
    assert seasonal_naive_mae([10.0, 20.0, np.nan, 22.0, 12.0, 26.0], 2) == pytest.approx(3.0)
    # Per-pair scales let backtest origins be pooled: (3/3 + 6/2) / 2 = 2.
    assert mean_scaled_error([15.0, 30.0], [12.0, 24.0], [3.0, 2.0]) == pytest.approx(2.0)
    assert math.isnan(seasonal_naive_mae([1.0, 2.0], 2))


def test_interval_scores_by_hand() -> None:
    actual = np.array([100.0, 115.0, 85.0, 110.0])
    lower = np.full(4, 90.0)
    upper = np.full(4, 110.0)
    # Inside (bound included): 100 and 110 → coverage 2 / 4.
    assert interval_coverage(actual, lower, upper) == pytest.approx(0.5)
    # Winkler score (Hyndman & Athanasopoulos, FPP 3rd ed., §5.9, from memory) for an 80 %
    # interval, α = 0.2: width 20, plus 2/α = 10 times the distance outside:
    # 20, 20 + 10·5 = 70, 20 + 10·5 = 70, 20 → mean 45.
    assert winkler_score(actual, lower, upper, 0.8) == pytest.approx(45.0)
    with pytest.raises(ValueError, match="between 0 and 1"):
        winkler_score(actual, lower, upper, 80.0)
    with pytest.raises(ValueError, match="between 0 and 1"):
        pinball_loss(actual, lower, 1.0)


def test_pinball_loss_by_hand() -> None:
    # FPP 3rd ed. §5.9 (from memory): q·(y − f) above the quantile, (1 − q)·(f − y) below.
    # q = 0.9: y = 120 over f = 100 costs 0.9·20 = 18; y = 90 under f = 100 costs 0.1·10 = 1.
    assert pinball_loss([120.0, 90.0], [100.0, 100.0], 0.9) == pytest.approx((18.0 + 1.0) / 2)


ZONE = "America/Chicago"


def _hourly(first: str, last: str) -> pd.DatetimeIndex:
    """UTC hours covering local days ``first`` to ``last`` inclusive at the invented site."""
    start = pd.Timestamp(first).tz_localize(ZONE).tz_convert("UTC")
    stop = (pd.Timestamp(last) + pd.Timedelta(days=1)).tz_localize(ZONE).tz_convert("UTC")
    return pd.date_range(start, stop, freq="h", inclusive="left")


def test_month_totals_follow_local_months_across_daylight_saving() -> None:
    index = _hourly("2031-02-01", "2031-04-30")
    rng = np.random.default_rng(3303)
    actual = pd.Series(rng.uniform(50.0, 90.0, len(index)), index=index)
    predicted = actual * 1.05
    predicted.iloc[100] = np.nan  # a pair left out of February's totals
    totals = month_totals(actual, predicted, ZONE)
    # Reference: pandas resampling on the local clock, computed another way.
    local_actual = actual.drop(index[100]).tz_convert(ZONE).resample("MS").sum()
    assert totals.index.tolist() == ["2031-02", "2031-03", "2031-04"]
    np.testing.assert_allclose(totals["actual kWh"], local_actual.to_numpy())
    np.testing.assert_allclose(totals["predicted kWh"], 1.05 * local_actual.to_numpy())
    np.testing.assert_allclose(totals["forecast vs actual %"], 5.0)
    # March 2031 loses an hour to daylight saving: 743 hours; February one pair fewer.
    assert totals["intervals"].tolist() == [28 * 24 - 1, 31 * 24 - 1, 30 * 24]
    assert month_total_mape(totals["forecast vs actual %"]) == pytest.approx(5.0)
    assert month_total_mape([-4.0, 2.0, np.nan]) == pytest.approx(3.0)


def test_total_by_several_keys() -> None:
    index = pd.RangeIndex(6)
    actual = pd.Series([1.0, 2.0, 3.0, 4.0, 5.0, 6.0], index=index)
    predicted = pd.Series([2.0, 2.0, 3.0, 2.0, 5.0, 12.0], index=index)
    totals = total_by(actual, predicted, {"a": ["x", "x", "y", "y", "y", "z"], "b": [1] * 6})
    assert totals[["a", "b"]].values.tolist() == [["x", 1], ["y", 1], ["z", 1]]
    assert totals["actual kWh"].tolist() == [3.0, 12.0, 6.0]
    # (4 / 3 − 1) = 33.3 %, (10 / 12 − 1) = −16.7 %, (12 / 6 − 1) = 100 %.
    np.testing.assert_allclose(totals["forecast vs actual %"], [100 / 3, -50 / 3, 100.0])


def test_guideline_14_limits_and_boundaries() -> None:
    # ASHRAE Guideline 14-2014 calibration criteria (from memory): monthly CV(RMSE) ≤ 15 %,
    # NMBE within ±5 %; hourly CV(RMSE) ≤ 30 %, NMBE within ±10 %.
    assert GUIDELINE14_LIMITS == {"monthly": (15.0, 5.0), "hourly": (30.0, 10.0)}
    assert calibration_check(15.0, -5.0, "monthly").meets
    assert not calibration_check(15.1, 0.0, "monthly").meets
    assert not calibration_check(10.0, 5.2, "monthly").meets_nmbe
    hourly = calibration_check(29.0, -9.9, "hourly")
    assert hourly.meets and "limit 30 %" in hourly.describe() and "met" in hourly.describe()
    assert not calibration_check(math.nan, 0.0, "hourly").meets
    with pytest.raises(ValueError, match="resolution"):
        calibration_check(1.0, 1.0, "daily")


def test_score_forecast_collects_every_metric() -> None:
    index = _hourly("2031-06-01", "2031-07-31")
    hour = index.tz_convert(ZONE).hour.to_numpy()
    actual = pd.Series(80.0 + 40.0 * ((hour >= 8) & (hour < 18)), index=index)
    predicted = actual * 0.9
    card = score_forecast(
        actual,
        predicted,
        ZONE,
        model="office_shape",
        label="Office shape",
        naive_scale=4.0,
        lower=actual * 0.8,
        upper=actual * 1.2,
        level=0.8,
    )
    # Predicting 90 % of every value: NMBE = +10 % exactly, month totals 10 % low,
    # CV(RMSE) = 10 % · sqrt(mean(y²)) / mean(y), MAE = 0.1·mean(y), MASE = MAE / 4.
    y = actual.to_numpy()
    assert card.nmbe == pytest.approx(10.0)
    assert card.monthly_nmbe == pytest.approx(10.0)
    assert card.month_total_mape == pytest.approx(10.0)
    assert card.cv_rmse == pytest.approx(10.0 * np.sqrt(np.mean(y**2)) / y.mean())
    assert card.mase == pytest.approx(0.1 * y.mean() / 4.0)
    assert card.months == 2 and card.intervals == len(index)
    assert card.coverage == 1.0 and card.interval_level == 0.8
    assert card.interval_check.meets and not card.monthly_check.meets
    assert not card.meets_guideline14
    assert card.as_row()["month-total MAPE %"] == pytest.approx(10.0)


def test_scorecard_json_round_trip_keeps_nan() -> None:
    index = _hourly("2031-06-01", "2031-06-03")
    actual = pd.Series(50.0, index=index)
    card = score_forecast(actual, actual * 1.02, ZONE, model="flat")
    # A constant actual has no variance: R² is undefined (NaN) and no interval was scored.
    assert math.isnan(card.r_squared) and card.coverage is None
    text = json.dumps(card.to_dict(), allow_nan=False)
    back = Scorecard.from_dict(json.loads(text))
    assert math.isnan(back.r_squared) and back.coverage is None
    assert back.cv_rmse == card.cv_rmse and back.model == "flat"


@settings(max_examples=60, deadline=None)
@given(
    values=st.lists(st.floats(1.0, 1e4), min_size=3, max_size=40),
    factor=st.floats(0.5, 1.5),
    scale=st.floats(1e-3, 1e3),
)
def test_percentage_metrics_do_not_depend_on_the_unit(values, factor, scale) -> None:
    # kWh or MWh: CV(RMSE), NMBE, MAPE and sMAPE are unit-free ratios.
    actual = np.asarray(values)
    predicted = actual * factor + 0.5
    for metric in (cv_rmse, nmbe, mape, smape):
        assert metric(actual * scale, predicted * scale) == pytest.approx(
            metric(actual, predicted), rel=1e-9, abs=1e-9
        )
