"""Daily and billing-period change-point models against known RP-1050 shapes.

Invented scenario: the Larkspur Vale College library (US Central time), whose weekday use
follows a 5P shape and weekend/holiday use a 3PH shape in daily mean temperature; and the
college's gas-heated boathouse, known only from monthly bills. Expected values are the
generating parameters, engine.changepoint fitted on the same daily points aggregated here with
pandas, and statsmodels' WLS as the reference for the weighted billing fit.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from test_models_campus import one_thread  # noqa: F401  (autouse: one BLAS/OpenMP thread)

from engine.changepoint import ChangePointFit, select_best
from engine.errors import InputError
from engine.models import (
    BillingInputs,
    BillingPeriodChangePointModel,
    DailyChangePointModel,
    ModelInputs,
)
from engine.models.daily_change_point import ALL_DAYS

ZONE = "America/Chicago"
# Library truth, kWh/day: (base, heating change point °C, heating slope, cooling point, slope).
WEEKDAY = (2400.0, 12.0, 60.0, 20.0, 90.0)
WEEKEND = (1500.0, 10.0, 40.0, 10.0, 0.0)
NOISE = 20.0  # kWh/day
# The library's typical day: low at night, open 08:00–22:00.
HOURLY_SHAPE = np.where((np.arange(24) >= 8) & (np.arange(24) < 22), 2.0, 1.0)


def _shape(x, base, heat_point, heat_slope, cool_point, cool_slope):
    return (
        base
        + heat_slope * np.maximum(heat_point - x, 0.0)
        + cool_slope * np.maximum(x - cool_point, 0.0)
    )


def _library(days: int = 730, seed: int = 3) -> tuple[ModelInputs, pd.DataFrame]:
    """Hourly inputs and the daily truth (local date → tmean, weekend, energy)."""
    rng = np.random.default_rng(seed)
    index = pd.date_range(pd.Timestamp("2022-01-01", tz=ZONE), periods=days, freq="D").tz_convert(
        "UTC"
    )
    hours = pd.date_range(index[0], index[-1] + pd.Timedelta(days=1), freq="h", inclusive="left")
    local = hours.tz_convert(ZONE).tz_localize(None)
    day_number = np.asarray((local.normalize() - local.normalize()[0]).days)
    daily_mean = (
        10 - 14 * np.cos(2 * np.pi * (np.arange(days + 1) - 20) / 365) + rng.normal(0, 3, days + 1)
    )
    temps = daily_mean[day_number] + 4 * np.cos(2 * np.pi * (local.hour - 15) / 24)
    daily = pd.DataFrame({"tmean": pd.Series(temps).groupby(local.normalize()).mean()})
    daily["weekend"] = daily.index.day_of_week >= 5
    daily["energy"] = np.where(
        daily["weekend"], _shape(daily["tmean"], *WEEKEND), _shape(daily["tmean"], *WEEKDAY)
    ) + rng.normal(0, NOISE, len(daily))
    weights = HOURLY_SHAPE[local.hour]
    day_weight = pd.Series(weights).groupby(local.normalize()).transform("sum").to_numpy()
    energy = daily["energy"].reindex(local.normalize()).to_numpy() * weights / day_weight
    inputs = ModelInputs(
        hours,
        ZONE,
        energy=pd.Series(energy, index=hours),
        temperature=pd.Series(temps, index=hours),
    )
    return inputs, daily


@pytest.fixture(scope="module")
def library():
    return _library()


@pytest.fixture(scope="module")
def model(library):
    # No calendar labels: day types come from the weekday, as in the truth.
    return DailyChangePointModel().fit(library[0])


def test_each_day_group_recovers_its_known_shape(model):
    weekday = model.change_point_models_["weekday"]
    weekend = model.change_point_models_["weekend_or_holiday"]
    assert weekday.kind == "5P" and weekend.kind == "3PH"
    # Tolerances: change points within 0.5 °C, slopes within 5 %, base within 1 % (noise sd
    # 20 kWh/day, under 1 % of use, over two years).
    for fitted, truth in ((weekday, WEEKDAY), (weekend, WEEKEND)):
        base, heat_point, heat_slope, cool_point, cool_slope = truth
        assert fitted.intercept_ == pytest.approx(base, rel=0.01)
        assert fitted.change_points_[0] == pytest.approx(heat_point, abs=0.5)
        assert fitted.change_points_[-1] == pytest.approx(cool_point, abs=0.5)
        assert fitted.heating_slope_ == pytest.approx(heat_slope, rel=0.05)
        assert fitted.cooling_slope_ == pytest.approx(cool_slope, rel=0.05, abs=1.0)


def test_the_fits_equal_engine_changepoint_on_the_same_days(library, model):
    _, daily = library
    for name, chosen in (("weekday", ~daily["weekend"]), ("weekend_or_holiday", daily["weekend"])):
        reference = select_best(daily.loc[chosen, "tmean"], daily.loc[chosen, "energy"])
        fitted = model.change_point_models_[name]
        assert fitted.kind == reference.kind
        np.testing.assert_allclose(fitted.change_points_, reference.change_points_, rtol=1e-9)
        assert fitted.heating_slope_ == pytest.approx(reference.heating_slope_, rel=1e-9)


def test_days_are_spread_by_the_learned_hourly_shape(library, model):
    inputs, _ = library
    predicted = model.predict(inputs.without_energy())
    local = inputs.index.tz_convert(ZONE).tz_localize(None)
    day_totals = predicted.groupby(local.normalize()).sum()
    temps = inputs.temperature.groupby(local.normalize()).mean()
    weekend = day_totals.index.day_of_week >= 5
    expected = np.where(
        weekend,
        model.change_point_models_["weekend_or_holiday"].predict(temps),
        model.change_point_models_["weekday"].predict(temps),
    )
    # Every local day, the 23- and 25-hour daylight-saving days included, adds up.
    np.testing.assert_allclose(day_totals.to_numpy(), expected, rtol=1e-9)
    ordinary_day = predicted[local.normalize() == pd.Timestamp("2022-06-15")].to_numpy()
    np.testing.assert_allclose(
        ordinary_day / ordinary_day.sum(), HOURLY_SHAPE / HOURLY_SHAPE.sum(), rtol=1e-9
    )


def test_a_fixed_shape_and_a_pooled_fit(library):
    inputs, _ = library
    three_weeks = inputs.window(end=inputs.index[0] + pd.Timedelta(weeks=3))
    model = DailyChangePointModel("2P").fit(three_weeks)
    # Six weekend days are too few for their own fit (min_group_days 21): one fit for all.
    assert list(model.change_point_models_) == [ALL_DAYS]
    assert model.change_point_models_[ALL_DAYS].kind == "2P"


def test_too_few_whole_days_are_refused(library):
    inputs, _ = library
    with pytest.raises(InputError, match="whole days"):
        DailyChangePointModel().fit(inputs.window(end=inputs.index[0] + pd.Timedelta(days=5)))


# -- bills ---------------------------------------------------------------------------------

BOATHOUSE = (300.0, 15.0, 25.0)  # kWh/day base, heating change point °C, kWh/day per °C


def _boathouse(periods: int = 40, seed: int = 5):
    """Monthly bills whose energy per day follows a 3PH in the period's mean temperature."""
    rng = np.random.default_rng(seed)
    days = pd.date_range("2021-01-01", periods=periods * 31 + 40, freq="D")
    temps = pd.Series(
        10 - 12 * np.cos(2 * np.pi * (days.day_of_year - 20) / 365) + rng.normal(0, 3, len(days)),
        index=days,
    )
    lengths = rng.integers(28, 35, periods)
    starts = days[0] + pd.to_timedelta(np.concatenate(([0], np.cumsum(lengths)[:-1])), unit="D")
    ends = starts + pd.to_timedelta(lengths - 1, unit="D")
    mean_temp = np.array([temps[s:e].mean() for s, e in zip(starts, ends, strict=True)])
    base, point, slope = BOATHOUSE
    per_day = base + slope * np.maximum(point - mean_temp, 0) + rng.normal(0, 8, periods)
    bills = pd.DataFrame(
        {
            "period_start": starts,
            "period_end": ends,
            "quantity_kwh": per_day * lengths,
            "source_row": np.arange(periods) + 2,
        }
    )
    return bills, temps, mean_temp, lengths


