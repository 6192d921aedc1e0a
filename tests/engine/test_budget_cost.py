"""Budget cost: every path billed under the tariff on its own peaks, or at a bill-only rate.

Invented scenario: the "Cobble Lane Annex" of an invented campus, metered hourly, with an
invented general-service tariff (fixed charge, flat energy rate, demand charge on the month's
highest hourly kW, a tax). Its test model predicts a constant load, so the bill of a path can
be worked out by hand.
"""

from __future__ import annotations

from dataclasses import replace
from datetime import date
from typing import Any, ClassVar

import numpy as np
import pandas as pd
import pytest
from sklearn.exceptions import NotFittedError

from engine.budget import MeterPlan, WeatherAssumption, simulate_budget, simulate_paths
from engine.budget.periods import local_midnight
from engine.budget.result import RollUp
from engine.budget.summary import COST_CAUTION, PEAK_CAUTION
from engine.errors import InputError
from engine.models._family import ModelFamily
from engine.models.base import ModelInputs
from engine.tariffs import tariff_from_dict

ZONE = "America/Denver"
AS_OF = date(2025, 5, 31)
FIXED, RATE, PER_KW, TAX = 50.0, 0.10, 12.0, 5.0
TARIFF = tariff_from_dict(
    {
        "ratecard_format": 1,
        "name": "Cobble Lane general service",
        "currency": "USD",
        "version": [
            {
                "effective_from": "2024-01-01",
                "fixed_per_month": FIXED,
                "energy_per_kwh": RATE,
                "demand": [{"name": "maximum demand", "per_kw": PER_KW}],
                "tax": [{"name": "utility tax", "percent": TAX}],
            }
        ],
    }
)


class ConstantLoadModel(ModelFamily):
    """Test model: the mean kWh per interval of the fit, predicted for every interval."""

    family: ClassVar[str] = "constant_load_test"
    label: ClassVar[str] = "constant load (test model)"
    explainable: ClassVar[bool] = True

    def fit(self, inputs: ModelInputs) -> ConstantLoadModel:
        self.level_ = float(inputs.energy.mean())
        self.n_parameters_ = 1
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        if not hasattr(self, "level_"):
            raise NotFittedError("fit the model first")
        return pd.Series(self.level_, index=inputs.index)

    def to_dict(self) -> dict[str, Any]:
        return {"level": self.level_}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> ConstantLoadModel:
        model = cls()
        model.level_ = data["level"]
        model.n_parameters_ = 1
        return model


def annex(noise_kwh: float, **price: Any) -> MeterPlan:
    """Two months of hourly readings of 100 kWh plus Gaussian noise, and the fitted plan."""
    hours = pd.date_range(
        local_midnight(date(2025, 4, 1), ZONE),
        local_midnight(date(2025, 6, 1), ZONE),
        freq="h",
        inclusive="left",
    )
    noise = np.random.default_rng(3).normal(0.0, noise_kwh, len(hours))
    energy = pd.Series(100.0 + noise, index=hours)
    history = ModelInputs(index=hours, timezone=ZONE, energy=energy)
    model = ConstantLoadModel().fit(history)
    if noise_kwh == 0:
        model.level_ = 100.0
    return MeterPlan("Cobble Lane Annex", "electricity", model, history, **price)


def test_a_steady_load_costs_what_the_tariff_says_by_hand() -> None:
    run = simulate_budget(
        [annex(0.0, tariff=TARIFF)],
        ["2025-06"],
        AS_OF,
        WeatherAssumption.none(),
        paths=20,
        rng=1,
    )
    # June 2025 in Denver: 30 days of 24 hours = 720 hours of 100 kWh; peak 100 kW.
    energy = 720 * 100.0
    before_tax = FIXED + RATE * energy + PER_KW * 100.0
    by_hand = before_tax * (1 + TAX / 100)  # 8,872.50
    june = run.meters[0].months[0]
    assert june.energy.quantiles["50"] == pytest.approx(energy)
    assert list(june.cost.quantiles.values()) == pytest.approx([by_hand] * 3)
    assert run.currency == "USD" and run.tariff == "Cobble Lane general service"
    assert COST_CAUTION in run.cautions and PEAK_CAUTION in run.cautions


