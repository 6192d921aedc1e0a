"""The design matrix of the calendar regression: its columns, and what each one explains.

:func:`calendar_features` turns inputs into the drivers (local clock phases, day type, campus
period kind, temperature, time); :class:`DesignLayout` is what the fit decided about the
columns (orders, which day types and period kinds get their own terms, balance points,
trend knots) and is stored with the model so prediction rebuilds exactly the same columns.
Every column belongs to one component (:data:`COMPONENTS`), so a prediction splits into
contributions that add up to it.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from engine.models._inputs import HOUR, labels_of, local_clock
from engine.models.base import ModelInputs

#: Contributions a prediction splits into, in display order.
COMPONENTS: tuple[str, ...] = (
    "base",
    "daily",
    "weekly",
    "annual",
    "calendar",
    "heating",
    "cooling",
    "trend",
)
#: Day types with their own daily shape; the first is the reference the others differ from.
SHAPE_DAY_TYPES: tuple[str, ...] = ("weekday", "weekend", "holiday")
#: Mean length of a year in hours (365.25 days), the period of the annual cycle.
HOURS_PER_YEAR = 8766.0
#: Origin of the annual phase (local clock) and of trend time (UTC).
EPOCH = pd.Timestamp("2000-01-01")


def fourier_columns(phase: np.ndarray, order: int) -> np.ndarray:
    """``cos(2πk·phase), sin(2πk·phase)`` for k = 1..order, as ``2·order`` columns.

    The columns are contiguous (column-major), as the design matrix stores them.
    """
    # Clock phases repeat (24 per day for hourly data): take sines of each distinct one once.
    distinct, at = np.unique(phase, return_inverse=True)
    angles = 2 * np.pi * distinct[None, :] * np.arange(1, order + 1)[:, None]
    rows = np.empty((2 * order, len(distinct)))
    np.cos(angles, out=rows[0::2])
    np.sin(angles, out=rows[1::2])
    return np.take(rows, at, axis=1).T


def fourier_names(prefix: str, order: int) -> list[str]:
    return [f"{prefix} {wave} {k}" for k in range(1, order + 1) for wave in ("cos", "sin")]


@dataclass(frozen=True)
class CalendarFeatures:
    """Drivers of each interval.

    ``hour_of_day`` and ``hour_of_week`` are on the local clock (fractional hours);
    ``years`` counts years of 365.25 days since 2000 (UTC, for the trend) and ``year_phase``
    the same on the local clock (for the annual cycle). ``interval_hours`` converts kWh per
    interval to kWh per hour.
    """

    hour_of_day: np.ndarray
    hour_of_week: np.ndarray
    year_phase: np.ndarray
    years: np.ndarray
    day_type: np.ndarray
    period_kind: np.ndarray
    temperature: np.ndarray | None
    interval_hours: float

    def __len__(self) -> int:
        return len(self.hour_of_day)

    def rows(self, keep: np.ndarray) -> CalendarFeatures:
        """The features of the intervals where ``keep`` is True."""
        return replace(
            self,
            hour_of_day=self.hour_of_day[keep],
            hour_of_week=self.hour_of_week[keep],
            year_phase=self.year_phase[keep],
            years=self.years[keep],
            day_type=self.day_type[keep],
            period_kind=self.period_kind[keep],
            temperature=None if self.temperature is None else self.temperature[keep],
        )


def smoothed_temperature(temperature: np.ndarray, step: pd.Timedelta, hours: float) -> np.ndarray:
    """Exponentially smoothed temperature with time constant ``hours`` (building thermal lag).

    The smoothing starts afresh at the first interval, so the first day or so of a window
    follows the raw temperature more closely than later ones. Intervals without a reading
    stay missing.
    """
    alpha = 1.0 - np.exp(-(step / HOUR) / hours)
    smoothed = pd.Series(temperature).ewm(alpha=alpha, adjust=False).mean().to_numpy()
    return np.where(np.isfinite(temperature), smoothed, np.nan)


def _text(labels: pd.Series) -> np.ndarray:
    """A label column as numpy strings; categories are converted once, not row by row."""
    if not isinstance(labels.dtype, pd.CategoricalDtype):
        return labels.to_numpy().astype(str)
    # Code −1 (missing) picks the appended "nan", as str() of a missing value gives.
    names = np.append(labels.cat.categories.to_numpy().astype(str), "nan")
    return names[labels.cat.codes.to_numpy()]


def calendar_features(
    inputs: ModelInputs,
    step: pd.Timedelta,
    temperature: np.ndarray | None,
    smoothing_hours: float | None,
) -> CalendarFeatures:
    """The drivers of ``inputs`` (temperature already aligned, or None)."""
    local = local_clock(inputs)
    labels = labels_of(inputs)
    hours_since_midnight = (local - local.normalize()) / HOUR
    hour_of_day = np.asarray(hours_since_midnight, dtype=float)
    raw_day = _text(labels["day_type"])
    day_type = np.where(np.isin(raw_day, ("saturday", "sunday")), "weekend", raw_day)
    if temperature is not None and smoothing_hours:
        temperature = smoothed_temperature(temperature, step, smoothing_hours)
    return CalendarFeatures(
        hour_of_day=hour_of_day,
        hour_of_week=np.asarray(local.day_of_week, dtype=float) * 24 + hour_of_day,
        year_phase=np.asarray((local - EPOCH) / HOUR, dtype=float) / HOURS_PER_YEAR,
        years=np.asarray((inputs.index - EPOCH.tz_localize("UTC")) / HOUR, dtype=float)
        / HOURS_PER_YEAR,
        day_type=day_type,
        period_kind=_text(labels["period_kind"]),
        temperature=temperature,
        interval_hours=step / HOUR,
    )


@dataclass(frozen=True)
class DesignLayout:
    """What the fit decided about the columns; stored with the model.

    ``day_types`` and ``period_kinds`` list the non-reference groups that get their own
    level and daily shape (a holiday without learned terms is treated as a weekend, a
    weekend without them as a weekday, and any unlisted period kind as the reference kind).
    ``trend_origin`` is None for no trend; ``trend_knots`` are years after the origin.
    """

    daily_order: int
    weekly_order: int
    annual_order: int
    period_order: int
    day_types: tuple[str, ...] = ()
    period_kinds: tuple[str, ...] = ()
    reference_kind: str = ""
    heating_base: float | None = None
    cooling_base: float | None = None
    trend_origin: float | None = None
    trend_knots: tuple[float, ...] = field(default_factory=tuple)
    #: Days off (weekends, holidays) within each campus period kind get their own level and
    #: daily shape: a weekend in a break or the closure is not a term weekend. False only for
    #: models stored before this term existed.
    period_days_off: bool = False
    #: Within each period kind, holidays get their own level and shape apart from weekends
    #: (Christmas in a closure is not a closure weekend). False for models stored before.
    period_holidays: bool = False
    #: The trend is a share of the rest of the load per year (its columns are multiplied by
    #: that load: :func:`with_proportional_trend`) rather than the same kWh added to every
    #: interval: growth in floor area or equipment grows a summer afternoon's cooling more
    #: than a winter night's base. False for models stored before.
    proportional_trend: bool = False

    def to_dict(self) -> dict[str, Any]:
        stored = asdict(self)
        stored["day_types"] = list(self.day_types)
        stored["period_kinds"] = list(self.period_kinds)
        stored["trend_knots"] = list(self.trend_knots)
        return stored

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> DesignLayout:
        return cls(
            **{
                **data,
                "day_types": tuple(data["day_types"]),
                "period_kinds": tuple(data["period_kinds"]),
                "trend_knots": tuple(float(k) for k in data["trend_knots"]),
            }
        )


def _effective_day_type(day_type: np.ndarray, learned: tuple[str, ...]) -> np.ndarray:
    effective = day_type.copy()
    if "holiday" not in learned:
        effective[effective == "holiday"] = "weekend"
    if "weekend" not in learned:
        effective[effective == "weekend"] = "weekday"
    return effective


@dataclass
class _Columns:
    """Blocks of columns collected for a design, with each column's component and name."""

    blocks: list[np.ndarray] = field(default_factory=list)
    components: list[str] = field(default_factory=list)
    names: list[str] = field(default_factory=list)

    def add(self, component: str, names: list[str], values: np.ndarray) -> None:
        block = values[:, None] if values.ndim == 1 else values
        self.blocks.append(block)
        self.components.extend([component] * block.shape[1])
        self.names.extend(names)

    def design(self, rows: int | None = None) -> Design:
        """The blocks side by side in one column-major matrix (each column contiguous);
        ``rows`` gives the length when there may be no blocks."""
        length = len(self.blocks[0]) if rows is None else rows
        matrix = np.empty((length, len(self.names)), order="F")
        at = 0
        for block in self.blocks:
            matrix[:, at : at + block.shape[1]] = block
            at += block.shape[1]
        return Design(matrix, tuple(self.components), tuple(self.names))