def test_bills_recover_the_known_shape_and_match_weighted_least_squares():
    bills, temps, mean_temp, lengths = _boathouse()
    model = BillingPeriodChangePointModel("3PH").fit(BillingInputs(bills, temps))
    fitted = model.change_point_model_
    _, point, slope = BOATHOUSE
    assert fitted.change_points_[0] == pytest.approx(point, abs=1.0)
    assert fitted.heating_slope_ == pytest.approx(slope, rel=0.10)
    # statsmodels WLS at the found change point, weights = days (the reference library).
    design = sm.add_constant(np.maximum(fitted.change_points_[0] - mean_temp, 0.0))
    reference = sm.WLS(bills["quantity_kwh"] / lengths, design, weights=lengths).fit()
    np.testing.assert_allclose(
        [fitted.intercept_, fitted.heating_slope_], reference.params, rtol=1e-8
    )
    predicted = model.predict(BillingInputs(bills.drop(columns="quantity_kwh"), temps))
    np.testing.assert_allclose(predicted, reference.fittedvalues * lengths, rtol=1e-8)


def test_bills_without_weather_give_the_mean_use_per_day():
    bills, _, _, lengths = _boathouse(periods=12)
    model = BillingPeriodChangePointModel().fit(BillingInputs(bills))
    assert model.mean_daily_energy_ == pytest.approx(bills["quantity_kwh"].sum() / lengths.sum())
    np.testing.assert_allclose(
        model.predict(BillingInputs(bills)), model.mean_daily_energy_ * lengths
    )


