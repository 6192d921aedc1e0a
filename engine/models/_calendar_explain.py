"""A fitted calendar regression in plain words and physical units.

Each statement is one row: a ``term``, its ``value`` in a ``unit`` (kWh per hour, kWh per
°C-hour, °C or %), and its ``meaning`` as a sentence, e.g. "heating adds 3.05 kWh per °C-hour
below 14.0 °C". Percentages compare with the reference the model was built around: an average
weekday of the most common campus period kind, apart from weather, season and trend.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.models._calendar_design import (
    EPOCH,
    HOURS_PER_YEAR,
    DesignLayout,
    fourier_columns,
)
from engine.models._family import Degrees, Statement, statement_table

#: Local hours counted as daytime when stating day-type effects in percent.
DAYTIME_HOURS: tuple[int, int] = (8, 18)


@dataclass(frozen=True)
class FittedTerms:
    """The coefficients of a fit with the names and layout that give them meaning."""

    layout: DesignLayout
    names: tuple[str, ...]
    coefficients: np.ndarray
    mean_energy: float
    interval_hours: float

    def coefficient(self, name: str) -> float:
        return float(self.coefficients[self.names.index(name)])

    def block(self, prefix: str) -> np.ndarray:
        """Coefficients of the columns whose names start with ``prefix``, in order."""
        chosen = [name.startswith(prefix) for name in self.names]
        return self.coefficients[np.array(chosen, dtype=bool)]

    def daily_shape(self, prefix: str, hours_of_day: np.ndarray) -> np.ndarray:
        block = self.block(prefix)
        return fourier_columns(hours_of_day / 24.0, block.size // 2) @ block


def _reference(layout: DesignLayout) -> str:
    return layout.reference_kind or "no campus period"


def _base(terms: FittedTerms) -> list[Statement]:
    base = terms.coefficient("base load") / terms.interval_hours
    return [
        (
            "base load",
            base,
            "kWh per hour",
            f"an average weekday ({_reference(terms.layout)}) uses {base:.1f} kWh per hour "
            "before weather, season and trend",
        )
    ]


def _weather(terms: FittedTerms, degrees: Degrees) -> list[Statement]:
    rows: list[Statement] = []
    for term, side in (("heating", "below"), ("cooling", "above")):
        base = getattr(terms.layout, f"{term}_base")
        if base is None:
            continue
        slope = degrees.per_degree(terms.coefficient(f"{term} degree-hours"))
        per = f"kWh per {degrees.unit}-hour"
        where = f"{side} {degrees.text(base)}"
        rows.append((term, slope, per, f"{term} adds {slope:.2f} {per} {where}"))
        rows.append(
            (f"{term} balance point", degrees.temperature(base), degrees.unit,
             f"{term} starts {where}")
        )  # fmt: skip
    return rows


def _calendar(terms: FittedTerms) -> list[Statement]:
    daytime = np.arange(DAYTIME_HOURS[0], DAYTIME_HOURS[1], terms.interval_hours)
    weekday = terms.coefficient("base load") + terms.daily_shape("daily ", daytime)
    hours = f"{DAYTIME_HOURS[0]:02d}:00–{DAYTIME_HOURS[1]:02d}:00"
    rows: list[Statement] = []
    for name in terms.layout.day_types:
        change = terms.coefficient(name) + terms.daily_shape(f"{name} daily ", daytime)
        percent = 100 * change.mean() / weekday.mean()
        plural = "holidays" if name == "holiday" else "weekends"
        rows.append(
            (
                name,
                percent,
                "% of weekday daytime use",
                f"{plural} change daytime use ({hours}) by {percent:+.0f} %",
            )
        )
    for kind in terms.layout.period_kinds:
        label = kind or "no period"
        # The kind's daily shape averages to zero over a day, so its level is the whole change.
        percent = 100 * terms.coefficient(f"{label} days") / terms.coefficient("base load")
        rows.append(
            (
                f"{label} days",
                percent,
                "% of daily use",
                f"{label} days change use over the day by {percent:+.0f} % "
                f"compared with {_reference(terms.layout)} days",
            )
        )
    return rows


def _trend(terms: FittedTerms) -> list[Statement]:
    layout = terms.layout
    if layout.trend_origin is None:
        return []
    # A proportional trend's coefficients are shares of the load already; an older additive
    # one's are kWh per interval per year.
    slopes = 100 * terms.block("trend") / (1.0 if layout.proportional_trend else terms.mean_energy)
    rows: list[Statement] = [
        (
            "trend",
            slopes.sum(),
            "% per year",
            f"trend: {slopes.sum():+.1f} % per year at the end of the fit window",
        )
    ]
    for knot, change in zip(layout.trend_knots, slopes[1:], strict=True):
        when = EPOCH + pd.Timedelta(hours=(layout.trend_origin + knot) * HOURS_PER_YEAR)
        rows.append(
            (
                f"trend change {when:%Y-%m}",
                change,
                "% per year",
                f"from {when:%B %Y} the trend changes by {change:+.1f} % per year",
            )
        )
    return rows


def _cycles(terms: FittedTerms) -> list[Statement]:
    rows: list[Statement] = []
    phase = np.linspace(0.0, 1.0, 512, endpoint=False)
    for name, what in (
        ("daily", "over the day"),
        ("weekly", "over the week"),
        ("annual", "over the year, apart from weather"),
    ):
        block = terms.block(f"{name} ")
        if not block.size:
            continue
        cycle = fourier_columns(phase, block.size // 2) @ block / terms.interval_hours
        swing = (cycle.max() - cycle.min()) / 2
        rows.append(
            (
                f"{name} cycle",
                swing,
                "kWh per hour",
                f"the {name} cycle swings ±{swing:.1f} kWh per hour {what}",
            )
        )
    return rows


def statements(terms: FittedTerms, degrees: Degrees) -> pd.DataFrame:
    """The statements table (see the module docstring), temperatures as ``degrees`` says."""
    rows = [
        *_base(terms),
        *_weather(terms, degrees),
        *_calendar(terms),
        *_trend(terms),
        *_cycles(terms),
    ]
    return statement_table(rows)
