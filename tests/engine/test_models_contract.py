"""The contract every model family keeps (one parametrised run over the registry).

Fit returns the model, predict before fit raises NotFittedError, the stored form is plain JSON
(no NaN, no objects) and a reloaded model predicts exactly the same numbers, models fit and
predict without temperature, forecast a month beyond the history, and fit deterministically.
Data: the invented Larkspur Vale campus (see test_models_campus), two years to fit and the next
January to forecast.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd
import pytest
from sklearn.exceptions import NotFittedError
from test_models_campus import (
    ZONE,
    one_thread,  # noqa: F401  (autouse: one BLAS/OpenMP thread)
    synthetic_campus,
)

from engine.errors import InputError, ProjectError
from engine.models import (
    MODEL_FAMILIES,
    STORED_FAMILIES,
    BillingInputs,
    BillingPeriodChangePointModel,
    EnergyModel,
    ModelInputs,
    RefitNeeded,
    model_from_dict,
)
from engine.models.base import predict_scenarios
from engine.weather import daily_stats

FIT_END = pd.Timestamp("2023-01-01", tz=ZONE)
FORECAST_END = pd.Timestamp("2023-02-01", tz=ZONE)
FAMILIES = sorted(STORED_FAMILIES)
#: Families that need readings within the day.
INTERVAL_ONLY = {"calendar_regression", "time_of_week_temperature", "last_year_adjusted"}


@dataclass(frozen=True)
class Case:
    """What a family is fitted on and asked to forecast, with and without temperature."""

    fit: ModelInputs | BillingInputs
    future: ModelInputs | BillingInputs
    actual: float  # kWh in the forecast window

    def without_temperature(self) -> Case:
        if isinstance(self.fit, BillingInputs):
            return replace(
                self,
                fit=replace(self.fit, daily_temperature=None),
                future=replace(self.future, daily_temperature=None),
            )
        return replace(
            self,
            fit=replace(self.fit, temperature=None),
            future=replace(self.future, temperature=None),
        )


def _bills(inputs: ModelInputs, starts: pd.DatetimeIndex) -> pd.DataFrame:
    """Billing periods from each start to the day before the next, with their energy."""
    local_day = inputs.index.tz_convert(ZONE).tz_localize(None).normalize()
    which = np.searchsorted(starts.to_numpy(), local_day.to_numpy(), side="right") - 1
    energy = inputs.energy.groupby(which).sum()
    ends = starts[1:] - pd.Timedelta(days=1)
    return pd.DataFrame(
        {
            "period_start": starts[:-1],
            "period_end": ends,
            "quantity_kwh": energy.reindex(range(len(ends))).to_numpy(),
        }
    )


@pytest.fixture(scope="module")
def cases() -> dict[str, Case]:
    campus = synthetic_campus("2021-01-01", "2023-02-01").inputs
    fit, future = campus.window(end=FIT_END), campus.window(start=FIT_END, end=FORECAST_END)
    actual = float(future.energy.sum())
    interval = Case(fit, future.without_energy(), actual)
    # Meter-reading days drift through the month, as they do on real bills.
    starts = pd.DatetimeIndex(
        [pd.Timestamp(2021, 1, 5) + pd.Timedelta(days=30 * k + k % 3) for k in range(26)]
    )
    daily_temps = daily_stats(campus.temperature, ZONE)["tmean"]
    all_bills = _bills(campus, starts)
    fit_bills = all_bills[all_bills["period_end"] < pd.Timestamp("2022-12-20")]
    future_bills = all_bills[all_bills["period_start"] >= pd.Timestamp("2022-12-20")]
    billing = Case(
        BillingInputs(fit_bills, daily_temps),
        BillingInputs(future_bills.drop(columns="quantity_kwh"), daily_temps),
        float(future_bills["quantity_kwh"].sum()),
    )
    return {name: billing if name == "billing_change_point" else interval for name in FAMILIES}


@pytest.fixture(scope="module")
def fits(cases) -> dict[str, tuple[object, object]]:
    """Each family's model and what its ``fit`` returned."""
    models = {name: STORED_FAMILIES[name]() for name in FAMILIES}
    return {name: (model, model.fit(cases[name].fit)) for name, model in models.items()}


@pytest.fixture(scope="module")
def fitted(fits) -> dict[str, object]:
    return {name: model for name, (model, _) in fits.items()}


@pytest.mark.parametrize("name", FAMILIES)
def test_fit_returns_the_model_with_its_parameter_count(name, fits):
    model, returned = fits[name]
    assert returned is model
    assert isinstance(model.n_parameters_, int) and model.n_parameters_ >= 0
    assert isinstance(model, EnergyModel)
    assert model.family == name and model.label and isinstance(model.explainable, bool)


