"""Time-of-week-and-temperature regression (Mathieu et al. 2011, from memory) on known data.

Data: the administration building of the invented Larkspur Vale campus (test_models_campus
with no campus-period shifts: TOWT has no term or break terms, so its model class holds the
truth). TOWT has no balance-point parameter; its bent temperature line is read with a 5P
change-point fit (engine.changepoint, ASHRAE RP-1050 shapes) at the fit window's temperatures.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_models_campus import (
    COOLING_BASE,
    HEATING_BASE,
    HEATING_SLOPE,
    ZONE,
    occupancy_plateau,
    one_thread,  # noqa: F401  (autouse: one BLAS/OpenMP thread)
    synthetic_campus,
)

from engine.changepoint import ChangePointFit
from engine.errors import InputError
from engine.models import TimeOfWeekTemperatureModel
from engine.models.time_of_week import temperature_segments

FIT_END = pd.Timestamp("2024-01-01", tz=ZONE)


@pytest.fixture(scope="module")
def building():
    return synthetic_campus("2022-01-01", "2024-03-01", period_shift={})


@pytest.fixture(scope="module")
def model(building):
    """Fitted on two years of hourly readings; occupancy from the calendar labels."""
    return TimeOfWeekTemperatureModel().fit(building.inputs.window(end=FIT_END))


def test_recovers_the_heating_slope_and_balance_point(building, model):
    temps = building.inputs.window(end=FIT_END).temperature.to_numpy()[::3]
    read = ChangePointFit("5P").fit(temps, model.temperature_response(temps))
    # Bar from the issue: slope within 10 %, balance point within 1 °C. Hourly readings, so
    # the slope per interval is per °C-hour.
    assert read.heating_slope_ == pytest.approx(HEATING_SLOPE, rel=0.10)
    assert read.change_points_[0] == pytest.approx(HEATING_BASE, abs=1.0)
    assert read.change_points_[1] == pytest.approx(COOLING_BASE, abs=1.0)


def test_held_out_error_is_close_to_the_noise(building, model):
    future = building.inputs.window(start=FIT_END)
    actual = future.energy.to_numpy()
    predicted = model.predict(future.without_energy()).to_numpy()
    noise = building.noise[np.searchsorted(building.inputs.index, FIT_END) :]
    ratio = np.sqrt(np.mean((predicted - actual) ** 2)) / np.sqrt(np.mean(noise**2))
    # Bar from the issue: CV(RMSE) within 1.15 times the CV of the known noise.
    assert ratio <= 1.15


def test_the_data_rule_finds_the_occupied_hours(building):
    inputs = replace(building.inputs.window(end=FIT_END), labels=None)
    model = TimeOfWeekTemperatureModel().fit(inputs)
    assert model.occupancy_source_ == "data"
    hour = np.arange(168) % 24
    weekday = np.arange(168) < 5 * 24
    plateau = occupancy_plateau(hour.astype(float))
    # Truth: weekday hours well inside the 07:00–19:00 plateau are occupied, nights and
    # weekends (a small bump only) are not; the edge hours may go either way.
    assert model.occupied_slots_[weekday & (plateau > 0.9)].all()
    assert not model.occupied_slots_[~weekday | (plateau < 0.1)].any()


def test_quarter_hours_have_672_time_of_week_slots():
    four_weeks = synthetic_campus("2022-02-01", "2022-03-01", step="15min").inputs
    model = TimeOfWeekTemperatureModel().fit(four_weeks)
    assert model.slot_coefficients_.shape == (2, 672)
    prediction = model.predict(four_weeks.without_energy())
    assert np.isfinite(prediction.to_numpy()).all()


def test_a_slot_seen_only_in_the_other_mode_borrows_its_coefficients(building):
    # Labels occupancy: a Monday-morning slot seen only on working Mondays has no unoccupied
    # coefficient; a holiday Monday morning in the forecast uses the occupied one.
    four_weeks = building.inputs.window(
        start=pd.Timestamp("2022-02-07", tz=ZONE), end=pd.Timestamp("2022-03-07", tz=ZONE)
    )
    model = TimeOfWeekTemperatureModel().fit(four_weeks)
    missing = np.isnan(model.slot_coefficients_)
    assert missing[0].any() and missing[1].any()
    assert not (missing[0] & missing[1]).any()
    labor_day = building.inputs.window(
        start=pd.Timestamp("2022-09-05", tz=ZONE), end=pd.Timestamp("2022-09-06", tz=ZONE)
    )
    assert np.isfinite(model.predict(labor_day.without_energy()).to_numpy()).all()


def test_a_time_of_week_never_seen_is_refused(building):
    two_weeks = building.inputs.window(end=pd.Timestamp("2022-01-15", tz=ZONE))
    wednesday = two_weeks.index.tz_convert(ZONE).day_of_week == 2
    no_wednesdays = replace(two_weeks, energy=two_weeks.energy.mask(wednesday))
    with pytest.raises(InputError, match="24 of the 168 times of the week have no readings"):
        TimeOfWeekTemperatureModel().fit(no_wednesdays)


@settings(deadline=None, max_examples=60)
@given(
    st.lists(st.floats(-40, 45), min_size=1, max_size=30),
    st.lists(st.floats(-20, 30), min_size=1, max_size=8, unique=True),
)
def test_temperature_segments_add_up_to_the_temperature(temps, knots):
    segments = temperature_segments(np.array(temps), np.sort(knots))
    np.testing.assert_allclose(segments.sum(axis=1), temps, atol=1e-9)


def test_the_statements_give_the_slopes_beyond_the_outer_knots(model):
    # Read another way: the change of temperature_response over one °C beyond each outer knot.
    table = model.coefficients_table().set_index("term")
    low, high = model.knots_[0], model.knots_[-1]
    for mode, occupied in (("occupied", True), ("unoccupied", False)):
        colder = model.temperature_response([low - 2.0], occupied) - model.temperature_response(
            [low - 1.0], occupied
        )
        warmer = model.temperature_response([high + 2.0], occupied) - model.temperature_response(
            [high + 1.0], occupied
        )
        assert table.loc[f"{mode}: colder", "value"] == pytest.approx(colder[0], rel=1e-9)
        assert table.loc[f"{mode}: warmer", "value"] == pytest.approx(warmer[0], rel=1e-9)
    # The campus heats below its balance point: colder hours use more.
    assert table.loc["occupied: colder", "value"] > 0


@pytest.mark.parametrize("labelled", [True, False], ids=["labels", "data rule"])
def test_the_fit_is_ordinary_least_squares_on_the_explicit_design(building, labelled):
    # Outside check: numpy.linalg.lstsq on the design the model stands for, one indicator
    # column per (occupancy mode, time-of-week slot) and the temperature segments times each
    # mode's indicator. The fit builds its normal equations from binned sums instead; both
    # must give the same slopes and slot levels to 1e-8, and the design's rank as parameters.
    inputs = building.inputs.window(end=pd.Timestamp("2022-03-01", tz=ZONE))
    if not labelled:
        inputs = replace(inputs, labels=None)
    model = TimeOfWeekTemperatureModel().fit(inputs)
    local = inputs.index.tz_convert(ZONE).tz_localize(None)
    slot = np.asarray(local.day_of_week * 24 + local.hour)
    if labelled:
        mode = inputs.labels["occupied"].to_numpy(dtype=int)
    else:
        mode = model.occupied_slots_[slot].astype(int)
    groups = mode * 168 + slot
    present = np.unique(groups)
    indicators = (groups[:, None] == present[None, :]).astype(float)
    segments = temperature_segments(inputs.temperature.to_numpy(), model.knots_)
    slopes = np.hstack([segments * (mode == m)[:, None] for m in (0, 1)])
    design = np.hstack([indicators, slopes])
    solution = np.linalg.lstsq(design, inputs.energy.to_numpy(), rcond=None)[0]
    levels, expected_slopes = solution[: len(present)], solution[len(present) :]
    np.testing.assert_allclose(
        model.temperature_coefficients_.ravel(), expected_slopes, rtol=1e-8, atol=1e-10
    )
    fitted_levels = model.slot_coefficients_.ravel()[present]
    np.testing.assert_allclose(fitted_levels, levels, rtol=1e-8)
    assert np.isnan(np.delete(model.slot_coefficients_.ravel(), present)).all()
    assert model.n_parameters_ == np.linalg.matrix_rank(design)
