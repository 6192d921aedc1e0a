"""Where a model misses systematically: its residuals by hour, weekday, month and campus period.

The fit wizard's diagnosis of the chosen model (see :func:`engine.selection.recommend_model`),
from its one-month-ahead forecasts under actual weather, so the tables show the model's own
systematic misses rather than the weather's.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.project.columns import json_records
from engine.scoring import total_by

_WEEKDAYS = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
_MONTHS = tuple(pd.Timestamp(2001, month, 1).strftime("%B") for month in range(1, 13))
_PERIOD_WORDS = {
    "term": "in term time",
    "break": "during breaks",
    "closure": "during closures",
    "summer": "in summer periods",
    "other": "in other campus periods",
    "": "outside campus periods",
}


@dataclass(frozen=True)
class ResidualPattern:
    """Where a model misses systematically.

    Every table has ``residual %`` (``100 · Σ(actual − predicted) / Σ actual``: positive
    means the model predicts too little, Guideline 14's NMBE sign), ``actual kWh``,
    ``predicted kWh`` and ``intervals``. ``by_day_kind_hour`` splits the hours into weekdays
    and weekends-and-holidays; ``by_period`` is None without calendar labels.
    ``largest_miss`` is one sentence about the largest systematic miss, in kWh, among hour
    spans, weekdays, months and campus periods (see :func:`residual_pattern`). ``weather``
    names the backtest condition the forecasts were made under, when known.
    """

    by_hour: pd.DataFrame
    by_weekday: pd.DataFrame
    by_month: pd.DataFrame
    by_period: pd.DataFrame | None
    by_day_kind_hour: pd.DataFrame
    largest_miss: str
    weather: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {
            "by_hour": json_records(self.by_hour.reset_index()),
            "by_weekday": json_records(self.by_weekday.reset_index()),
            "by_month": json_records(self.by_month.reset_index()),
            "by_period": None
            if self.by_period is None
            else json_records(self.by_period.reset_index()),
            "by_day_kind_hour": json_records(self.by_day_kind_hour.reset_index()),
            "largest_miss": self.largest_miss,
            "weather": self.weather,
        }


def _residual_table(
    actual: pd.Series, predicted: pd.Series, keys: dict[str, np.ndarray], order: list[Any]
) -> pd.DataFrame:
    totals = total_by(actual, predicted, keys).set_index(list(keys))
    totals["residual %"] = -totals.pop("forecast vs actual %")
    columns = ["residual %", "actual kWh", "predicted kWh", "intervals"]
    if len(keys) == 1:
        return totals.reindex([key for key in order if key in totals.index])[columns]
    return totals[columns]


def _hour_span(hours: np.ndarray) -> str:
    if len(hours) == 24:
        return "all day"
    return f"{hours[0]}–{hours[-1] + 1} h"


def _runs(values: np.ndarray, threshold: float) -> list[np.ndarray]:
    """Runs of consecutive positions where ``|value| ≥ threshold`` with one sign."""
    sign = np.where(np.abs(values) >= threshold, np.sign(values), 0.0)
    runs, start = [], None
    for position in range(len(sign) + 1):
        current = sign[position] if position < len(sign) else 0.0
        if start is not None and current != sign[start]:
            runs.append(np.arange(start, position))
            start = None
        if start is None and current != 0.0:
            start = position
    return runs


def _describe_miss(what: str, percent: float, consistency: float) -> str:
    verb = "Under-predicts" if percent > 0 else "Over-predicts"
    return (
        f"{verb} {what} by {abs(percent):.0f} % (the same way on {consistency:.0%} of those days)."
    )


def residual_pattern(
    actual: pd.Series,
    predicted: pd.Series,
    timezone: str,
    labels: pd.DataFrame | None = None,
    *,
    min_percent: float = 3.0,
    min_consistency: float = 2 / 3,
) -> ResidualPattern:
    """Mean residual % by local hour, weekday, month and campus period, and the largest miss.

    Parameters
    ----------
    actual, predicted : pandas.Series
        kWh per interval on a tz-aware index (``predicted`` is aligned to ``actual``).
    timezone : str
        The site's zone: groups are on the local clock.
    labels : pandas.DataFrame, optional
        :func:`engine.calendar.label_intervals` covering the index, for holidays and campus
        periods; without it weekends are Saturday and Sunday and periods are not shown.
    min_percent : float, default 3.0
        A miss smaller than this (in % of the group's actual energy) is not reported.
    min_consistency : float, default 2/3
        A miss is systematic when the group's daily residuals have its sign on at least this
        share of the days the group touches.

    Notes
    -----
    Candidate groups are each weekday, each calendar month, each campus period kind and, for
    weekdays and for weekends-and-holidays apart, every span of consecutive hours whose
    residuals all exceed ``min_percent`` with one sign. Of the systematic ones, the largest
    in kWh is reported.
    """
    predicted = predicted.reindex(actual.index)
    local = actual.index.tz_convert(timezone)
    hour = local.hour.to_numpy()
    weekday = local.day_of_week.to_numpy()
    month = local.month.to_numpy()
    day = (local.tz_localize(None).normalize().to_numpy().astype("datetime64[D]")).astype(np.int64)
    period: np.ndarray | None = None
    if labels is not None:
        aligned = labels.reindex(actual.index)
        rest_day = aligned["day_type"].astype(object).to_numpy() != "weekday"
        period = aligned["period_kind"].astype(object).fillna("").to_numpy()
        day_kind = np.where(rest_day, "weekends and holidays", "weekdays")
    else:
        day_kind = np.where(weekday >= 5, "weekends", "weekdays")

    by_hour = _residual_table(actual, predicted, {"hour": hour}, list(range(24)))
    by_weekday = _residual_table(
        actual, predicted, {"weekday": np.asarray(_WEEKDAYS)[weekday]}, list(_WEEKDAYS)
    )
    by_month = _residual_table(
        actual, predicted, {"month": np.asarray(_MONTHS)[month - 1]}, list(_MONTHS)
    )
    by_period = (
        None
        if period is None
        else _residual_table(actual, predicted, {"period": period}, list(_PERIOD_WORDS))
    )
    by_kind_hour = _residual_table(actual, predicted, {"day kind": day_kind, "hour": hour}, [])

    candidates: list[tuple[str, np.ndarray]] = []
    for kind in pd.unique(day_kind):
        hours_table = by_kind_hour.xs(kind, level="day kind")["residual %"]
        hours_table = hours_table.reindex(range(24))
        for run in _runs(hours_table.to_numpy(), min_percent):
            candidates.append(
                (f"{kind} {_hour_span(run)}", (day_kind == kind) & np.isin(hour, run))
            )
    candidates += [(f"{name}s", weekday == number) for number, name in enumerate(_WEEKDAYS)]
    candidates += [(f"in {name}", month == number + 1) for number, name in enumerate(_MONTHS)]
    if period is not None:
        candidates += [(words, period == kind) for kind, words in _PERIOD_WORDS.items()]

    miss = (actual - predicted).to_numpy()
    known = ~np.isnan(miss)
    best: tuple[float, str] | None = None
    for what, mask in candidates:
        rows = mask & known
        if not rows.any():
            continue
        actual_total = float(actual.to_numpy()[rows].sum())
        miss_total = float(miss[rows].sum())
        if actual_total == 0:
            continue
        percent = 100.0 * miss_total / actual_total
        daily = pd.Series(miss[rows]).groupby(day[rows]).sum().to_numpy()
        consistency = float(np.mean(np.sign(daily) == np.sign(miss_total)))
        if abs(percent) < min_percent or consistency < min_consistency:
            continue
        if best is None or abs(miss_total) > best[0]:
            best = (abs(miss_total), _describe_miss(what, percent, consistency))
    where = (
        "hour, weekday, month or campus period"
        if period is not None
        else ("hour, weekday or month")
    )
    sentence = (
        best[1]
        if best is not None
        else f"No systematic miss of {min_percent:g} % or more by {where}."
    )
    return ResidualPattern(
        by_hour=by_hour,
        by_weekday=by_weekday,
        by_month=by_month,
        by_period=by_period,
        by_day_kind_hour=by_kind_hour,
        largest_miss=sentence,
    )


# --- ranking and choice ------------------------------------------------------------------------
