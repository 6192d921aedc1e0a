"""What every model family shares: settings, the fitted check and plain-JSON storage.

A family subclasses :class:`ModelFamily`, stores its settings in the constructor under the
constructor's own argument names, learns in ``fit`` (attributes ending in ``_``, always
including ``n_parameters_``) and implements ``_fitted_state``/``_restore`` to save and load the
learned values as plain numbers, strings and lists. Stored form::

    {"family": "...", "version": 1, "settings": {...}, "fitted": {...} or null}

The version is that of the ``"model"`` document (:mod:`engine.project.documents`): a model of
an older version is brought up to date there when it is loaded.
"""

from __future__ import annotations

import copy
import inspect
from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any, ClassVar, Self

import numpy as np
import pandas as pd
from sklearn.exceptions import NotFittedError

from engine.errors import InputError, ProjectError
from engine.models.base import ModelInputs, scenario_rows
from engine.progress import Cancelled
from engine.project import documents
from engine.project.columns import DamagedValue
from engine.units import from_celsius, per_degree_in

#: Columns of a model's statements table (:meth:`ModelFamily.coefficients_table`).
STATEMENT_COLUMNS: tuple[str, ...] = ("term", "value", "unit", "meaning")
#: One statement: a term, its value in a unit (NaN when it has none) and a sentence.
Statement = tuple[str, float, str, str]


class Degrees:
    """Temperatures and amounts per degree in the unit a site reads them in (°C or °F), for
    stating a fit; the models themselves work in °C (conversions: NIST SP 811 (2008), B.8)."""

    def __init__(self, unit: str = "°C") -> None:
        self.unit = unit

    def temperature(self, celsius: float) -> float:
        return float(from_celsius(celsius, self.unit))

    def per_degree(self, per_celsius: float) -> float:
        return float(per_degree_in(per_celsius, self.unit))

    def text(self, celsius: float, digits: int = 1) -> str:
        """``celsius`` as words in the unit, e.g. "59.0 °F" (``digits`` after the point)."""
        return f"{self.temperature(celsius):.{digits}f} {self.unit}"


def statement_table(rows: list[Statement]) -> pd.DataFrame:
    """Statements as the table every family's ``coefficients_table`` returns."""
    return pd.DataFrame(rows, columns=list(STATEMENT_COLUMNS))


def plain(value: Any) -> Any:
    """``value`` with tuples turned into lists, recursively, for JSON."""
    if isinstance(value, tuple | list):
        return [plain(item) for item in value]
    if isinstance(value, dict):
        return {key: plain(item) for key, item in value.items()}
    return value


def float_list(values: Any) -> list[float | None]:
    """Floats for JSON, with NaN stored as null (JSON has no NaN)."""
    array = np.asarray(values, dtype=float).ravel()
    return [float(v) if np.isfinite(v) else None for v in array.tolist()]


def float_array(values: list[float | None]) -> np.ndarray:
    """The inverse of :func:`float_list`."""
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def timedelta_seconds(step: pd.Timedelta) -> float:
    return float(step.total_seconds())


def timedelta_from(seconds: float) -> pd.Timedelta:
    return pd.Timedelta(seconds=seconds)