@pytest.mark.parametrize("name", FAMILIES)
def test_predict_before_fit_raises_not_fitted(name, cases):
    with pytest.raises(NotFittedError):
        STORED_FAMILIES[name]().predict(cases[name].future)


@pytest.mark.parametrize("name", FAMILIES)
def test_a_stored_model_predicts_identically(name, cases, fitted):
    model = fitted[name]
    text = json.dumps(model.to_dict(), allow_nan=False)  # plain JSON: no NaN, no objects
    if name == "gradient_boosting":
        with pytest.raises(RefitNeeded, match="refit"):
            model_from_dict(json.loads(text))
        return
    reloaded = model_from_dict(json.loads(text))
    assert type(reloaded) is type(model)
    before = model.predict(cases[name].future)
    after = reloaded.predict(cases[name].future)
    assert np.array_equal(before.to_numpy(), after.to_numpy())
    assert reloaded.n_parameters_ == model.n_parameters_


@pytest.mark.parametrize("name", FAMILIES)
def test_unfitted_models_and_settings_round_trip(name):
    family = STORED_FAMILIES[name]
    model = model_from_dict(json.loads(json.dumps(family().to_dict())))
    assert not model.is_fitted
    assert model.settings() == family().settings()
    for settings in family.candidate_settings():
        assert family(**settings).settings() == {**family().settings(), **settings}


@pytest.mark.parametrize("name", FAMILIES)
def test_the_forecast_covers_the_month_after_the_history(name, cases, fitted):
    case = cases[name]
    forecast = fitted[name].predict(case.future)
    expected_index = case.future.bills.index if name == "billing_change_point" else None
    if expected_index is None:
        expected_index = case.future.index
    assert forecast.index.equals(expected_index)
    assert np.isfinite(forecast.to_numpy()).all()
    # A month ahead every family lands within a fifth of the invented campus's real use: the
    # load is regular and the forecast month's weather is known to the weather models.
    assert forecast.sum() == pytest.approx(case.actual, rel=0.2)


@pytest.mark.parametrize("name", FAMILIES)
def test_without_temperature_models_still_fit_and_forecast(name, cases):
    case = cases[name].without_temperature()
    forecast = STORED_FAMILIES[name]().fit(case.fit).predict(case.future)
    assert np.isfinite(forecast.to_numpy()).all()
    assert forecast.sum() == pytest.approx(case.actual, rel=0.3)


@pytest.mark.parametrize("name", FAMILIES)
def test_fitting_is_deterministic(name, cases, fitted):
    again = STORED_FAMILIES[name]().fit(cases[name].fit)
    future = cases[name].future
    assert np.array_equal(again.predict(future).to_numpy(), fitted[name].predict(future).to_numpy())


@pytest.mark.parametrize("name", sorted(set(FAMILIES) - {"billing_change_point"}))
def test_weather_models_need_temperature_to_predict(name, cases, fitted):
    model = fitted[name]
    future = replace(cases[name].future, temperature=None)
    if getattr(model, "uses_temperature_", False):
        with pytest.raises(InputError, match="temperature"):
            model.predict(future)
    else:
        assert np.isfinite(model.predict(future).to_numpy()).all()


def test_the_billing_model_needs_temperature_to_predict(cases, fitted):
    future = replace(cases["billing_change_point"].future, daily_temperature=None)
    with pytest.raises(InputError, match="temperature"):
        fitted["billing_change_point"].predict(future)


@pytest.mark.parametrize("name", sorted(set(FAMILIES) - {"billing_change_point"}))
def test_predicting_at_another_interval_is_refused(name, cases, fitted):
    future = cases[name].future
    quarter_hours = pd.date_range(future.index[0], periods=96, freq="15min")
    other = ModelInputs(quarter_hours, ZONE, temperature=pd.Series(5.0, index=quarter_hours))
    with pytest.raises(InputError, match="interval"):
        fitted[name].predict(other)


@pytest.mark.parametrize("name", sorted(set(FAMILIES) - {"billing_change_point"}))
def test_daily_inputs_work_or_are_refused_with_a_reason(name, cases):
    hourly = cases[name].fit
    local = hourly.index.tz_convert(ZONE).tz_localize(None).normalize()
    energy = hourly.energy.groupby(local).sum()
    temps = hourly.temperature.groupby(local).mean()
    days = energy.index.tz_localize(ZONE).tz_convert("UTC")
    daily = ModelInputs(
        days,
        ZONE,
        energy=pd.Series(energy.to_numpy(), index=days),
        temperature=pd.Series(temps.to_numpy(), index=days),
    )
    model = STORED_FAMILIES[name]()
    if name in INTERVAL_ONLY:
        with pytest.raises(InputError, match="within the day"):
            model.fit(daily)
        return
    fitted_daily = model.fit(daily)
    # In-sample over the last four weeks of the history.
    prediction = fitted_daily.predict(daily.window(start=days[-28]).without_energy())
    assert len(prediction) == 28 and np.isfinite(prediction.to_numpy()).all()
    assert prediction.sum() == pytest.approx(energy.iloc[-28:].sum(), rel=0.25)