def test_each_path_pays_for_its_own_peak() -> None:
    """With noisy hours every path's peak lies above the mean load, so the demand charge does.

    The mean cost is then well above the bill of the mean path (the month's maximum is convex:
    the mean of maxima exceeds the maximum of means). Hourly noise of 10 kWh puts the highest
    of 720 hours about three standard deviations up; 15 kW above the mean is a safe floor.
    """
    run = simulate_budget(
        [annex(10.0, tariff=TARIFF)],
        ["2025-06"],
        AS_OF,
        WeatherAssumption.none(),
        paths=400,
        rng=2,
    )
    june = run.meters[0].months[0]
    mean_path_bill = (FIXED + RATE * june.energy.mean + PER_KW * 100.0) * (1 + TAX / 100)
    assert june.cost.mean > mean_path_bill + PER_KW * 15.0 * (1 + TAX / 100)
    assert june.cost.quantiles["10"] > mean_path_bill


def test_a_bill_only_meter_is_costed_at_its_rate() -> None:
    plan = annex(10.0, rate=0.2, currency="EUR")
    run = simulate_budget(
        [plan], ["2025-06", "2025-07"], AS_OF, WeatherAssumption.none(), paths=300, rng=3
    )
    for total in (*run.meters[0].months, run.meters[0].total):
        for level, value in total.energy.quantiles.items():
            assert total.cost.quantiles[level] == pytest.approx(0.2 * value, rel=1e-12)
    assert run.currency == "EUR" and run.tariff is None


def test_cost_rolls_up_path_by_path_and_in_one_currency() -> None:
    metered = annex(10.0, tariff=TARIFF)
    billed = replace(annex(10.0, rate=0.2, currency="USD"), name="Cobble Lane Store")
    totals = simulate_paths(
        [metered, billed], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=300, rng=4
    )
    run = simulate_budget(
        [metered, billed], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=300, rng=4
    )
    both = totals.meters[0].cost[:, 0] + totals.meters[1].cost[:, 0]
    assert run.campus.months[0].cost.quantiles["90"] == pytest.approx(np.percentile(both, 90))
    elsewhere = replace(billed, currency="EUR")
    with pytest.raises(InputError, match="different currencies"):
        simulate_budget(
            [metered, elsewhere], ["2025-06"], AS_OF, WeatherAssumption.none(), paths=10
        )
    with pytest.raises(InputError, match="both a tariff and a price"):
        annex(0.0, tariff=TARIFF, rate=0.1, currency="USD")


def test_a_campus_with_an_unpriced_meter_has_a_priced_meters_only_cost() -> None:
    """The campus row has no cost when one meter is unpriced; its priced meters' cost is its
    own part, summed path by path (numpy percentiles of the per-path sums) and naming what it
    leaves out, and it survives the JSON round trip."""
    metered = annex(10.0, tariff=TARIFF)
    billed = replace(annex(10.0, rate=0.2, currency="USD"), name="Cobble Lane Store")
    unpriced = replace(annex(10.0), name="Cobble Lane Boilers", utility="natural_gas")
    plans = [metered, billed, unpriced]
    args = (["2025-06", "2025-07"], AS_OF, WeatherAssumption.none())
    totals = simulate_paths(plans, *args, paths=300, rng=5)
    run = simulate_budget(plans, *args, paths=300, rng=5)
    campus = run.campus
    assert campus.total.cost is None and campus.months[0].cost is None
    part = campus.priced_only
    assert part.meters == ["Cobble Lane Annex", "Cobble Lane Store"]
    assert part.left_out == ["Cobble Lane Boilers"]
    paid = (totals.meters[0].cost + totals.meters[1].cost).sum(axis=1)
    assert part.total.cost.quantiles["90"] == pytest.approx(np.percentile(paid, 90))
    assert part.total.cost.mean == pytest.approx(paid.mean())
    used = (totals.meters[0].months + totals.meters[1].months)[:, 1]
    assert part.months[1].energy.quantiles["50"] == pytest.approx(np.percentile(used, 50))
    utilities = {roll.group: roll for roll in run.utilities}
    assert utilities["electricity"].priced_only is None  # both electricity meters are priced
    assert utilities["natural_gas"].priced_only is None  # its only meter is not
    data = run.to_json()["campus"]
    assert data["priced_meters_only"]["left_out"] == ["Cobble Lane Boilers"]
    assert RollUp.from_json(data) == campus
    assert run.to_json()["utilities"][0]["priced_meters_only"] is None