class ModelFamily:
    """Base of the model families: settings, storage and the fitted check."""

    family: ClassVar[str]
    label: ClassVar[str]
    explainable: ClassVar[bool]
    #: True for the plainest forecasts, kept as the yardstick every model should beat.
    benchmark: ClassVar[bool] = False

    n_parameters_: int

    @property
    def is_fitted(self) -> bool:
        return hasattr(self, "n_parameters_")

    def _require_fitted(self) -> None:
        if not self.is_fitted:
            raise NotFittedError(f"this {self.label} is not fitted yet; call fit first.")

    def settings(self) -> dict[str, Any]:
        """The constructor settings, JSON-ready."""
        parameters = list(inspect.signature(type(self).__init__).parameters.values())[1:]
        named = (inspect.Parameter.POSITIONAL_OR_KEYWORD, inspect.Parameter.KEYWORD_ONLY)
        return {p.name: plain(getattr(self, p.name)) for p in parameters if p.kind in named}

    def fit_before_each(
        self, inputs: ModelInputs, cuts: Sequence[pd.Timestamp]
    ) -> list[Self | Exception]:
        """For each cut (UTC), a copy of this (unfitted) model fitted on the inputs before it,
        or the error that fit raised.

        Backtests and budgets refit a family before many monthly cuts of one history; a family
        that can share work between those windows overrides this with the same results.
        """
        fitted: list[Self | Exception] = []
        for cut in cuts:
            model = copy.deepcopy(self)
            try:
                fitted.append(model.fit(inputs.window(end=cut)))
            except Cancelled:
                raise
            except Exception as error:  # a window the family cannot fit is reported, not fatal
                fitted.append(error)
        return fitted

    def _fits_sharing(
        self,
        history: Callable[[], Any],
        fit_window: Callable[[Self, Any, pd.Timestamp], Self],
        cuts: Sequence[pd.Timestamp],
    ) -> list[Self | Exception]:
        """What an override of :meth:`fit_before_each` returns: ``fit_window(model, shared,
        cut)`` for a fresh copy of this model at each cut, ``shared`` built once by
        ``history``; a window that cannot be fitted gets its error (every window gets the
        history's, when that cannot be built)."""
        try:
            shared = history()
        except InputError as error:
            return [error] * len(cuts)
        fitted: list[Self | Exception] = []
        for cut in cuts:
            try:
                fitted.append(fit_window(type(self)(**self.settings()), shared, cut))
            except InputError as error:
                fitted.append(error)
        return fitted

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """``predict`` of ``inputs`` under each row of ``temperatures`` (scenarios × intervals;
        ``inputs.temperature`` is ignored). Families that can share the work between
        scenarios (the calendar columns, the day shapes) override it with the same results."""
        rows = scenario_rows(inputs, temperatures)
        predicted = [
            self.predict(replace(inputs, temperature=pd.Series(row, index=inputs.index)))
            for row in rows
        ]
        return np.array(predicted, dtype=float).reshape(rows.shape)

    def components(self, inputs: ModelInputs) -> pd.DataFrame:
        """Each part's contribution to the prediction (kWh per interval), one column per part,
        adding up to it; no columns for families that do not split their prediction."""
        self._require_fitted()
        return pd.DataFrame(index=inputs.index)

    def coefficients_table(self, temperature_unit: str = "°C") -> pd.DataFrame:
        """The fit in physical units and plain words: one row per statement, columns
        ``term``, ``value``, ``unit`` and ``meaning``; temperatures and amounts per degree in
        ``temperature_unit`` (°C or °F, as the site reads them; the models work in °C).

        Families with effects to state (a base load, a heating slope) override it; the others
        say in one statement how they forecast (:meth:`how_it_forecasts`).
        """
        self._require_fitted()
        return statement_table([("method", float("nan"), "", self.how_it_forecasts())])

    def how_it_forecasts(self) -> str:
        """How the family makes a forecast, in one plain sentence."""
        return (
            f"the {self.label} states no effects in physical units; judge it by its backtest "
            "scores and residuals"
        )

    @classmethod
    def candidate_settings(cls) -> list[dict[str, Any]]:
        """A small grid of constructor settings for the backtest to choose among."""
        return [{}]

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready form: settings and, when fitted, the learned values."""
        return {
            "family": self.family,
            "version": documents.version("model"),
            "settings": self.settings(),
            "fitted": self._fitted_state() if self.is_fitted else None,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Self:
        """Rebuild a model stored with :meth:`to_dict` by this or an older version."""
        if data.get("family") != cls.family:
            raise ProjectError(
                f"stored model is not a {cls.family} model (family {data.get('family')!r})."
            )
        try:
            data = documents.upgraded("model", data, data.get("version"), f"the {cls.label}")
        except DamagedValue as error:
            raise ProjectError(f"stored model: {error}.") from error
        model = cls(**data.get("settings", {}))
        if data.get("fitted") is not None:
            model._restore(data["fitted"])
        return model

    def _fitted_state(self) -> dict[str, Any]:
        raise NotImplementedError

    def _restore(self, state: dict[str, Any]) -> None:
        raise NotImplementedError

    def __repr__(self) -> str:
        shown = ", ".join(f"{key}={value!r}" for key, value in self.settings().items())
        return f"{type(self).__name__}({shown})"
