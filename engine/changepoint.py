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
temperature range, zoomed in around the best candidate a few times; at each candidate the
intercept and slopes come from weighted least squares, solved for all candidates at once
through their stacked normal equations. The final fit is re-solved directly for accuracy.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from sklearn.exceptions import NotFittedError

from engine.errors import InputError, ProjectError

#: Model shapes, simplest first.
KINDS: tuple[str, ...] = ("2P", "3PH", "3PC", "4P", "5P")
#: Fitted parameters per shape, change points included (ASHRAE Guideline 14 counts them in p).
PARAMETER_COUNT: dict[str, int] = {"2P": 2, "3PH": 3, "3PC": 3, "4P": 4, "5P": 5}
#: Each side of a change point keeps at least this many temperatures strictly beyond it.
MIN_POINTS_BEYOND = 3

_FORMAT = "change-point"
_FORMAT_VERSION = 1


def _hinges(x: np.ndarray, points: np.ndarray, side: str) -> np.ndarray:
    """``(c − x)⁺`` (heating side) or ``(x − c)⁺`` (cooling side) for every candidate ``c``."""
    if side == "heating":
        return np.maximum(points[:, None] - x[None, :], 0.0)
    return np.maximum(x[None, :] - points[:, None], 0.0)


#: Normal equations whose Gram determinant is below this share of its diagonal's product are
#: (nearly) singular: they get the least-norm solution instead of a direct solve.
_NEARLY_SINGULAR = 1e-10


def _stacked_sse(gram: np.ndarray, rhs: np.ndarray, total: float) -> np.ndarray:
    """Weighted SSE of the least-squares solution of each stacked normal-equation system.

    Regular systems are solved directly (LU); only nearly singular ones, e.g. a hinge that is
    zero at every temperature, take the pseudo-inverse's least-norm solution.
    """
    diagonal = np.prod(np.diagonal(gram, axis1=-2, axis2=-1), axis=-1)
    regular = np.linalg.det(gram) > _NEARLY_SINGULAR * diagonal
    coefficients = np.empty_like(rhs)
    coefficients[regular] = np.linalg.solve(gram[regular], rhs[regular][..., None])[..., 0]
    if not regular.all():
        irregular = ~regular
        coefficients[irregular] = np.einsum(
            "...ij,...j->...i", np.linalg.pinv(gram[irregular]), rhs[irregular]
        )
    return total - np.einsum("...i,...i->...", coefficients, rhs)


def _candidate_sse(
    x: np.ndarray,
    y: np.ndarray,
    w: np.ndarray,
    kind: str,
    heat: np.ndarray | None,
    cool: np.ndarray | None,
) -> np.ndarray:
    """Weighted SSE for every candidate change point (or, for 5P, every pair of them).

    The caller centres ``y`` on its weighted mean, so the SSE does not lose digits to cancellation.
    Returns shape ``(len(heat),)`` or ``(len(cool),)``, or ``(len(heat), len(cool))`` for 5P,
    with ``inf`` where a 5P pair has its heating point above its cooling point.
    """
    wy = w * y
    total = float(np.sum(wy * y))
    sum_w = float(np.sum(w))
    sum_wy = float(np.sum(wy))
    blocks = []
    if heat is not None:
        blocks.append(_hinges(x, heat, "heating"))
    if cool is not None:
        blocks.append(_hinges(x, cool, "cooling"))

    if kind == "5P":
        hh, hc = blocks
        s_h, s_c = hh @ w, hc @ w
        shape = (len(hh), len(hc))
        gram = np.empty((*shape, 3, 3))
        gram[..., 0, 0] = sum_w
        gram[..., 0, 1] = gram[..., 1, 0] = s_h[:, None]
        gram[..., 0, 2] = gram[..., 2, 0] = s_c[None, :]
        gram[..., 1, 1] = ((hh * hh) @ w)[:, None]
        gram[..., 2, 2] = ((hc * hc) @ w)[None, :]
        gram[..., 1, 2] = gram[..., 2, 1] = (hh * w) @ hc.T
        rhs = np.empty((*shape, 3))
        rhs[..., 0] = sum_wy
        rhs[..., 1] = (hh @ wy)[:, None]
        rhs[..., 2] = (hc @ wy)[None, :]
        sse = _stacked_sse(gram, rhs, total)
        return np.where(heat[:, None] <= cool[None, :], sse, np.inf)

    size = blocks[0].shape[0]
    p = 1 + len(blocks)
    gram = np.empty((size, p, p))
    rhs = np.empty((size, p))
    gram[:, 0, 0] = sum_w
    rhs[:, 0] = sum_wy
    for i, block in enumerate(blocks, start=1):
        gram[:, 0, i] = gram[:, i, 0] = block @ w
        rhs[:, i] = block @ wy
        for j, other in enumerate(blocks[i - 1 :], start=i):
            gram[:, i, j] = gram[:, j, i] = np.sum(block * other * w, axis=1)
    return _stacked_sse(gram, rhs, total)


