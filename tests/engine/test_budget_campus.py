"""A synthetic campus with known noise for the budget tests, a small model, and its own checks.

Invented scenario: three meters of "Tamsin Ridge Institute", a campus in an invented dry
continental climate on US Mountain time. Every meter's energy per local day is

    base + weekday[day of week] + heating · HDD + cooling · CDD + noise

with HDD = max(18 − T, 0) and CDD = max(T − 18, 0) on the day's mean outdoor temperature T
(°C). At hourly resolution the calendar part follows a daily shape ``1 + 0.5 cos(2π(h − 14)/24)``
(mean 1), the degree terms use each hour's temperature divided by 24 and the day's noise is
spread evenly over its hours, plus independent hourly noise of ``noise_sd / 10``.

Noise (the known truth the budget's ranges are checked against): per meter a daily AR(1)
with lag-one correlation ``NOISE_PHI`` and standard deviation ``noise_sd``, built as
``√SHARED · common + √(1 − SHARED) · own`` of unit AR(1) series, so any two meters' noises
correlate by ``SHARED``. Weather: an annual cycle (mean 9 °C, ±14 °C, warmest mid-July), a
daily AR(1) anomaly (sd 2 °C, lag-one 0.75) and a daily cycle of ±5 °C warmest at 15:00.
Other budget test modules and the budget benchmark import the helpers from here.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from typing import Any, ClassVar

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy.signal import lfilter
from sklearn.exceptions import NotFittedError

from engine.budget import MeterPlan, WeatherAssumption, simulate_paths
from engine.budget.periods import BudgetWindow, local_midnight
from engine.budget.weather_paths import weather_scenarios
from engine.models._family import ModelFamily
from engine.models.base import EnergyModel, ModelInputs

ZONE = "America/Denver"
BALANCE_C = 18.0
NOISE_PHI = 0.3
SHARED = 0.4
FIRST_DAY = date(2019, 1, 1)
LAST_DAY = date(2024, 12, 31)
#: The weather station's records reach further back than the meters' (as they usually do).
WEATHER_FIRST_DAY = date(2000, 1, 1)
_HOUR = pd.Timedelta(hours=1)


@dataclass(frozen=True)
class CampusMeter:
    """One invented meter's true daily structure (kWh per day, per °C-day)."""

    name: str
    utility: str
    base: float
    weekday: tuple[float, ...]
    heating: float
    cooling: float
    noise_sd: float


METERS: tuple[CampusMeter, ...] = (
    CampusMeter(
        "Quarry Library",
        "electricity",
        2400.0,
        (400, 400, 400, 400, 300, -300, -500),
        20.0,
        90.0,
        120.0,
    ),
    CampusMeter(
        "Fenwick Science Hall",
        "electricity",
        5200.0,
        (900, 900, 900, 900, 700, -600, -900),
        30.0,
        160.0,
        220.0,
    ),
    CampusMeter(
        "Boiler House",
        "natural_gas",
        1500.0,
        (100, 100, 100, 100, 100, -100, -150),
        420.0,
        0.0,
        300.0,
    ),
)


def _ar1(shape: tuple[int, ...], phi: float, rng: np.random.Generator) -> np.ndarray:
    """Unit-variance AR(1) along the last axis, started in its stationary distribution."""
    shocks = rng.standard_normal(shape) * np.sqrt(1 - phi**2)
    shocks[..., 0] = rng.standard_normal(shape[:-1])
    return lfilter([1.0], [1.0, -phi], shocks, axis=-1)


def day_noise(
    days: int,
    rng: np.random.Generator,
    draws: int | None = None,
    meters: tuple[CampusMeter, ...] = METERS,
) -> np.ndarray:
    """Each meter's daily noise in kWh: ``(meters, days)``, or ``(draws, meters, days)``."""
    lead = () if draws is None else (draws,)
    common = _ar1((*lead, 1, days), NOISE_PHI, rng)
    own = _ar1((*lead, len(meters), days), NOISE_PHI, rng)
    sd = np.array([meter.noise_sd for meter in meters])[:, np.newaxis]
    return sd * (np.sqrt(SHARED) * common + np.sqrt(1 - SHARED) * own)