def test_overlapping_bills_are_named():
    bills, temps, _, _ = _boathouse(periods=6)
    bills.loc[3, "period_start"] = bills.loc[2, "period_end"]
    with pytest.raises(InputError, match=r"overlaps the bill before it") as raised:
        BillingPeriodChangePointModel().fit(BillingInputs(bills, temps))
    assert "(row 5)" in str(raised.value)


def test_bills_without_enough_weather_are_named():
    bills, temps, _, _ = _boathouse(periods=6)
    gappy = temps.drop(temps.index[40:50])
    with pytest.raises(InputError, match=r"has daily temperatures for only") as raised:
        BillingPeriodChangePointModel().fit(BillingInputs(bills, gappy))
    assert "(row 3)" in str(raised.value)


def test_a_bill_without_a_quantity_is_named():
    bills, temps, _, _ = _boathouse(periods=6)
    bills.loc[4, "quantity_kwh"] = np.nan
    with pytest.raises(InputError, match=r"no usable quantity") as raised:
        BillingPeriodChangePointModel().fit(BillingInputs(bills, temps))
    assert "(row 6)" in str(raised.value)


def test_the_billing_shapes_agree_with_a_direct_change_point_fit():
    bills, temps, mean_temp, lengths = _boathouse()
    model = BillingPeriodChangePointModel().fit(BillingInputs(bills, temps))
    direct = select_best(mean_temp, bills["quantity_kwh"] / lengths, lengths)
    assert model.change_point_model_.kind == direct.kind
    assert isinstance(model.change_point_model_, ChangePointFit)
    assert model.change_point_model_.intercept_ == pytest.approx(direct.intercept_, rel=1e-9)


def test_the_statements_give_each_groups_known_slopes_and_change_points(model):
    # The library's truth (weekdays 5P: 60 kWh/day/°C below 12 °C, 90 above 20 °C; weekends
    # 3PH: 40 below 10 °C), read back from the plain-words table within the fit's tolerances.
    table = model.coefficients_table().set_index("term")
    assert list(table.columns) == ["value", "unit", "meaning"]
    assert table.loc["weekdays: heating", "value"] == pytest.approx(WEEKDAY[2], rel=0.05)
    assert table.loc["weekdays: cooling", "value"] == pytest.approx(WEEKDAY[4], rel=0.05)
    assert table.loc["weekends and holidays: heating", "value"] == pytest.approx(40.0, rel=0.05)
    assert "weekends and holidays: cooling" not in table.index  # the 3PH shape has none
    assert table.loc["weekdays: base load", "value"] == pytest.approx(WEEKDAY[0], rel=0.01)
    heating = table.loc["weekdays: heating", "meaning"]
    point = model.change_point_models_["weekday"].change_points_[0]
    assert f"below {point:.1f} °C" in heating and "kWh per day" in heating


def test_a_straight_line_is_stated_at_0_degrees_with_its_slope(library):
    line = DailyChangePointModel(kind="2P", split_day_groups=False).fit(library[0])
    fitted = line.change_point_models_["all_days"]
    table = line.coefficients_table().set_index("term")
    assert table.loc["all days: use at 0 °C", "value"] == fitted.intercept_
    slope = fitted.cooling_slope_ - fitted.heating_slope_
    assert table.loc["all days: temperature", "value"] == pytest.approx(slope)
    # The library heats more than it cools over the year: the line falls as it warms.
    assert slope < 0
