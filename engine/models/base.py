"""The contract every energy model follows, so backtests, budgets and the wizard treat all alike.

A model is fitted on :class:`ModelInputs` (energy history plus its drivers) and predicts energy
for the index of other :class:`ModelInputs` whose ``energy`` may be ``None``. Constructors only
store settings; ``fit`` learns, sets attributes ending in ``_`` and returns ``self``; ``predict``
on an unfitted model raises ``sklearn.exceptions.NotFittedError``. Models save to plain JSON
with ``to_dict``/``from_dict`` (never pickle) and predict identically after a round trip.

Budgets predict the same window under many weather scenarios with the model's
``predict_scenarios(inputs, temperatures)``: one ``predict`` per scenario unless the family
shares the work (weather models build their calendar part once and only the temperature terms
per scenario). Every family also states what it learned (``coefficients_table``) and, where it
splits its prediction into parts, what each part contributes (``components``); the defaults
live in :class:`engine.models._family.ModelFamily`, so callers never probe for an ability.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Any, ClassVar, Protocol, Self, runtime_checkable

import numpy as np
import pandas as pd


@dataclass(frozen=True)
class ModelInputs:
    """Energy and drivers on one regular UTC index of interval starts.

    Attributes
    ----------
    index : pandas.DatetimeIndex
        Regular, tz-aware UTC interval starts (hourly or daily; billing-period models use
        daily inputs and aggregate themselves).
    timezone : str
        The site's IANA zone; calendar effects are on local clock time.
    energy : pandas.Series or None
        kWh per interval on ``index`` (NaN where unknown or excluded); None when predicting.
    temperature : pandas.Series or None
        Outdoor dry-bulb °C on ``index`` (the hour's reading as the weather file stamps it,
        or the local day's mean on a daily index); None when the project has no weather, in
        which case weather-driven models fall back to calendar-only forms.
    labels : pandas.DataFrame or None
        ``engine.calendar.label_intervals`` on ``index``: local, hour_of_week, day_type,
        period, period_kind, occupied. None means "derive from the local clock only".
    """

    index: pd.DatetimeIndex
    timezone: str
    energy: pd.Series | None = None
    temperature: pd.Series | None = None
    labels: pd.DataFrame | None = None

    @cached_property
    def condition_days(self) -> tuple[np.ndarray, np.ndarray]:
        """Per local day the inputs hold: its day number (days since 1970-01-01 on the site's
        clock) and that of the first day with its calendar condition (campus period kind and
        kind of day: weekday, weekend or holiday; the weekday alone without labels).

        Kept once worked out: a budget asks it of a meter's history for each past budget.
        """
        labels = self.labels
        if labels is None:
            local = self.index.tz_convert(self.timezone).tz_localize(None).to_numpy()
        else:  # the labels hold the local clock already
            local = labels["local"].to_numpy()
        days = local.astype("datetime64[D]").astype(np.int64)
        starts = np.flatnonzero(np.diff(days, prepend=days[0] - 1) != 0)
        weekend = (days[starts] + 3) % 7 >= 5  # day 0, 1970-01-01, was a Thursday
        if labels is None:
            condition = weekend.astype(np.int64)
        else:
            holiday = labels["day_type"].iloc[starts].to_numpy() == "holiday"
            period = pd.factorize(labels["period_kind"].iloc[starts].to_numpy())[0]
            condition = 3 * period + np.where(holiday, 2, weekend)
        _, first, inverse = np.unique(condition, return_index=True, return_inverse=True)
        return days[starts], days[starts][first][inverse]

    @property
    def interval(self) -> pd.Timedelta:
        """The usual step (daily inputs are 23 or 25 h apart in UTC across clock changes)."""
        if self.index.freq:
            return pd.Timedelta(self.index.freq)
        steps = pd.Series(self.index[1:] - self.index[:-1])
        return steps.mode().iloc[0]

    def window(self, start: pd.Timestamp | None = None, end: pd.Timestamp | None = None) -> Self:
        """The same inputs restricted to ``start <= t < end`` (UTC)."""
        mask = pd.Series(True, index=self.index)
        if start is not None:
            mask &= self.index >= start
        if end is not None:
            mask &= self.index < end
        keep = mask.to_numpy()
        return replace(
            self,
            index=self.index[keep],
            energy=None if self.energy is None else self.energy[keep],
            temperature=None if self.temperature is None else self.temperature[keep],
            labels=None if self.labels is None else self.labels[keep],
        )

    def without_energy(self) -> Self:
        return replace(self, energy=None)


@runtime_checkable
class EnergyModel(Protocol):
    """What every model family provides."""

    #: Short stable identifier stored in project files, e.g. "calendar_regression".
    family: ClassVar[str]
    #: Plain-language name for screens and the scorecard.
    label: ClassVar[str]
    #: False for benchmarks and the flexible challenger: shown as "less explainable".
    explainable: ClassVar[bool]

    #: After fit: the number of fitted parameters p, for ASHRAE Guideline 14's n − p.
    n_parameters_: int

    def fit(self, inputs: ModelInputs) -> Self: ...

    def fit_before_each(
        self, inputs: ModelInputs, cuts: Sequence[pd.Timestamp]
    ) -> list[Self | Exception]:
        """Fresh fits on the inputs before each cut, or each fit's error (one per cut)."""
        ...

    def predict(self, inputs: ModelInputs) -> pd.Series: ...

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """``predict`` under each row of ``temperatures`` (scenarios × intervals)."""
        ...

    def components(self, inputs: ModelInputs) -> pd.DataFrame:
        """Each part's contribution (kWh per interval); no columns when not split."""
        ...

    def coefficients_table(self, temperature_unit: str = "°C") -> pd.DataFrame:
        """The fit in plain words: ``term``, ``value``, ``unit``, ``meaning`` per statement,
        temperatures in ``temperature_unit`` (°C or °F)."""
        ...

    def settings(self) -> dict[str, Any]:
        """The constructor's keyword arguments, as given."""
        ...

    def to_dict(self) -> dict[str, Any]: ...

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Self: ...


def fresh(model: EnergyModel) -> EnergyModel:
    """An unfitted model of the same family with the same settings."""
    return type(model)(**model.settings())


def scenario_rows(inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
    """``temperatures`` as a float array of scenarios × intervals of ``inputs.index``."""
    rows = np.asarray(temperatures, dtype=float)
    if rows.ndim != 2 or rows.shape[1] != len(inputs.index):
        raise ValueError(
            f"temperature scenarios must be scenarios × {len(inputs.index)} intervals, "
            f"not of shape {rows.shape}"
        )
    return rows


def predict_scenarios(
    model: EnergyModel, inputs: ModelInputs, temperatures: np.ndarray
) -> np.ndarray:
    """Energy per interval under each temperature scenario, shape scenarios × intervals.

    Row ``s`` is ``model.predict`` of ``inputs`` (index and labels; their temperature is
    ignored) with ``temperatures[s]`` as the temperature on ``inputs.index``.
    """
    return model.predict_scenarios(inputs, scenario_rows(inputs, temperatures))