@dataclass(frozen=True)
class Design:
    """A design matrix with the component and a plain name of each column."""

    matrix: np.ndarray
    components: tuple[str, ...]
    names: tuple[str, ...]

    def component_mask(self, component: str) -> np.ndarray:
        return np.array([c == component for c in self.components])


def _degree_hours(features: CalendarFeatures, base: float | np.ndarray, kind: str) -> np.ndarray:
    """``(base − T)⁺`` or ``(T − base)⁺`` times the interval hours: intervals × bases.

    Built base by base (rows of bases × intervals, transposed) so each column is contiguous.
    """
    bases = np.atleast_1d(base)[:, None]
    temperature = features.temperature[None, :]
    if kind == "heating":
        difference = np.subtract(bases, temperature)
    else:
        difference = np.subtract(temperature, bases)
    np.maximum(difference, 0.0, out=difference)
    difference *= features.interval_hours
    return difference.T.reshape((len(features), *np.shape(base)))


def heating_column(features: CalendarFeatures, base: float | np.ndarray) -> np.ndarray:
    """Heating degree-hours per interval, ``(base − T)⁺ · interval hours``, per base."""
    return _degree_hours(features, base, "heating")


def cooling_column(features: CalendarFeatures, base: float | np.ndarray) -> np.ndarray:
    """Cooling degree-hours per interval, ``(T − base)⁺ · interval hours``, per base."""
    return _degree_hours(features, base, "cooling")


