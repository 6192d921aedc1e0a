"""Change-point regression of energy against outdoor temperature.

The model shapes are those of ASHRAE research project RP-1050 (Kissock, Haberl & Claridge
2003, "Inverse Modeling Toolkit"). With ``x`` the mean temperature of a period (°C), ``y`` its
energy per day and ``(·)⁺ = max(·, 0)``:

* ``2P``  ``y = a + b·x``
* ``3PH`` ``y = a + h·(c − x)⁺``                      heating below the change point ``c``
* ``3PC`` ``y = a + k·(x − c)⁺``                      cooling above ``c``
* ``4P``  ``y = a + h·(c − x)⁺ + k·(x − c)⁺``          two slopes meeting at ``c``
* ``5P``  ``y = a + h·(c_h − x)⁺ + k·(x − c_c)⁺``, ``c_h ≤ c_c``: heating, a flat band, cooling

``h`` is reported as a positive "energy per degree below the change point" and ``k`` as energy
per degree above it. Change points are found by a grid search over the middle of the
temperature range, zoomed in around the best candidate a few times. Each candidate is scored
by the weighted SSE of its least-squares fit, worked out from running sums rather than by a
fit: with the periods sorted by temperature once, the sums a hinge needs at any change point
(of the weights, ``w·x``, ``w·x²``, ``w·y`` and ``w·x·y`` on its side of the point) are two
look-ups, and heating and cooling hinges never overlap, so each candidate's normal equations
are a few numbers solved in closed form. The sorting and sums are shared by every shape
:func:`fit_kinds` tries. The chosen fit is re-solved directly (least squares on its design)
for accuracy.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from engine.errors import InputError, ProjectError

#: Model shapes, simplest first.
KINDS: tuple[str, ...] = ("2P", "3PH", "3PC", "4P", "5P")
#: Fitted parameters per shape, change points included (ASHRAE Guideline 14 counts them in p).
PARAMETER_COUNT: dict[str, int] = {"2P": 2, "3PH": 3, "3PC": 3, "4P": 4, "5P": 5}
#: Each side of a change point keeps at least this many temperatures strictly beyond it.
MIN_POINTS_BEYOND = 3

_FORMAT = "change-point"
_FORMAT_VERSION = 1


#: Normal equations whose Gram determinant is below this share of its diagonal's product are
#: (nearly) singular, e.g. a hinge that is zero at every temperature: such a candidate is
#: scored by the best of its hinges alone.
_NEARLY_SINGULAR = 1e-10


class _SortedPoints:
    """The fit's points in ascending temperature, with running weighted sums from each end.

    A hinge ``(c − x)⁺`` is nonzero only on the points below ``c`` (``(x − c)⁺`` above it),
    so its sums ``Σw·h``, ``Σw·h²`` and ``Σw·h·y`` at any candidate ``c`` follow from the
    sums of ``w``, ``w·x``, ``w·x²``, ``w·y`` and ``w·x·y`` over the points on that side: one
    look-up per candidate instead of a pass over the points. Temperatures are taken from
    their weighted mean and energy from its weighted mean, so the sums lose few digits.
    """

    def __init__(self, x: np.ndarray, y: np.ndarray, w: np.ndarray) -> None:
        self.x, self.y, self.w = x, y, w
        order = np.argsort(x, kind="stable")
        self.ordered = x[order]
        weights = w[order]
        self.weight = float(np.sum(weights))
        self.centre = float(np.sum(weights * self.ordered) / self.weight)
        u = self.ordered - self.centre
        v = y[order] - float(np.sum(w * y) / self.weight)
        wv = weights * v
        columns = np.column_stack([weights, weights * u, weights * u * u, wv, wv * u])
        zeros = np.zeros((1, columns.shape[1]))
        self._below = np.concatenate([zeros, np.cumsum(columns, axis=0)])
        self._above = np.concatenate([np.cumsum(columns[::-1], axis=0)[::-1], zeros])
        self.sum_v = float(np.sum(wv))
        #: Weighted sum of squares of energy about its mean: the SSE with no hinge.
        self.spread = float(np.sum(wv * v)) - self.sum_v**2 / self.weight
        self._quantiles: dict[tuple[float, ...], tuple[float, ...]] = {}

    def quantiles(self, levels: tuple[float, ...]) -> tuple[float, ...]:
        """Quantiles of the temperatures, worked out once for all the shapes that ask."""
        if levels not in self._quantiles:
            found = np.quantile(self.ordered, levels)
            self._quantiles[levels] = tuple(float(value) for value in found)
        return self._quantiles[levels]

    def hinge_sums(self, points: np.ndarray, side: str) -> tuple[np.ndarray, ...]:
        """``Σw·h``, ``Σw·h²`` and ``Σw·h·v`` (``v`` the centred energy) of the hinge at each
        of ``points`` on the heating (below) or cooling (above) side."""
        t = np.asarray(points, dtype=float) - self.centre
        if side == "heating":
            count = np.searchsorted(self.ordered, points, side="left")
            n, su, suu, sv, suv = self._below[count].T
            return t * n - su, t * t * n - 2 * t * su + suu, t * sv - suv
        count = np.searchsorted(self.ordered, points, side="right")
        n, su, suu, sv, suv = self._above[count].T
        return su - t * n, suu - 2 * t * su + t * t * n, suv - t * sv


def _explained(
    points: _SortedPoints, heat: tuple[np.ndarray, ...] | None, cool: tuple[np.ndarray, ...] | None
) -> np.ndarray:
    """The drop in weighted SSE from the intercept-only fit when the hinges join it.

    With an intercept, each hinge enters centred: ``a = Σw·h² − (Σw·h)²/Σw`` and
    ``r = Σw·h·v − Σw·h·Σw·v/Σw``. Heating and cooling hinges never overlap (``c_h ≤ c_c``),
    so the centred cross product is ``−Σw·h_h·Σw·h_c/Σw``, and the two-hinge drop is the
    2×2 solve written out. The arrays broadcast: equal shapes for 4P, a grid for 5P.
    """
    centred = []
    for sums in (heat, cool):
        if sums is not None:
            s, ss, sv = sums
            centred.append(
                (s, ss, ss - s * s / points.weight, sv - s * points.sum_v / points.weight)
            )
    with np.errstate(divide="ignore", invalid="ignore"):
        alone = [np.where(a > _NEARLY_SINGULAR * ss, r * r / a, 0.0) for _, ss, a, r in centred]
        if len(centred) == 1:
            return alone[0]
        (s1, ss1, a1, r1), (s2, ss2, a2, r2) = centred
        b = -s1 * s2 / points.weight
        det = a1 * a2 - b * b
        both = (a2 * r1 * r1 - 2 * b * r1 * r2 + a1 * r2 * r2) / det
        return np.where(det > _NEARLY_SINGULAR * ss1 * ss2, both, np.maximum(*alone))


def _candidate_sse(
    points: _SortedPoints, kind: str, heat: np.ndarray | None, cool: np.ndarray | None
) -> np.ndarray:
    """Weighted SSE of the least-squares fit at every candidate change point (or, for 5P,
    every pair of them), from running sums.

    Returns shape ``(len(heat),)`` or ``(len(cool),)``, or ``(len(heat), len(cool))`` for 5P,
    with ``inf`` where a 5P pair has its heating point above its cooling point.
    """
    heat_sums = None if heat is None else points.hinge_sums(heat, "heating")
    cool_sums = None if cool is None else points.hinge_sums(cool, "cooling")
    if kind == "5P":
        heat_sums = tuple(s[:, None] for s in heat_sums)
        cool_sums = tuple(s[None, :] for s in cool_sums)
        sse = points.spread - _explained(points, heat_sums, cool_sums)
        return np.where(heat[:, None] <= cool[None, :], sse, np.inf)
    return points.spread - _explained(points, heat_sums, cool_sums)


def _zoom(grid: np.ndarray, best: int, low: float, high: float, size: int) -> np.ndarray:
    """A finer grid spanning one grid step either side of ``grid[best]``."""
    start = grid[max(best - 1, 0)]
    stop = grid[min(best + 1, len(grid) - 1)]
    return np.linspace(max(start, low), min(stop, high), size)


class ChangePointFit:
    """One change-point regression of energy per day against mean temperature (a fit, not a
    model family: the families :mod:`engine.models.daily_change_point` and
    :mod:`engine.models.billing_change_point` are built on it).

    Parameters
    ----------
    kind : {"2P", "3PH", "3PC", "4P", "5P"}, default "3PH"
        Model shape (see the module docstring).
    search_quantiles : (float, float), default (0.05, 0.95)
        Change points are searched between these quantiles of the temperatures, narrowed if
        needed so that :data:`MIN_POINTS_BEYOND` temperatures lie beyond each end.
    grid_size : int, default 40
        Candidates per grid; the search zooms in ``zoom_passes`` times around the best one.
    zoom_passes : int, default 3
        Each pass shrinks the step about ``grid_size / 2`` times.

    Attributes
    ----------
    change_points_ : tuple of float
        ``()`` for 2P, ``(c,)`` for 3PH, 3PC and 4P, ``(c_h, c_c)`` for 5P, in °C.
    intercept_ : float
        Energy per day at the change point(s) (for 2P: at 0 °C).
    heating_slope_ : float
        Energy per day per degree below the (heating) change point; positive when colder
        weather uses more. For 2P: ``max(−b, 0)``.
    cooling_slope_ : float
        Energy per day per degree above the (cooling) change point. For 2P: ``max(b, 0)``.
    r2_ : float
        Weighted coefficient of determination.
    cv_rmse_ : float
        CV(RMSE) in percent, ASHRAE Guideline 14: ``sqrt(SSE / (n − p)) / ȳ · 100`` with p
        the number of parameters in :data:`PARAMETER_COUNT` (weighted when weights are given).
    bic_ : float
        Bayesian information criterion ``n·ln(SSE/n) + p·ln(n)`` with weights scaled to mean 1.
    n_points_ : int
        Number of periods fitted.
    temperature_range_ : (float, float)
        Lowest and highest temperature seen in the fit; predictions outside it extrapolate.

    Examples
    --------
    >>> model = ChangePointFit("3PH").fit(daily_mean_temps, kwh_per_day)  # doctest: +SKIP
    >>> model.change_points_, model.heating_slope_  # doctest: +SKIP
    """

    def __init__(
        self,
        kind: str = "3PH",
        *,
        search_quantiles: tuple[float, float] = (0.05, 0.95),
        grid_size: int = 40,
        zoom_passes: int = 3,
    ) -> None:
        self.kind = kind
        self.search_quantiles = search_quantiles
        self.grid_size = grid_size
        self.zoom_passes = zoom_passes

    # -- fitting -----------------------------------------------------------------------------

    def fit(
        self,
        temps: ArrayLike,
        energy: ArrayLike,
        weights: ArrayLike | None = None,
    ) -> ChangePointFit:
        """Fit the model; ``temps`` in °C, ``energy`` per day, ``weights`` e.g. days per period."""
        self._check_kind()
        x, y, w = _checked_inputs(temps, energy, weights)
        _require_periods(len(x), PARAMETER_COUNT[self.kind])
        return self._fit_points(_SortedPoints(x, y, w))

    def _check_kind(self) -> None:
        if self.kind not in KINDS:
            raise InputError(
                f"unknown change-point model {self.kind!r}.", hint=f"Choose one of {KINDS}."
            )

    def _fit_points(self, points: _SortedPoints) -> ChangePointFit:
        """Search the change points on the sorted sums, then solve and score directly."""
        x, y, w = points.x, points.y, points.w
        change_points = self._search(points)
        design = _design(x, self.kind, change_points)
        root_w = np.sqrt(w)
        coefficients = np.linalg.lstsq(design * root_w[:, None], y * root_w, rcond=None)[0]
        self._store(change_points, coefficients)
        self._score(x, y, w)
        return self

    def _search_bounds(self, points: _SortedPoints) -> tuple[float, float]:
        """Where change points are searched (see ``search_quantiles``)."""
        ordered = points.ordered
        low_q, high_q = points.quantiles(tuple(self.search_quantiles))
        low = max(low_q, ordered[MIN_POINTS_BEYOND])
        high = min(high_q, ordered[-1 - MIN_POINTS_BEYOND])
        if not low < high:
            raise InputError(
                f"the temperatures are too few or too alike to place a change point "
                f"({len(ordered)} periods from {ordered[0]:.1f} to {ordered[-1]:.1f} °C).",
                hint="Use more periods spanning a wider range of weather, or the 2P model.",
            )
        return low, high

    def _search(self, points: _SortedPoints) -> tuple[float, ...]:
        """Change point(s) minimising the weighted SSE: grid search, then zoomed grids."""
        if self.kind == "2P":
            return ()
        low, high = self._search_bounds(points)
        heat = cool = np.linspace(low, high, self.grid_size)
        for _ in range(self.zoom_passes + 1):
            if self.kind == "5P":
                sse = _candidate_sse(points, self.kind, heat, cool)
                i, j = np.unravel_index(np.argmin(sse), sse.shape)
                best = (float(heat[i]), float(cool[j]))
                heat = _zoom(heat, i, low, high, self.grid_size)
                cool = _zoom(cool, j, low, high, self.grid_size)
            else:
                sse = _candidate_sse(
                    points,
                    self.kind,
                    heat if self.kind != "3PC" else None,
                    cool if self.kind != "3PH" else None,
                )
                k = int(np.argmin(sse))
                best = (float(heat[k]),)
                heat = cool = _zoom(heat, k, low, high, self.grid_size)
        return best

    def _store(self, points: tuple[float, ...], coefficients: np.ndarray) -> None:
        self.change_points_ = points
        self.intercept_ = float(coefficients[0])
        if self.kind == "2P":
            slope = float(coefficients[1])
            self.heating_slope_, self.cooling_slope_ = max(-slope, 0.0), max(slope, 0.0)
        elif self.kind == "3PH":
            self.heating_slope_, self.cooling_slope_ = float(coefficients[1]), 0.0
        elif self.kind == "3PC":
            self.heating_slope_, self.cooling_slope_ = 0.0, float(coefficients[1])
        else:
            self.heating_slope_, self.cooling_slope_ = (float(c) for c in coefficients[1:3])

    def _score(self, x: np.ndarray, y: np.ndarray, w: np.ndarray) -> None:
        n, p = len(x), PARAMETER_COUNT[self.kind]
        w = w / np.mean(w)
        residual = y - self.predict(x)
        sse = float(np.sum(w * residual**2))
        y_mean = float(np.sum(w * y) / n)
        sst = float(np.sum(w * (y - y_mean) ** 2))
        self.n_points_ = n
        self.temperature_range_ = (float(np.min(x)), float(np.max(x)))
        self.r2_ = 1.0 - sse / sst if sst > 0 else float("nan")
        self.cv_rmse_ = 100.0 * np.sqrt(sse / (n - p)) / y_mean if y_mean != 0 else float("nan")
        self.bic_ = n * np.log(max(sse, np.finfo(float).tiny) / n) + p * np.log(n)

    # -- using the fit -----------------------------------------------------------------------

    @property
    def is_fitted(self) -> bool:
        return hasattr(self, "change_points_")

    def _require_fit(self) -> None:
        """Raise scikit-learn's ``NotFittedError`` before ``fit``, as every model here does."""
        if not self.is_fitted:
            # Imported only here: scikit-learn takes most of a second to load, and cleaning and
            # the command line's quick commands use this module without it.
            from sklearn.exceptions import NotFittedError

            raise NotFittedError("this change-point model is not fitted yet; call fit first.")

    def predict(self, temps: ArrayLike) -> np.ndarray:
        """Energy per day at the given mean temperatures (°C)."""
        self._require_fit()
        x = np.asarray(temps, dtype=float)
        if self.kind == "2P":
            slope = self.cooling_slope_ - self.heating_slope_
            return self.intercept_ + slope * x
        heat_point = self.change_points_[0]
        cool_point = self.change_points_[-1]
        return (
            self.intercept_
            + self.heating_slope_ * np.maximum(heat_point - x, 0.0)
            + self.cooling_slope_ * np.maximum(x - cool_point, 0.0)
        )

    def weather_terms(self, temps: ArrayLike) -> np.ndarray:
        """The fitted shape's temperature columns at ``temps``, one row per temperature.

        ``(c − x)⁺`` for heating and ``(x − c)⁺`` for cooling at the fitted change points, and
        for 2P ``x`` (``−x`` when the fitted slope falls), so that a positive coefficient on
        every column means more energy. Other data can be regressed on them with the shape
        this model found.
        """
        self._require_fit()
        x = np.asarray(temps, dtype=float).ravel()
        columns = _design(x, self.kind, self.change_points_)[:, 1:]
        return -columns if self.kind == "2P" and self.heating_slope_ > 0 else columns

    @property
    def plausible(self) -> bool:
        """Whether the fitted slopes make physical sense for the shape.

        3PH needs a positive heating slope, 3PC a positive cooling slope, 5P both; a 4P may
        have any slopes except both negative (energy highest at the change point); 2P always.
        """
        self._require_fit()
        heating, cooling = self.heating_slope_ > 0, self.cooling_slope_ > 0
        return {
            "2P": True,
            "3PH": heating,
            "3PC": cooling,
            "4P": heating or cooling,
            "5P": heating and cooling,
        }[self.kind]

    # -- storage -----------------------------------------------------------------------------

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready form: settings and, when fitted, the learned values."""
        fitted = None
        if self.is_fitted:
            fitted = {
                "change_points": list(self.change_points_),
                "intercept": self.intercept_,
                "heating_slope": self.heating_slope_,
                "cooling_slope": self.cooling_slope_,
                "r2": _json_number(self.r2_),
                "cv_rmse": _json_number(self.cv_rmse_),
                "bic": _json_number(self.bic_),
                "n_points": self.n_points_,
                "temperature_range": list(self.temperature_range_),
            }
        return {
            "format": _FORMAT,
            "version": _FORMAT_VERSION,
            "kind": self.kind,
            "settings": {
                "search_quantiles": list(self.search_quantiles),
                "grid_size": self.grid_size,
                "zoom_passes": self.zoom_passes,
            },
            "fitted": fitted,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> ChangePointFit:
        """Rebuild a model stored with :meth:`to_dict`."""
        if data.get("format") != _FORMAT or data.get("version") != _FORMAT_VERSION:
            raise ProjectError(
                f"stored model is not a version-{_FORMAT_VERSION} change-point model "
                f"(format {data.get('format')!r}, version {data.get('version')!r})."
            )
        if data.get("kind") not in KINDS:
            raise ProjectError(f"stored change-point model has unknown kind {data.get('kind')!r}.")
        settings = data["settings"]
        model = cls(
            data["kind"],
            search_quantiles=tuple(settings["search_quantiles"]),
            grid_size=int(settings["grid_size"]),
            zoom_passes=int(settings["zoom_passes"]),
        )
        fitted = data.get("fitted")
        if fitted is not None:
            model.change_points_ = tuple(float(c) for c in fitted["change_points"])
            model.intercept_ = float(fitted["intercept"])
            model.heating_slope_ = float(fitted["heating_slope"])
            model.cooling_slope_ = float(fitted["cooling_slope"])
            model.r2_ = _number_from_json(fitted["r2"])
            model.cv_rmse_ = _number_from_json(fitted["cv_rmse"])
            model.bic_ = _number_from_json(fitted["bic"])
            model.n_points_ = int(fitted["n_points"])
            low, high = fitted["temperature_range"]
            model.temperature_range_ = (float(low), float(high))
        return model

    def __repr__(self) -> str:
        return f"ChangePointFit({self.kind!r})"


def _design(x: np.ndarray, kind: str, points: tuple[float, ...]) -> np.ndarray:
    """Design matrix ``[1, regressors…]`` of a shape at fixed change points."""
    columns = [np.ones_like(x)]
    if kind == "2P":
        columns.append(x)
    if kind in ("3PH", "4P", "5P"):
        columns.append(np.maximum(points[0] - x, 0.0))
    if kind in ("3PC", "4P", "5P"):
        columns.append(np.maximum(x - points[-1], 0.0))
    return np.column_stack(columns)


def _checked_inputs(
    temps: ArrayLike,
    energy: ArrayLike,
    weights: ArrayLike | None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    x = np.asarray(temps, dtype=float).ravel()
    y = np.asarray(energy, dtype=float).ravel()
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=float).ravel()
    if not len(x) == len(y) == len(w):
        raise InputError(
            f"temperatures ({len(x)}), energy ({len(y)}) and weights ({len(w)}) differ in length.",
            hint="Give one temperature, one energy value and one weight per period.",
        )
    for name, values in (("temperature", x), ("energy", y), ("weight", w)):
        if not np.all(np.isfinite(values)):
            raise InputError(
                f"{int(np.sum(~np.isfinite(values)))} {name} values are missing or not finite.",
                hint="Leave out periods without data before fitting.",
            )
    if np.any(w <= 0):
        raise InputError(
            "weights must be positive (e.g. the number of days in each period).",
            hint="Drop periods of zero length.",
        )
    return x, y, w


def _require_periods(periods: int, parameters: int) -> None:
    if periods <= parameters:
        raise InputError(
            f"{periods} periods are too few to fit {parameters} parameters.",
            hint="Use more periods (e.g. daily data) or a simpler model.",
        )


def _json_number(value: float) -> float | None:
    return None if not np.isfinite(value) else float(value)


def _number_from_json(value: float | None) -> float:
    return float("nan") if value is None else float(value)


def fit_kinds(
    temps: ArrayLike,
    energy: ArrayLike,
    weights: ArrayLike | None = None,
    kinds: tuple[str, ...] = KINDS,
    grid_size: int = 40,
) -> list[ChangePointFit]:
    """Fit each shape in ``kinds``, skipping shapes the data cannot support.

    A shape is skipped when it has too many parameters for the number of periods or its change
    point cannot be placed; if every shape is skipped the first reason is raised. ``grid_size``
    is each shape's :class:`ChangePointFit` setting.
    """
    if not kinds:
        raise InputError("no change-point shapes were chosen.", hint=f"Choose from {KINDS}.")
    x, y, w = _checked_inputs(temps, energy, weights)
    points = None  # sorted and summed once, for every shape
    models, first_problem = [], None
    for kind in kinds:
        model = ChangePointFit(kind, grid_size=grid_size)
        try:
            model._check_kind()
            _require_periods(len(x), PARAMETER_COUNT[kind])
            points = _SortedPoints(x, y, w) if points is None else points
            models.append(model._fit_points(points))
        except InputError as problem:
            first_problem = first_problem or problem
    if not models:
        raise first_problem
    return models


def best_of(models: list[ChangePointFit]) -> ChangePointFit:
    """The plausible fitted model with the lowest BIC (2P is always plausible).

    BIC (Schwarz 1978) trades fit against parameter count, so a 5P only wins over a 3P when
    its extra change point and slope buy a clearly better fit.
    """
    candidates = [model for model in models if model.plausible] or models
    return min(candidates, key=lambda model: model.bic_)


def select_best(
    temps: ArrayLike,
    energy: ArrayLike,
    weights: ArrayLike | None = None,
    kinds: tuple[str, ...] = KINDS,
    grid_size: int = 40,
) -> ChangePointFit:
    """Fit every shape in ``kinds`` and return :func:`best_of` them."""
    return best_of(fit_kinds(temps, energy, weights, kinds, grid_size))
