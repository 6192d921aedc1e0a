"""Change-point regression: recovery of known shapes, reference libraries, Guideline 14 metrics.

Synthetic data are set in an invented climate (daily means -12..32 °C) for an invented campus
building; every expected value is either the generating parameter or computed another way.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import curve_fit
from sklearn.exceptions import NotFittedError

from engine.changepoint import (
    KINDS,
    PARAMETER_COUNT,
    ChangePointFit,
    _candidate_sse,
    _checked_inputs,
    _SortedPoints,
    best_of,
    fit_kinds,
    select_best,
)
from engine.errors import InputError, ProjectError


def _shape(x, base, heat_point, heat_slope, cool_point, cool_slope):
    return (
        base
        + heat_slope * np.maximum(heat_point - x, 0.0)
        + cool_slope * np.maximum(x - cool_point, 0.0)
    )


# kind: (base kWh/day, heating change point °C, heating slope, cooling change point, cooling slope)
TRUTH = {
    "3PH": (820.0, 14.0, 36.0, 14.0, 0.0),
    "3PC": (640.0, 0.0, 0.0, 17.5, 52.0),
    "4P": (900.0, 12.0, 30.0, 12.0, 18.0),
    "5P": (700.0, 9.0, 28.0, 20.0, 45.0),
}


def _daily_data(kind, n=900, noise=15.0, seed=11):
    rng = np.random.default_rng(seed)
    temps = rng.uniform(-12.0, 32.0, n)
    energy = _shape(temps, *TRUTH[kind]) + rng.normal(0.0, noise, n)
    return temps, energy


@pytest.mark.parametrize("kind", ["3PH", "3PC", "4P", "5P"])
def test_recovers_known_parameters(kind):
    # Tolerances: change points within 0.5 °C, slopes within 3 %, base within 1 % (noise
    # sd 15 kWh/day on 900 days, about 2 % of the base load).
    base, heat_point, heat_slope, cool_point, cool_slope = TRUTH[kind]
    temps, energy = _daily_data(kind)
    model = ChangePointFit(kind).fit(temps, energy)
    expected_points = {
        "3PH": (heat_point,),
        "3PC": (cool_point,),
        "4P": (heat_point,),
        "5P": (heat_point, cool_point),
    }[kind]
    np.testing.assert_allclose(model.change_points_, expected_points, atol=0.5)
    assert model.heating_slope_ == pytest.approx(heat_slope, rel=0.03, abs=1e-9)
    assert model.cooling_slope_ == pytest.approx(cool_slope, rel=0.03, abs=1e-9)
    assert model.intercept_ == pytest.approx(base, rel=0.01)
    assert model.plausible


@pytest.mark.parametrize("kind", ["3PH", "5P"])
def test_search_finds_at_least_the_optimum_scipy_finds(kind):
    # Reference optimiser: scipy.optimize.curve_fit (Levenberg–Marquardt) started at the true
    # parameters. The grid search must reach an SSE no worse than that local optimum.
    temps, energy = _daily_data(kind, n=300, noise=40.0, seed=5)
    base, heat_point, heat_slope, *_ = TRUTH[kind]
    if kind == "3PH":

        def curve(x, b, c, h):
            return _shape(x, b, c, h, c, 0.0)

        start = (base, heat_point, heat_slope)
    else:

        def curve(x, b, ch, h, cc, k):
            return _shape(x, b, ch, h, cc, k)

        start = TRUTH[kind]
    found, _ = curve_fit(curve, temps, energy, p0=start)
    scipy_sse = np.sum((energy - curve(temps, *found)) ** 2)
    model = ChangePointFit(kind).fit(temps, energy)
    our_sse = np.sum((energy - model.predict(temps)) ** 2)
    assert our_sse <= scipy_sse * (1 + 1e-9)


@pytest.mark.parametrize("kind", ["3PH", "4P", "5P"])
def test_candidates_with_an_empty_hinge_do_not_stop_the_search(kind):
    # A sensor that reads no lower than -12 °C: a tenth of the days sit exactly there, so the
    # search's lowest candidate has no temperature below it, its hinge is zero on every day
    # and its normal equations are singular. The search must pass over it and still reach an
    # SSE no worse than scipy.optimize.curve_fit started at the true parameters.
    temps, energy = _daily_data(kind, n=300, noise=40.0, seed=9)
    temps[:30] = -12.0
    energy[:30] = _shape(temps[:30], *TRUTH[kind])
    assert np.sort(temps)[3] == np.quantile(temps, 0.05) == -12.0

    base, heat_point, heat_slope, _, cool_slope = TRUTH[kind]
    curve, start = {
        "3PH": (lambda x, b, c, h: _shape(x, b, c, h, c, 0.0), (base, heat_point, heat_slope)),
        "4P": (
            lambda x, b, c, h, k: _shape(x, b, c, h, c, k),
            (base, heat_point, heat_slope, cool_slope),
        ),
        "5P": (_shape, TRUTH[kind]),
    }[kind]
    found, _ = curve_fit(curve, temps, energy, p0=start)
    scipy_sse = np.sum((energy - curve(temps, *found)) ** 2)
    model = ChangePointFit(kind).fit(temps, energy)
    assert np.sum((energy - model.predict(temps)) ** 2) <= scipy_sse * (1 + 1e-9)


def test_two_parameter_line_matches_numpy_polyfit():
    temps, energy = _daily_data("3PC", n=200)
    slope, intercept = np.polyfit(temps, energy, 1)  # numpy's least-squares line
    model = ChangePointFit("2P").fit(temps, energy)
    assert model.intercept_ == pytest.approx(intercept, rel=1e-10)
    assert model.cooling_slope_ == pytest.approx(slope, rel=1e-10)
    assert model.heating_slope_ == 0.0
    assert model.change_points_ == ()


def test_weighted_two_parameter_line_matches_statsmodels_wls():
    rng = np.random.default_rng(2)
    temps = rng.uniform(-5.0, 25.0, 36)  # three years of billing periods
    days = rng.integers(27, 35, 36).astype(float)
    energy = 1500.0 - 22.0 * temps + rng.normal(0.0, 30.0, 36)
    reference = sm.WLS(energy, sm.add_constant(temps), weights=days).fit()
    model = ChangePointFit("2P").fit(temps, energy, weights=days)
    assert model.intercept_ == pytest.approx(reference.params[0], rel=1e-10)
    assert model.heating_slope_ == pytest.approx(-reference.params[1], rel=1e-10)
    assert model.r2_ == pytest.approx(reference.rsquared, rel=1e-10)


def test_slopes_at_the_change_point_match_statsmodels_ols():
    # With the change point fixed at the fitted value, the slopes are plain least squares on
    # the hinge regressors; statsmodels OLS on that design must agree.
    temps, energy = _daily_data("5P", n=400, noise=30.0)
    model = ChangePointFit("5P").fit(temps, energy)
    heat_point, cool_point = model.change_points_
    design = np.column_stack(
        [
            np.ones_like(temps),
            np.maximum(heat_point - temps, 0.0),
            np.maximum(temps - cool_point, 0.0),
        ]
    )
    reference = sm.OLS(energy, design).fit()
    np.testing.assert_allclose(
        [model.intercept_, model.heating_slope_, model.cooling_slope_], reference.params, rtol=1e-9
    )
    assert model.r2_ == pytest.approx(reference.rsquared, rel=1e-9)


def test_cv_rmse_follows_guideline_14_on_a_hand_worked_line():
    # ASHRAE Guideline 14-2014 (from memory): CV(RMSE) = sqrt(Σ(y − ŷ)² / (n − p)) / ȳ × 100.
    # Worked by hand: the least-squares line through these points is ŷ = 1.4 + 0.8·x,
    # residuals −0.4, 0.8, −1.0, 1.2, −0.6, SSE = 3.6, n − p = 3, ȳ = 3,
    # so CV(RMSE) = 100·sqrt(1.2)/3 = 36.515 % and R² = 1 − 3.6/10 = 0.64.
    temps = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
    energy = np.array([1.0, 3.0, 2.0, 5.0, 4.0])
    model = ChangePointFit("2P").fit(temps, energy)
    assert model.intercept_ == pytest.approx(1.4)
    assert model.cooling_slope_ == pytest.approx(0.8)
    assert model.cv_rmse_ == pytest.approx(100.0 * np.sqrt(1.2) / 3.0)
    assert model.r2_ == pytest.approx(0.64)


@pytest.mark.parametrize("kind", ["3PH", "4P", "5P"])
def test_cv_rmse_counts_change_points_as_parameters(kind):
    temps, energy = _daily_data(kind, n=120, noise=25.0)
    model = ChangePointFit(kind).fit(temps, energy)
    n, p = len(temps), PARAMETER_COUNT[kind]
    hand = 100.0 * np.sqrt(np.sum((energy - model.predict(temps)) ** 2) / (n - p)) / energy.mean()
    assert model.cv_rmse_ == pytest.approx(hand, rel=1e-12)


def test_integer_weights_act_like_repeated_periods():
    temps, energy = _daily_data("3PH", n=60, noise=20.0, seed=8)
    days = np.arange(60) % 4 + 1
    weighted = ChangePointFit("3PH").fit(temps, energy, weights=days)
    repeated = ChangePointFit("3PH").fit(np.repeat(temps, days), np.repeat(energy, days))
    # The search grids differ slightly (quantiles of repeated data move), so agreement is to
    # the grid's final resolution rather than to rounding error.
    assert weighted.change_points_[0] == pytest.approx(repeated.change_points_[0], abs=1e-4)
    assert weighted.heating_slope_ == pytest.approx(repeated.heating_slope_, rel=1e-4)
    assert weighted.intercept_ == pytest.approx(repeated.intercept_, rel=1e-4)


@pytest.mark.parametrize("kind", ["2P", "3PH", "3PC", "5P"])
def test_select_best_picks_the_generating_shape(kind):
    if kind == "2P":
        rng = np.random.default_rng(4)
        temps = rng.uniform(-12.0, 32.0, 500)
        energy = 2000.0 - 25.0 * temps + rng.normal(0.0, 15.0, 500)
    else:
        temps, energy = _daily_data(kind, n=500)
    assert select_best(temps, energy).kind == kind


def test_best_of_passes_over_implausible_fits():
    # Energy that falls as it gets colder below 10 °C: a 3PH fits it best, but only with a
    # negative heating slope, which no heating system produces.
    rng = np.random.default_rng(6)
    temps = rng.uniform(-12.0, 32.0, 300)
    energy = 800.0 - 20.0 * np.maximum(10.0 - temps, 0.0) + rng.normal(0.0, 5.0, 300)
    models = fit_kinds(temps, energy, kinds=("2P", "3PH"))
    two_point, heating = models
    assert heating.heating_slope_ < 0 and not heating.plausible
    assert heating.bic_ < two_point.bic_
    assert best_of(models) is two_point


def test_fit_kinds_skips_shapes_the_data_cannot_carry():
    # Four periods leave no room for three temperatures either side of a change point.
    models = fit_kinds([2.0, 8.0, 14.0, 20.0], [900.0, 700.0, 520.0, 480.0])
    assert [model.kind for model in models] == ["2P"]


@given(
    point=st.floats(min_value=2.0, max_value=22.0),
    heat=st.floats(min_value=5.0, max_value=80.0),
    cool=st.floats(min_value=5.0, max_value=80.0),
)
@settings(max_examples=25, deadline=None)
def test_noise_free_four_parameter_data_is_fitted_exactly(point, heat, cool):
    temps = np.linspace(-10.0, 30.0, 81)
    energy = _shape(temps, 500.0, point, heat, point, cool)
    model = ChangePointFit("4P").fit(temps, energy)
    assert model.change_points_[0] == pytest.approx(point, abs=0.01)
    np.testing.assert_allclose(model.predict(temps), energy, rtol=1e-4)


@pytest.mark.parametrize("kind", KINDS)
def test_round_trips_through_plain_json(kind):
    temps, energy = _daily_data("5P", n=200)
    model = ChangePointFit(kind, grid_size=30).fit(temps, energy)
    stored = json.loads(json.dumps(model.to_dict(), allow_nan=False))
    again = ChangePointFit.from_dict(stored)
    np.testing.assert_array_equal(again.predict(temps), model.predict(temps))
    assert again.cv_rmse_ == model.cv_rmse_
    assert again.grid_size == 30
    assert again.to_dict() == model.to_dict()


def test_unfitted_model_round_trips_and_refuses_to_predict():
    model = ChangePointFit.from_dict(ChangePointFit("4P").to_dict())
    assert model.kind == "4P" and not model.is_fitted
    with pytest.raises(NotFittedError):
        model.predict([10.0])


def test_foreign_stored_model_is_refused():
    with pytest.raises(ProjectError, match="change-point"):
        ChangePointFit.from_dict({"format": "something-else", "version": 1})


@pytest.mark.parametrize(
    ("temps", "energy", "weights", "message"),
    [
        ([1.0, 2.0, np.nan, 4.0, 5.0], [1.0] * 5, None, "not finite"),
        ([1.0, 2.0, 3.0], [1.0, 2.0], None, "differ in length"),
        ([1.0, 2.0, 3.0, 4.0], [1.0] * 4, [1.0, 0.0, 1.0, 1.0], "positive"),
        ([1.0, 2.0], [1.0, 2.0], None, "too few"),
        ([5.0] * 12, list(range(12)), None, "too alike"),
    ],
)
def test_bad_input_is_named(temps, energy, weights, message):
    kind = "3PH" if message == "too alike" else "2P"
    with pytest.raises(InputError, match=message):
        ChangePointFit(kind).fit(temps, energy, weights)


def test_unknown_kind_is_named():
    with pytest.raises(InputError, match="unknown change-point model"):
        ChangePointFit("6P").fit([1.0, 2.0, 3.0], [1.0, 2.0, 3.0])


@pytest.mark.parametrize("kind", ["3PH", "3PC", "4P", "5P"])
@pytest.mark.parametrize("weighted", [False, True], ids=["plain", "weighted"])
def test_candidate_errors_from_running_sums_equal_least_squares_at_each_candidate(kind, weighted):
    # Outside check: numpy.linalg.lstsq on the explicit design [1, hinges] at every candidate
    # (weighted by √w). The running sums must give the same weighted SSE to 1e-8 relative,
    # including candidates with no temperature beyond them (an all-zero hinge) and 5P pairs.
    temps, energy = _daily_data("5P", n=250, noise=25.0, seed=13)
    temps[:20] = -12.0  # a floor of equal readings: the lowest candidates have empty hinges
    w = np.random.default_rng(1).uniform(25.0, 35.0, len(temps)) if weighted else None
    x, y, weights = _checked_inputs(temps, energy, w)
    points = _SortedPoints(x, y, weights)
    grid = np.concatenate([[-12.0, -13.0], np.linspace(-5.0, 28.0, 12), [40.0]])
    heat = grid if kind != "3PC" else None
    cool = grid if kind != "3PH" else None
    sse = _candidate_sse(points, kind, heat, cool)

    def lstsq_sse(heat_point, cool_point):
        columns = [np.ones_like(x)]
        if heat_point is not None:
            columns.append(np.maximum(heat_point - x, 0.0))
        if cool_point is not None:
            columns.append(np.maximum(x - cool_point, 0.0))
        root = np.sqrt(weights)[:, None]
        design, target = np.column_stack(columns) * root, y * root[:, 0]
        residual = target - design @ np.linalg.lstsq(design, target, rcond=None)[0]
        return float(residual @ residual)

    if kind == "5P":
        expected = np.array([[lstsq_sse(h, c) if h <= c else np.inf for c in grid] for h in grid])
    else:
        expected = np.array([lstsq_sse(None if heat is None else c, None if cool is None else c)
                             for c in grid])  # fmt: skip
    finite = np.isfinite(expected)
    assert np.array_equal(finite, np.isfinite(sse))
    np.testing.assert_allclose(sse[finite], expected[finite], rtol=1e-8)