def _zoom(grid: np.ndarray, best: int, low: float, high: float, size: int) -> np.ndarray:
    """A finer grid spanning one grid step either side of ``grid[best]``."""
    start = grid[max(best - 1, 0)]
    stop = grid[min(best + 1, len(grid) - 1)]
    return np.linspace(max(start, low), min(stop, high), size)


class ChangePointModel:
    """Change-point regression of energy per day against mean temperature.

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
    >>> model = ChangePointModel("3PH").fit(daily_mean_temps, kwh_per_day)  # doctest: +SKIP
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
    ) -> ChangePointModel:
        """Fit the model; ``temps`` in °C, ``energy`` per day, ``weights`` e.g. days per period."""
        if self.kind not in KINDS:
            raise InputError(
                f"unknown change-point model {self.kind!r}.", hint=f"Choose one of {KINDS}."
            )
        x, y, w = _checked_inputs(temps, energy, weights, PARAMETER_COUNT[self.kind])
        y_mean = float(np.sum(w * y) / np.sum(w))
        points = self._search(x, y - y_mean, w)
        design = _design(x, self.kind, points)
        root_w = np.sqrt(w)
        coefficients = np.linalg.lstsq(design * root_w[:, None], y * root_w, rcond=None)[0]
        self._store(points, coefficients)
        self._score(x, y, w)
        return self

    def _search_bounds(self, x: np.ndarray) -> tuple[float, float]:
        ordered = np.sort(x)
        low_q, high_q = self.search_quantiles
        low = max(float(np.quantile(x, low_q)), ordered[MIN_POINTS_BEYOND])
        high = min(float(np.quantile(x, high_q)), ordered[-1 - MIN_POINTS_BEYOND])
        if not low < high:
            raise InputError(
                f"the temperatures are too few or too alike to place a change point "
                f"({len(x)} periods from {ordered[0]:.1f} to {ordered[-1]:.1f} °C).",
                hint="Use more periods spanning a wider range of weather, or the 2P model.",
            )
        return low, high

    def _search(self, x: np.ndarray, y: np.ndarray, w: np.ndarray) -> tuple[float, ...]:
        """Change point(s) minimising the weighted SSE: grid search, then zoomed grids."""
        if self.kind == "2P":
            return ()
        low, high = self._search_bounds(x)
        heat = cool = np.linspace(low, high, self.grid_size)
        for _ in range(self.zoom_passes + 1):
            if self.kind == "5P":
                sse = _candidate_sse(x, y, w, self.kind, heat, cool)
                i, j = np.unravel_index(np.argmin(sse), sse.shape)
                best = (float(heat[i]), float(cool[j]))
                heat = _zoom(heat, i, low, high, self.grid_size)
                cool = _zoom(cool, j, low, high, self.grid_size)
            else:
                sse = _candidate_sse(
                    x,
                    y,
                    w,
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

    def predict(self, temps: ArrayLike) -> np.ndarray:
        """Energy per day at the given mean temperatures (°C)."""
        if not self.is_fitted:
            raise NotFittedError("this change-point model is not fitted yet; call fit first.")
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
        if not self.is_fitted:
            raise NotFittedError("this change-point model is not fitted yet; call fit first.")
        x = np.asarray(temps, dtype=float).ravel()
        columns = _design(x, self.kind, self.change_points_)[:, 1:]
        return -columns if self.kind == "2P" and self.heating_slope_ > 0 else columns

    @property
    def plausible(self) -> bool:
        """Whether the fitted slopes make physical sense for the shape.

        3PH needs a positive heating slope, 3PC a positive cooling slope, 5P both; a 4P may
        have any slopes except both negative (energy highest at the change point); 2P always.
        """
        if not self.is_fitted:
            raise NotFittedError("this change-point model is not fitted yet; call fit first.")
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
    def from_dict(cls, data: dict[str, Any]) -> ChangePointModel:
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
        return f"ChangePointModel({self.kind!r})"


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
    parameters: int,
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
    if len(x) <= parameters:
        raise InputError(
            f"{len(x)} periods are too few to fit {parameters} parameters.",
            hint="Use more periods (e.g. daily data) or a simpler model.",
        )
    return x, y, w


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
) -> list[ChangePointModel]:
    """Fit each shape in ``kinds``, skipping shapes the data cannot support.

    A shape is skipped when it has too many parameters for the number of periods or its change
    point cannot be placed; if every shape is skipped the first reason is raised. ``grid_size``
    is each shape's :class:`ChangePointModel` setting.
    """
    if not kinds:
        raise InputError("no change-point shapes were chosen.", hint=f"Choose from {KINDS}.")
    models, first_problem = [], None
    for kind in kinds:
        try:
            model = ChangePointModel(kind, grid_size=grid_size)
            models.append(model.fit(temps, energy, weights))
        except InputError as problem:
            first_problem = first_problem or problem
    if not models:
        raise first_problem
    return models


def best_of(models: list[ChangePointModel]) -> ChangePointModel:
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
) -> ChangePointModel:
    """Fit every shape in ``kinds`` and return :func:`best_of` them."""
    return best_of(fit_kinds(temps, energy, weights, kinds, grid_size))
