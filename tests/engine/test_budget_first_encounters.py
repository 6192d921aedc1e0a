"""Misses of a refit that met a calendar condition for the first time are not drawn into budgets.

Synthetic data with known ground truth: a campus whose load is 100 kWh a day on term days and
30 on closure days, closed from Dec 24 to Jan 1 each year; the out-of-sample errors are 1 %
noise except on the first closure, which the refit before December had never seen and
forecast as term days (70 kWh too high each day).
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd

from engine.budget import MeterPlan, WeatherAssumption, simulate_budget
from engine.budget.residuals import first_encounters
from engine.calendar import CampusCalendar, CampusPeriod, label_intervals
from engine.models.base import ModelInputs
from tests.engine.known_load import KnownLoad

ZONE = "America/Chicago"
CLOSURES = [
    CampusPeriod(f"Closure {year}", date(year, 12, 24), date(year + 1, 1, 1), "closure")
    for year in (2022, 2023)
]
CALENDAR = CampusCalendar(periods=tuple(CLOSURES))


def kept_errors(errors: pd.Series, history: ModelInputs) -> pd.Series:
    """The errors a budget keeps."""
    return errors[~first_encounters(errors, history)]


def _local_days(index: pd.DatetimeIndex) -> pd.DatetimeIndex:
    return index.tz_convert(ZONE).tz_localize(None).normalize()


def campus_history(seed: int = 1) -> tuple[ModelInputs, pd.Series]:
    """Hourly readings from 2022-07 to 2024-02 and the month-ahead errors from 2022-08 on
    (July has no refit before it)."""
    index = pd.date_range("2022-07-01", "2024-03-01", freq="h", tz=ZONE, inclusive="left")
    index = index.tz_convert("UTC")
    labels = label_intervals(index, ZONE, CALENDAR)
    closed = (labels["period_kind"] == "closure").to_numpy()
    energy = np.where(closed, 30.0, 100.0) / 24
    rng = np.random.default_rng(seed)
    errors = energy * 0.01 * rng.standard_normal(len(index))
    first_closure = closed & (labels["local"] < pd.Timestamp("2023-01-01")).to_numpy()
    errors[first_closure] -= 70.0 / 24
    inputs = ModelInputs(index, ZONE, pd.Series(energy + errors, index=index), labels=labels)
    errors = pd.Series(errors, index=index)
    return inputs, errors[errors.index >= pd.Timestamp("2022-08-01", tz=ZONE)]


def test_only_the_days_of_a_condition_never_seen_before_their_month_are_left_out():
    history, errors = campus_history()
    kept = kept_errors(errors, history)
    left_out = sorted(set(_local_days(errors.index)) - set(_local_days(kept.index)))
    # Dec 24–31 2022: no closure day before December; Jan 1 2023's refit had seen eight
    assert left_out == list(pd.date_range("2022-12-24", "2022-12-31"))
    # the 2023 closure was seen the year before
    assert set(pd.date_range("2023-12-24", "2024-01-01")) <= set(_local_days(kept.index))


def test_without_calendar_labels_only_weekdays_and_weekends_are_conditions():
    history, errors = campus_history()
    unlabelled = ModelInputs(history.index, ZONE, history.energy)
    assert kept_errors(errors, unlabelled).equals(errors)


class CampusCurve(KnownLoad):
    """The known load: 100 kWh a day on term days and 30 in the closure."""

    def load(self, inputs: ModelInputs) -> np.ndarray:
        labels = label_intervals(inputs.index, ZONE, CALENDAR)
        return np.where(labels["period_kind"] == "closure", 30.0, 100.0) / 24


def test_a_budget_s_range_does_not_carry_the_first_closure_s_miss():
    """A March budget of a model that knows the closure: its range is the 1 % noise's
    (about ±0.3 % of the month at P10–P90 for independent hours), not dragged down by blocks
    of the first closure's −70 % days, and its P50 is the forecast."""
    history, errors = campus_history()
    plan = MeterPlan(
        "Hall", "electricity", CampusCurve(), history, residuals=errors, calendar=CALENDAR
    )
    run = simulate_budget(
        [plan], ["2024-03"], date(2024, 2, 29), WeatherAssumption.none(), paths=2000,
        error_days=730, rng=3,
    )  # fmt: skip
    quantiles = run.meters[0].months[0].energy.quantiles
    forecast = 100.0 * 31
    assert abs(quantiles["50"] / forecast - 1) < 0.002
    assert quantiles["10"] / forecast > 0.99
    # the assumptions say so: the eight closure days of 2022 lie in the 730-day error window
    assert "less those of 8 days of calendar conditions" in run.assumptions["model_errors"]["Hall"]


def test_a_short_history_keeps_its_first_encounters_rather_than_too_few_days():
    """Errors of December 2022 only: its closure days are first encounters, but leaving them
    out would leave 23 days, fewer than the four weeks a budget draws from."""
    history, errors = campus_history()
    december = errors[_local_days(errors.index).month == 12]
    december = december[december.index < pd.Timestamp("2023-01-01", tz=ZONE)]
    assert kept_errors(december, history).equals(december)
    november_and_december = errors[errors.index < pd.Timestamp("2023-01-01", tz=ZONE)]
    november_and_december = november_and_december[
        november_and_december.index >= pd.Timestamp("2022-11-01", tz=ZONE)
    ]
    kept = kept_errors(november_and_december, history)
    assert len(set(_local_days(kept.index))) == 61 - 8
