"""Model errors that grow with the load: the growth is measured, and drawn days are scaled by it.

Synthetic data with known ground truth: daily forecasts over a year with a strong season, and
errors whose spread is a known power of the forecast (0 for additive errors, 1 for errors in
proportion to the load).
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest

from engine.budget import MeterPlan, WeatherAssumption, simulate_budget
from engine.budget.residuals import level_elasticity, level_factors
from engine.models.base import ModelInputs
from tests.engine.known_load import KnownLoad

ZONE = "Europe/Lisbon"
FIRST_DAY = pd.Timestamp("2022-01-01")


def seasonal_days(power: float, seed: int, days: int = 730) -> tuple[np.ndarray, np.ndarray]:
    """Daily forecasts (a winter peak three times the summer trough) and errors with
    sd = 0.1 · forecast^power · (mean forecast)^(1 − power)."""
    rng = np.random.default_rng(seed)
    day = np.arange(days)
    forecast = 200 + 100 * np.cos(2 * np.pi * day / 365.25)
    sd = 0.1 * forecast**power * forecast.mean() ** (1 - power)
    return forecast, sd * rng.standard_normal(days)


@pytest.mark.parametrize("power", [0.0, 0.5, 1.0])
def test_the_growth_of_error_size_with_the_load_is_recovered(power: float) -> None:
    # Park (1966): log σ = a + b log x, so the log–log slope of the error size estimates b
    # (from memory); two years of days pin it within about ±0.15.
    forecast, errors = seasonal_days(power, seed=int(10 * power) + 1)
    assert level_elasticity(errors, forecast) == pytest.approx(power, abs=0.15)


def test_too_few_days_or_a_flat_load_teach_nothing() -> None:
    forecast, errors = seasonal_days(1.0, seed=3, days=20)
    assert level_elasticity(errors, forecast) == 0.0
    flat = np.full(400, 250.0)
    assert level_elasticity(np.random.default_rng(4).standard_normal(400), flat) == 0.0


def test_factors_follow_the_ratio_of_loads_within_bounds() -> None:
    budget = np.array([[300.0, 100.0, 900.0, 0.0]])
    drawn = np.array([[100.0, 100.0, 100.0, 100.0]])
    factors = level_factors(budget, drawn, 0.5)
    np.testing.assert_allclose(factors, [[np.sqrt(3), 1.0, np.sqrt(3), 1.0]])  # 9× capped at 3×


class SeasonalCurve(KnownLoad):
    """The known seasonal load of :func:`seasonal_days`."""

    def load(self, inputs: ModelInputs) -> np.ndarray:
        local = inputs.index.tz_convert(ZONE).tz_localize(None).normalize()
        day = (local - FIRST_DAY).days.to_numpy()
        return 200 + 100 * np.cos(2 * np.pi * day / 365.25)


def test_a_heavy_month_gets_a_wider_range_when_errors_grow_with_the_load() -> None:
    """Errors in proportion to the load: a January (heavy) budget's range is wider than a
    July (light) one's by about the ratio of their loads; with additive errors, alike."""
    index = pd.date_range(FIRST_DAY, "2023-12-31", freq="D", tz=ZONE).tz_convert("UTC")
    ratios = {}
    for power in (0.0, 1.0):
        forecast, errors = seasonal_days(power, seed=7, days=len(index))
        inputs = ModelInputs(index, ZONE, pd.Series(forecast + errors, index=index))
        plan = MeterPlan("Hall", "electricity", SeasonalCurve(), inputs,
                         residuals=pd.Series(errors, index=index))  # fmt: skip
        widths = {}
        for month in ("2024-01", "2024-07"):
            run = simulate_budget(
                [plan], [month], date(2023, 12, 31), WeatherAssumption.none(), paths=2000,
                error_days=730, rng=5,
            )  # fmt: skip
            quantiles = run.meters[0].months[0].energy.quantiles
            widths[month] = quantiles["90"] - quantiles["10"]
        ratios[power] = widths["2024-01"] / widths["2024-07"]
    assert ratios[0.0] == pytest.approx(1.0, abs=0.15)
    # January's load is about 300 a day, July's about 100: about three times wider
    assert ratios[1.0] == pytest.approx(3.0, rel=0.25)