def degree_hour_products(
    data: np.ndarray,
    features: CalendarFeatures,
    bases: np.ndarray,
    kind: str,
    weights: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """``dataᵀWh`` and ``hᵀWh`` for the degree-hour column ``h`` of ``kind`` at each base,
    with ``W`` the row ``weights`` (all 1 when None).

    ``features`` (and the rows of ``data``) must be in ascending temperature order and
    ``bases`` ascending. Then rows split into three runs: one where every column is zero, one
    where every column is linear in its base (``dt·(b − T)`` heating, ``dt·(T − b)``
    cooling), and the band of temperatures between the lowest and highest base; only the
    band needs the columns themselves. The linear run is summed about its mean temperature
    ``m``: ``Σ x·(b − T) = (b − m)·Σ x + Σ x·(m − T)``.
    """
    temperature = features.temperature
    below = int(np.searchsorted(temperature, bases[0], side="right"))
    above = int(np.searchsorted(temperature, bases[-1], side="left"))
    linear = slice(0, below) if kind == "heating" else slice(above, len(temperature))
    band = slice(below, max(below, above))
    columns = _degree_hours(features.rows(band), bases, kind)
    weighted = columns if weights is None else columns * weights[band, None]
    products = data[band].T @ weighted
    norms = np.einsum("ij,ij->j", weighted, columns)
    if linear.stop > linear.start:
        run = temperature[linear]
        mean = run.mean()
        deviation = mean - run
        offsets = np.column_stack([np.ones(len(run)), deviation])
        if weights is not None:
            offsets *= weights[linear, None]
        sums = data[linear].T @ offsets
        # dt·sign·(b − T): heating columns grow with the base, cooling columns shrink.
        scale = features.interval_hours * (1.0 if kind == "heating" else -1.0)
        shift = bases - mean
        products += scale * (np.outer(sums[:, 0], shift) + sums[:, 1:])
        count, first, second = offsets[:, 0].sum(), offsets[:, 1].sum(), offsets[:, 1] @ deviation
        norms += features.interval_hours**2 * (count * shift**2 + 2 * shift * first + second)
    return products, norms


def with_proportional_trend(design: Design, level: np.ndarray) -> Design:
    """``design`` with its trend columns multiplied by ``level``, the load per row without
    the trend, so that the trend's coefficients are shares of that load per year."""
    trend = design.component_mask("trend")
    matrix = design.matrix.copy()
    matrix[:, trend] *= level[:, None]
    return replace(design, matrix=matrix)


def build_design(features: CalendarFeatures, layout: DesignLayout) -> Design:
    """The design matrix of ``features`` under ``layout``: :func:`calendar_design`'s columns,
    then :func:`weather_and_trend_design`'s."""
    columns = _Columns()
    _add_calendar_columns(columns, features, layout)
    _add_weather_and_trend_columns(columns, features, layout)
    return columns.design()


def calendar_design(features: CalendarFeatures, layout: DesignLayout) -> Design:
    """The columns that depend on the clock and calendar only (base load to annual cycle).

    They do not change with the balance points or the trend's knots, so one build serves every
    fit window of a history that shares the layout's orders, day types and period kinds.
    """
    columns = _Columns()
    _add_calendar_columns(columns, features, layout)
    return columns.design()


def weather_and_trend_design(features: CalendarFeatures, layout: DesignLayout) -> Design:
    """The degree-hour and trend columns, which follow the design's calendar columns."""
    columns = _Columns()
    _add_weather_and_trend_columns(columns, features, layout)
    return columns.design(len(features))


def _add_calendar_columns(
    columns: _Columns, features: CalendarFeatures, layout: DesignLayout
) -> None:
    n = len(features)
    columns.add("base", ["base load"], np.ones(n))
    daily = fourier_columns(features.hour_of_day / 24.0, layout.daily_order)
    columns.add("daily", fourier_names("daily", layout.daily_order), daily)
    day_type = _effective_day_type(features.day_type, layout.day_types)
    for name in layout.day_types:
        member = (day_type == name).astype(float)
        columns.add("calendar", [name], member)
        columns.add(
            "calendar",
            fourier_names(f"{name} daily", layout.daily_order),
            daily * member[:, None],
        )
    period_daily = daily[:, : 2 * layout.period_order]
    holiday = features.day_type == "holiday"
    day_off = (features.day_type == "weekend") | (holiday & ~layout.period_holidays)
    for kind in layout.period_kinds:
        in_period = features.period_kind == kind
        name = kind or "no period"
        groups = [(f"{name} days", f"{name} daily", in_period)]
        if layout.period_days_off:
            groups.append((f"{name} days off", f"{name} daily off", in_period & day_off))
        for label, shape, chosen in groups:
            member = chosen.astype(float)
            columns.add("calendar", [label], member)
            columns.add(
                "calendar",
                fourier_names(shape, layout.period_order),
                period_daily * member[:, None],
            )
        if layout.period_holidays:  # a level only: a period holds a few holidays a year
            columns.add("calendar", [f"{name} holidays"], (in_period & holiday).astype(float))
    columns.add(
        "weekly",
        fourier_names("weekly", layout.weekly_order),
        fourier_columns(features.hour_of_week / 168.0, layout.weekly_order),
    )
    columns.add(
        "annual",
        fourier_names("annual", layout.annual_order),
        fourier_columns(features.year_phase, layout.annual_order),
    )


def _add_weather_and_trend_columns(
    columns: _Columns, features: CalendarFeatures, layout: DesignLayout
) -> None:
    if layout.heating_base is not None:
        columns.add(
            "heating", ["heating degree-hours"], heating_column(features, layout.heating_base)
        )
    if layout.cooling_base is not None:
        columns.add(
            "cooling", ["cooling degree-hours"], cooling_column(features, layout.cooling_base)
        )
    if layout.trend_origin is not None:
        since = features.years - layout.trend_origin
        columns.add("trend", ["trend per year"], since)
        for knot in layout.trend_knots:
            hinge = np.maximum(since - knot, 0.0)
            columns.add("trend", [f"trend change after {knot:.2f} years"], hinge)