def hourly_weather(first_day: date, last_day: date, rng: np.random.Generator) -> pd.Series:
    """Hourly °C on UTC hour starts covering the local days."""
    days = pd.date_range(first_day, last_day, freq="D")
    anomaly = 2.0 * _ar1((len(days),), 0.75, rng)
    seasonal = 9.0 + 14.0 * np.cos(2 * np.pi * (days.day_of_year.to_numpy() - 196) / 365.25)
    start = local_midnight(first_day, ZONE)
    end = local_midnight(last_day + pd.Timedelta(days=1), ZONE)
    hours = pd.date_range(start, end, freq="h", inclusive="left")
    local = hours.tz_convert(ZONE).tz_localize(None)
    day = (local.normalize() - days[0]).days.to_numpy()
    daily_cycle = 5.0 * np.cos(2 * np.pi * (local.hour.to_numpy() - 15) / 24)
    return pd.Series((seasonal + anomaly)[day] + daily_cycle, index=hours, name="temperature")


def day_means(hourly: pd.Series) -> pd.Series:
    """Mean °C of each local day's hours, on the UTC instants of local midnights."""
    local_day = hourly.index.tz_convert(ZONE).tz_localize(None).normalize()
    means = hourly.groupby(local_day).mean()
    index = means.index.tz_localize(ZONE, nonexistent="shift_forward", ambiguous=True)
    return pd.Series(means.to_numpy(), index=index.tz_convert("UTC"))


def true_energy(
    meter: CampusMeter,
    index: pd.DatetimeIndex,
    temperature: np.ndarray,
    noise_by_day: np.ndarray,
    day: np.ndarray,
    hourly: bool,
    rng: np.random.Generator,
) -> np.ndarray:
    """The meter's energy per interval (the last axis) under the truth described above."""
    local = index.tz_convert(ZONE)
    calendar = meter.base + np.asarray(meter.weekday)[local.day_of_week.to_numpy()]
    degrees = meter.heating * np.maximum(BALANCE_C - temperature, 0) + meter.cooling * np.maximum(
        temperature - BALANCE_C, 0
    )
    if not hourly:
        return calendar + degrees + noise_by_day[..., day]
    shape = 1 + 0.5 * np.cos(2 * np.pi * (local.hour.to_numpy() - 14) / 24)
    own = rng.standard_normal(np.shape(noise_by_day[..., day])) * meter.noise_sd / 10
    return (calendar * shape + degrees + noise_by_day[..., day]) / 24 + own


@dataclass(frozen=True)
class Campus:
    """The campus's histories (model inputs per meter) and its hourly weather."""

    inputs: dict[str, ModelInputs]
    weather: pd.Series


def make_campus(
    seed: int,
    hourly: bool = False,
    first_day: date = FIRST_DAY,
    last_day: date = LAST_DAY,
    meters: tuple[CampusMeter, ...] = METERS,
) -> Campus:
    """The invented campus's history at daily (default) or hourly resolution."""
    rng = np.random.default_rng(seed)
    weather = hourly_weather(min(first_day, WEATHER_FIRST_DAY), last_day, rng)
    metered = weather[weather.index >= local_midnight(first_day, ZONE)]
    if hourly:
        index, temperature = metered.index, metered.to_numpy()
        local = index.tz_convert(ZONE).tz_localize(None).normalize()
        day = (local - pd.Timestamp(first_day)).days.to_numpy()
    else:
        means = day_means(metered)
        index, temperature = means.index, means.to_numpy()
        day = np.arange(len(index))
    noise = day_noise(int(day.max()) + 1, rng, meters=meters)
    inputs = {}
    for number, meter in enumerate(meters):
        energy = true_energy(meter, index, temperature, noise[number], day, hourly, rng)
        inputs[meter.name] = ModelInputs(
            index=index,
            timezone=ZONE,
            energy=pd.Series(energy, index=index),
            temperature=pd.Series(temperature, index=index),
        )
    return Campus(inputs, weather)


