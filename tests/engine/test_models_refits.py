"""Refits before many cuts share work between windows and must equal fits from scratch.

Issue bar: refits at many origins equal a refit from scratch to 1e-8 relative, here for the
time-of-week-and-temperature regression and the daily change-point regression (the calendar
regression's own test is in test_models_calendar_regression). Data: the invented Larkspur
Vale campus (test_models_campus) with a week of missing readings and scattered missing
temperatures, with and without calendar labels and weather.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np
import pandas as pd
import pytest
from test_models_campus import (
    ZONE,
    one_thread,  # noqa: F401  (autouse: one BLAS/OpenMP thread)
    synthetic_campus,
)

from engine.errors import InputError
from engine.models import DailyChangePointModel, TimeOfWeekTemperatureModel
from engine.models.base import ModelInputs

#: Window ends (local): five days (too short for either family), a 23-day window ending in the
#: middle of a day, two months, five months, a year and a bit, two and a half years.
CUTS = [
    pd.Timestamp(stamp, tz=ZONE).tz_convert("UTC")
    for stamp in (
        "2021-01-06",
        "2021-01-24 13:00",
        "2021-03-01",
        "2021-06-01",
        "2022-02-01",
        "2023-06-01",
    )
]
VARIANTS = {
    "labels and weather": lambda inputs: inputs,
    "no labels": lambda inputs: replace(inputs, labels=None),
    "no weather": lambda inputs: replace(inputs, temperature=None),
}


@pytest.fixture(scope="module")
def campus() -> ModelInputs:
    inputs = synthetic_campus("2021-01-01", "2023-09-01").inputs
    energy = inputs.energy.copy()
    energy.iloc[9000:9170] = np.nan  # a week of readings lost in January 2022
    temperature = inputs.temperature.copy()
    temperature.iloc[::97] = np.nan  # the weather station drops a reading now and then
    temperature.iloc[3000:3040] = np.nan
    return replace(inputs, energy=energy, temperature=temperature)


def assert_same_state(shared: Any, alone: Any, where: str = "fitted") -> None:
    """Stored states equal: text and flags exactly, numbers to 1e-8 of their list's scale."""
    if isinstance(alone, dict):
        assert shared.keys() == alone.keys(), where
        for key in alone:
            assert_same_state(shared[key], alone[key], f"{where}.{key}")
    elif isinstance(alone, list) and alone and isinstance(alone[0], list | dict | str):
        assert len(shared) == len(alone), where
        for i, (one, other) in enumerate(zip(shared, alone, strict=True)):
            assert_same_state(one, other, f"{where}[{i}]")
    elif isinstance(alone, str | bool) or alone is None:
        assert shared == alone, where
    else:
        expected = np.array(alone, dtype=float)
        got = np.array(shared, dtype=float)
        scale = np.nanmax(np.abs(expected), initial=0.0)
        np.testing.assert_allclose(got, expected, rtol=1e-8, atol=1e-8 * scale, err_msg=where)


def check_refits_equal_fits_from_scratch(family, inputs: ModelInputs) -> list:
    """The shared refits of ``family`` before :data:`CUTS` against fits on each window alone:
    the same failures, stored states and next-quarter predictions. Returns the fits."""
    shared = family.fit_before_each(inputs, CUTS)
    assert len(shared) == len(CUTS)
    fits = []
    for cut, fitted in zip(CUTS, shared, strict=True):
        window = inputs.window(end=cut)
        if isinstance(fitted, Exception):
            assert isinstance(fitted, InputError)
            with pytest.raises(InputError):
                type(family)(**family.settings()).fit(window)
            continue
        alone = type(family)(**family.settings()).fit(window)
        assert_same_state(fitted.to_dict(), alone.to_dict())
        ahead = inputs.window(start=cut, end=cut + pd.Timedelta(days=92)).without_energy()
        expected = alone.predict(ahead).to_numpy()
        np.testing.assert_allclose(fitted.predict(ahead).to_numpy(), expected, rtol=1e-8)
        fits.append(fitted)
    assert isinstance(shared[0], InputError)  # five days fit neither family
    return fits


@pytest.mark.parametrize("variant", VARIANTS)
def test_daily_change_point_refits_equal_fits_from_scratch(campus, variant):
    fits = check_refits_equal_fits_from_scratch(DailyChangePointModel(), VARIANTS[variant](campus))
    # The windows differ in kind: one fit for all days in the short ones, one per group later.
    assert len({tuple(fitted.mean_daily_energy_) for fitted in fits}) == 2


@pytest.mark.parametrize("variant", VARIANTS)
@pytest.mark.parametrize("settings", [{}, {"knots": 4, "occupancy": "data"}], ids=["6", "4"])
def test_time_of_week_refits_equal_fits_from_scratch(campus, variant, settings):
    family = TimeOfWeekTemperatureModel(**settings)
    fits = check_refits_equal_fits_from_scratch(family, VARIANTS[variant](campus))
    assert len(fits) == len(CUTS) - 1