def test_the_registry_names_each_family_once_and_rejects_strangers():
    assert len(set(MODEL_FAMILIES.values())) == len(MODEL_FAMILIES)
    with pytest.raises(ProjectError, match="unknown family"):
        model_from_dict({"family": "crystal_ball", "version": 1, "settings": {}})
    stored = BillingPeriodChangePointModel().to_dict()
    with pytest.raises(ProjectError, match="version"):
        model_from_dict({**stored, "version": 99})


def _scenario_temperatures(future: ModelInputs) -> np.ndarray:
    """Four scenarios: the forecast month's weather, 6 °C colder, 6 °C warmer, and noisier with
    a few missing hours."""
    temperature = future.temperature.to_numpy()
    rng = np.random.default_rng(4)
    noisy = temperature + rng.normal(0.0, 3.0, len(temperature))
    noisy[rng.choice(len(noisy), 30, replace=False)] = np.nan
    return np.vstack([temperature, temperature - 6.0, temperature + 6.0, noisy])


def _looped(model: EnergyModel, future: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
    return np.vstack(
        [
            model.predict(replace(future, temperature=pd.Series(row, index=future.index)))
            for row in temperatures
        ]
    )


@pytest.mark.parametrize("name", sorted(set(FAMILIES) - {"billing_change_point"}))
@pytest.mark.parametrize("with_temperature", [True, False])
def test_scenario_predictions_equal_one_predict_per_scenario(name, cases, fitted, with_temperature):
    case = cases[name] if with_temperature else cases[name].without_temperature()
    model = fitted[name] if with_temperature else STORED_FAMILIES[name]().fit(case.fit)
    temperatures = _scenario_temperatures(cases[name].future)
    # The inputs' own temperature is ignored: give a constant that is in no scenario.
    future = replace(case.future, temperature=pd.Series(99.0, index=case.future.index))
    batched = predict_scenarios(model, future, temperatures)
    expected = _looped(model, future, temperatures)
    assert batched.shape == expected.shape == temperatures.shape
    assert np.array_equal(np.isnan(batched), np.isnan(expected))
    np.testing.assert_allclose(batched, expected, rtol=1e-10, atol=0.0)


def test_scenario_predictions_check_the_shape(cases, fitted):
    future = cases["calendar_regression"].future
    with pytest.raises(ValueError, match="scenarios"):
        predict_scenarios(fitted["calendar_regression"], future, np.zeros(len(future.index)))


@pytest.mark.parametrize("name", FAMILIES)
def test_every_family_states_its_fit_in_fahrenheit_for_a_site_that_reads_fahrenheit(name, fitted):
    """The same statements, temperatures and amounts per degree converted (NIST SP 811 (2008),
    B.8: t/°F = 1.8 t/°C + 32; a °F interval is 5/9 of a kelvin), and no °C left in words."""
    celsius = fitted[name].coefficients_table()
    fahrenheit = fitted[name].coefficients_table("°F")
    assert len(fahrenheit) == len(celsius)
    for (_, c), (_, f) in zip(celsius.iterrows(), fahrenheit.iterrows(), strict=True):
        assert f["unit"] == c["unit"].replace("°C", "°F")
        if c["unit"] == "°C":
            assert f["value"] == pytest.approx(1.8 * c["value"] + 32)
        elif "°C" in c["unit"]:
            assert f["value"] == pytest.approx(c["value"] / 1.8)
        elif not np.isnan(c["value"]):
            assert f["value"] == pytest.approx(c["value"])
        assert "°C" not in f["term"] + f["meaning"]


@pytest.mark.parametrize("name", FAMILIES)
def test_every_fitted_family_says_what_it_learned_in_words(name, fitted):
    table = fitted[name].coefficients_table()
    assert list(table.columns) == ["term", "value", "unit", "meaning"]
    assert len(table) >= 1 and table["meaning"].str.len().min() > 20


def test_every_family_a_meter_is_offered_takes_the_contract_inputs(cases, fitted) -> None:
    """The families a meter's models are chosen from fit on :class:`ModelInputs`; a family on
    other inputs (bills) is stored and loaded, but never offered for a meter."""
    assert set(MODEL_FAMILIES) | {"billing_change_point"} == set(STORED_FAMILIES)
    for name in MODEL_FAMILIES:
        assert isinstance(cases[name].fit, ModelInputs), name
        assert fitted[name].predict(cases[name].future).notna().all(), name
    with pytest.raises((InputError, AttributeError, KeyError, TypeError)):
        fitted["billing_change_point"].predict(cases["calendar_regression"].future)