def true_campus_totals(
    campus: Campus, month: str, assumption: WeatherAssumption, as_of: date, draws: int, seed: int
) -> np.ndarray:
    """The campus's total for ``month`` drawn ``draws`` times from the true (daily) process
    under the first weather scenario of ``assumption``: fresh noise with the documented AR(1)
    and cross-meter correlation, the known structure, the same temperatures."""
    window = BudgetWindow.of([month], ZONE)
    cut = local_midnight(as_of + pd.Timedelta(days=1), ZONE)
    scenario = weather_scenarios(assumption, window, cut)
    temperature = day_means(pd.Series(scenario.hourly[0], index=window.hours)).to_numpy()
    days = window.day_midnights()
    rng = np.random.default_rng(seed)
    noise = day_noise(len(days), rng, draws=draws)
    day = np.arange(len(days))
    return np.sum(
        [
            true_energy(meter, days, temperature, noise[:, number], day, False, rng).sum(axis=1)
            for number, meter in enumerate(METERS)
        ],
        axis=0,
    )


class WeekSlotDegreeModel(ModelFamily):
    """Test model: a mean per week slot (local weekday, or hour of week) plus degree terms.

    Energy = slot mean + a · max(b − T, 0) + c · max(T − b, 0), fitted by least squares with
    the slot means swept out; follows the :class:`engine.models.base.EnergyModel` contract.
    """

    family: ClassVar[str] = "week_slot_degree_test"
    label: ClassVar[str] = "week-slot means with degree terms (test model)"
    explainable: ClassVar[bool] = True

    def __init__(self, balance_c: float = BALANCE_C) -> None:
        self.balance_c = balance_c

    def settings(self) -> dict[str, float]:
        return {"balance_c": self.balance_c}

    def _design(self, inputs: ModelInputs) -> tuple[np.ndarray, np.ndarray | None, int]:
        local = inputs.index.tz_convert(inputs.timezone)
        # The first step tells (the inputs are regular); ModelInputs.interval is slower.
        index = inputs.index
        daily = len(index) < 2 or index[1] - index[0] >= pd.Timedelta(hours=20)
        slots = 7 if daily else 168
        slot = local.day_of_week.to_numpy() * (1 if daily else 24)
        if not daily:
            slot = slot + local.hour.to_numpy()
        if inputs.temperature is None:
            return slot, None, slots
        temps = inputs.temperature.to_numpy(dtype=float)
        degrees = np.column_stack(
            [np.maximum(self.balance_c - temps, 0), np.maximum(temps - self.balance_c, 0)]
        )
        return slot, degrees, slots

    def fit(self, inputs: ModelInputs) -> WeekSlotDegreeModel:
        slot, degrees, slots = self._design(inputs)
        y = inputs.energy.to_numpy(dtype=float)
        keep = np.isfinite(y) & (np.isfinite(degrees).all(axis=1) if degrees is not None else True)
        slot, y = slot[keep], y[keep]
        count = np.bincount(slot, minlength=slots)

        def means(values: np.ndarray) -> np.ndarray:
            return np.bincount(slot, weights=values, minlength=slots) / count

        if degrees is None:
            self.slopes_ = np.zeros(0)
            residual = y
        else:
            degrees = degrees[keep]
            swept = degrees - np.column_stack([means(c) for c in degrees.T])[slot]
            self.slopes_ = np.linalg.lstsq(swept, y - means(y)[slot], rcond=None)[0]
            residual = y - degrees @ self.slopes_
        self.slot_means_ = means(residual)
        self.n_parameters_ = slots + len(self.slopes_)
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        if not hasattr(self, "slot_means_"):
            raise NotFittedError("fit the model first")
        slot, degrees, _ = self._design(inputs)
        values = self.slot_means_[slot]
        if len(self.slopes_):
            values = values + degrees @ self.slopes_
        return pd.Series(values, index=inputs.index)

    def to_dict(self) -> dict[str, Any]:
        return {
            "balance_c": self.balance_c,
            "slot_means": self.slot_means_.tolist(),
            "slopes": self.slopes_.tolist(),
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> WeekSlotDegreeModel:
        model = cls(data["balance_c"])
        model.slot_means_ = np.asarray(data["slot_means"])
        model.slopes_ = np.asarray(data["slopes"])
        model.n_parameters_ = len(model.slot_means_) + len(model.slopes_)
        return model


def campus_plans(
    campus: Campus, as_of: date, meters: tuple[CampusMeter, ...] = METERS, **extra: Any
) -> list[MeterPlan]:
    """Plans whose models are fitted on the readings up to ``as_of`` (full history attached)."""
    cut = local_midnight(as_of + pd.Timedelta(days=1), ZONE)
    utility = {meter.name: meter.utility for meter in meters}
    return [
        MeterPlan(
            name=name,
            utility=utility[name],
            model=WeekSlotDegreeModel().fit(inputs.window(end=cut)),
            history=inputs,
            **extra,
        )
        for name, inputs in campus.inputs.items()
    ]


# --- checks of the synthetic campus itself ---------------------------------------------------


@pytest.fixture(scope="module")
def campus() -> Campus:
    return make_campus(seed=11)


def test_the_test_model_follows_the_contract(campus: Campus) -> None:
    model = WeekSlotDegreeModel()
    inputs = campus.inputs["Quarry Library"]
    with pytest.raises(NotFittedError):
        model.predict(inputs.without_energy())
    fitted = model.fit(inputs)
    assert fitted is model
    assert isinstance(model, EnergyModel)
    again = WeekSlotDegreeModel.from_dict(model.to_dict())
    pd.testing.assert_series_equal(again.predict(inputs), model.predict(inputs))


def test_the_test_model_matches_statsmodels_and_the_known_slopes(campus: Campus) -> None:
    for meter in METERS:
        inputs = campus.inputs[meter.name]
        model = WeekSlotDegreeModel().fit(inputs)
        temps = inputs.temperature.to_numpy()
        weekday = inputs.index.tz_convert(ZONE).day_of_week.to_numpy()
        design = np.column_stack(
            [
                np.eye(7)[weekday],
                np.maximum(BALANCE_C - temps, 0),
                np.maximum(temps - BALANCE_C, 0),
            ]
        )
        # statsmodels OLS with weekday dummies is the reference least-squares fit.
        reference = sm.OLS(inputs.energy.to_numpy(), design).fit()
        assert model.slopes_ == pytest.approx(reference.params[7:], rel=1e-8)
        assert model.slot_means_ == pytest.approx(reference.params[:7], rel=1e-8)
        # The true slopes lie within 4 standard errors, the OLS errors widened for the AR(1)
        # noise by √((1 + φ)/(1 − φ)), the long-run variance factor of an AR(1).
        allowed = 4 * np.sqrt((1 + NOISE_PHI) / (1 - NOISE_PHI)) * reference.bse[7:]
        assert (np.abs(model.slopes_ - [meter.heating, meter.cooling]) < allowed).all()


def test_the_noise_has_the_documented_spread_and_correlation() -> None:
    noise = day_noise(200_000, np.random.default_rng(5))
    sd = np.array([meter.noise_sd for meter in METERS])
    assert noise.std(axis=1) == pytest.approx(sd, rel=0.02)
    assert np.corrcoef(noise)[0, 1:] == pytest.approx([SHARED, SHARED], abs=0.02)
    lag_one = np.corrcoef(noise[0, 1:], noise[0, :-1])[0, 1]
    assert lag_one == pytest.approx(NOISE_PHI, abs=0.02)


def test_a_budget_of_the_campus_runs_quickly(campus: Campus) -> None:
    plans = campus_plans(campus, date(2024, 6, 30))
    weather = WeatherAssumption.past_years(campus.weather)
    totals = simulate_paths(plans, ["2024-07"], "2024-06-30", weather, paths=500, rng=3)
    window = BudgetWindow.of(["2024-07"], ZONE)
    # The simulation draws its weather first, from the generator it is given.
    scenarios = weather_scenarios(weather, window, totals.cut, rng=np.random.default_rng(3))
    np.testing.assert_array_equal(totals.weather.hourly, scenarios.hourly)
    assert scenarios.count == 50  # the default number of draws
    years = scenarios.drawn_days.astype("datetime64[Y]").astype(int) + 1970
    assert years.min() >= 2000 and years.max() <= 2024  # the station's past years …
    assert len(np.unique(years)) > 15  # … drawn across most of them
    assert totals.meter("Boiler House").months.shape == (500, 1)
