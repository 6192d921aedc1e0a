"""The engine side of the fit wizard: rank backtested models, say why, warn, and diagnose.

Rules, stated so the wizard can show them:

* **Ranking.** Models are ranked by their month-total MAPE in the typical-weather backtest
  (the one-month-ahead forecasts of every origin pooled: the error a budget made at each
  month start would have had), rounded to 0.1 percentage point, then by their per-interval
  CV(RMSE) in the same backtest. Without temperatures the no-weather backtest is used. A
  model that failed at any origin ranks after every model that completed all of them.
* **Explainable first.** When the best model is a less explainable one (a benchmark or the
  flexible challenger) and the best explainable model's month-total MAPE is within
  ``margin_points`` (default 1.0 percentage point) of it, the explainable model is chosen.
* **Adequacy.** ASHRAE Guideline 14 calibration limits (see :mod:`engine.scoring`) are held
  against the *actual-weather* backtest: calibration compares a model with measurements
  under the measured drivers, while typical-weather errors also contain the weather's
  departure from typical, which no model can know. Out-of-sample forecasts are a stricter
  test than the in-sample fits the Guideline has in mind.
* **History.** Annual effects (heating and cooling seasons, the academic year) are learned
  only when the first refit has seen every month once: at least :data:`MIN_HISTORY_MONTHS`
  months before the first origin, so a full backtest of 12 origins needs 24 months of data.
  (Guideline 14 asks for a baseline covering the full range of operating conditions, usually
  a year — from memory; the 12-month rule is common practice.)

Residual diagnostics use the chosen model's one-month-ahead forecasts under actual weather,
so they show the model's own systematic misses rather than the weather's.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from engine.backtest import (
    ACTUAL_WEATHER,
    NO_WEATHER,
    TYPICAL_WEATHER,
    BacktestResult,
)
from engine.scoring import GUIDELINE14_LIMITS, Scorecard, total_by
from engine.words import counted

#: Months of history the first backtest origin needs for annual effects (see module notes).
MIN_HISTORY_MONTHS = 12
#: Average Gregorian month, in days, for saying how much history there is.
_DAYS_PER_MONTH = 365.2425 / 12
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


def _json_records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows as plain dicts, NaN as None, for the project file."""
    return [
        {
            key: None if isinstance(value, float) and math.isnan(value) else value
            for key, value in row.items()
        }
        for row in frame.to_dict(orient="records")
    ]


# --- residual diagnostics ----------------------------------------------------------------------


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
            "by_hour": _json_records(self.by_hour.reset_index()),
            "by_weekday": _json_records(self.by_weekday.reset_index()),
            "by_month": _json_records(self.by_month.reset_index()),
            "by_period": None
            if self.by_period is None
            else _json_records(self.by_period.reset_index()),
            "by_day_kind_hour": _json_records(self.by_day_kind_hour.reset_index()),
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


@dataclass(frozen=True)
class ModelChoice:
    """What the wizard recommends, and why.

    ``ranking`` has one row per model: ``rank``, ``model``, ``name``, ``explainable``,
    ``month-total MAPE %``, ``CV(RMSE) %``, ``NMBE %`` (all in the ranking condition),
    ``origins failed``, ``meets Guideline 14`` (actual weather) and ``reason``.
    """

    chosen: str | None
    condition: str
    ranking: pd.DataFrame
    reasons: tuple[str, ...]
    warnings: tuple[str, ...]
    diagnostics: ResidualPattern | None

    def to_dict(self) -> dict[str, Any]:
        return {
            "chosen": self.chosen,
            "condition": self.condition,
            "ranking": _json_records(self.ranking),
            "reasons": list(self.reasons),
            "warnings": list(self.warnings),
            "diagnostics": None if self.diagnostics is None else self.diagnostics.to_dict(),
        }


def _sentence(text: str) -> str:
    """Start with a capital: model labels are written in lower case."""
    return text[:1].upper() + text[1:]


def _resolution_word(interval: pd.Timedelta) -> str:
    if interval == pd.Timedelta(hours=1):
        return "hourly"
    if interval == pd.Timedelta(days=1):
        return "daily"
    return "per-interval"


def _ranking_condition(result: BacktestResult) -> tuple[str, list[str]]:
    """The condition to rank on, with a warning when typical weather had to be skipped."""
    if TYPICAL_WEATHER not in result.conditions:
        return NO_WEATHER, []
    conditions = {card.condition for card in result.scorecards}
    if TYPICAL_WEATHER in conditions or ACTUAL_WEATHER not in conditions:
        return TYPICAL_WEATHER, []
    return ACTUAL_WEATHER, [
        "Typical weather could not be learned before any origin (a typical year needs a "
        "full year of temperatures before the origin), so models are ranked on the "
        "actual-weather backtest, which flatters weather-driven models."
    ]


def _failure_text(result: BacktestResult, model: str, condition: str) -> str:
    failures = result.model_failures(model, condition)
    if failures.empty:
        return ""
    first = failures.iloc[0]
    count = failures["origin"].nunique()
    return (
        f"failed at {count} of {len(result.origins)} origins "
        f"(first at {first['origin']}: {first['message']})"
    )


#: Month-total MAPE points within which an explainable model is preferred to a less
#: explainable one.
EXPLAINABLE_MARGIN = 1.0


def _ranking_table(result: BacktestResult, condition: str) -> pd.DataFrame:
    resolution = _resolution_word(result.interval)
    rows = []
    for name, info in result.models.items():
        card = result.scorecard(name, condition)
        actual_card = result.scorecard(name, ACTUAL_WEATHER) or card
        failed = result.failed_origins(name, condition)
        failure = _failure_text(result, name, condition) or result.stopped(name)
        if card is None:
            reason = _sentence(
                f"{info.label}: no forecasts to score; {failure or 'it did not run'}."
            )
            mape = cv = bias = math.nan
            meets = False
        else:
            mape, cv, bias = card.month_total_mape, card.cv_rmse, card.nmbe
            meets = actual_card.meets_guideline14 if actual_card is not None else False
            reason = _sentence(
                f"{info.label}: month totals off by {mape:.1f} % on average over "
                f"{counted(card.months, 'month')} ({condition}); {resolution} CV(RMSE) {cv:.1f} %, "
                f"NMBE {bias:+.1f} %" + (f"; {failure}" if failure else "") + "."
            )
        rows.append(
            {
                "model": name,
                "name": info.label,
                "explainable": info.explainable,
                "month-total MAPE %": mape,
                "CV(RMSE) %": cv,
                "NMBE %": bias,
                "origins failed": failed,
                "meets Guideline 14": meets,
                "reason": reason,
                "_order": (
                    failed > 0 or card is None or bool(result.stopped(name)),
                    round(mape, 1) if not math.isnan(mape) else math.inf,
                    cv if not math.isnan(cv) else math.inf,
                ),
            }
        )
    rows.sort(key=lambda row: row["_order"])
    table = pd.DataFrame(rows).drop(columns="_order")
    table.insert(0, "rank", range(1, len(table) + 1))
    return table


def _pick(
    ranking: pd.DataFrame, margin_points: float, condition: str
) -> tuple[str | None, list[str]]:
    """The chosen model's name and the plain-words reasons for it."""
    usable = ranking[ranking["month-total MAPE %"].notna() & (ranking["origins failed"] == 0)]
    if usable.empty:
        usable = ranking[ranking["month-total MAPE %"].notna()]
    if usable.empty:
        return None, ["No model produced forecasts that could be scored."]
    top = usable.iloc[0]
    reasons = [
        f"{top['name']} ranks first: its month totals were off by "
        f"{top['month-total MAPE %']:.1f} % on average in the {condition} backtest"
        + (
            f", against {usable.iloc[1]['month-total MAPE %']:.1f} % for the next best "
            f"({usable.iloc[1]['name']})."
            if len(usable) > 1
            else "."
        )
    ]
    if top["explainable"]:
        return str(top["model"]), reasons
    explainable = usable[usable["explainable"]]
    if explainable.empty:
        reasons.append(f"{top['name']} is less explainable, and no explainable model scored.")
        return str(top["model"]), reasons
    runner = explainable.iloc[0]
    gap = runner["month-total MAPE %"] - top["month-total MAPE %"]
    if gap <= margin_points:
        reasons.append(
            f"{runner['name']} is chosen instead: {top['name']} is less explainable and was "
            f"better by only {gap:.1f} points on month totals, within the {margin_points:g}-"
            "point margin inside which an explainable model is preferred."
        )
        return str(runner["model"]), reasons
    reasons.append(
        f"{top['name']} is less explainable, but it beats the best explainable model "
        f"({runner['name']}) by {gap:.1f} points on month totals, more than the "
        f"{margin_points:g}-point margin; look at its forecasts before relying on them."
    )
    return str(top["model"]), reasons


def _history_warnings(result: BacktestResult) -> list[str]:
    warnings = []
    if len(result.origins) < result.origins_requested:
        warnings.append(
            f"Only {len(result.origins)} backtest origins fit in the data "
            f"({result.origins_requested} were asked for): a full backtest needs "
            f"{result.origins_requested + MIN_HISTORY_MONTHS} whole months of readings."
        )
    history_days = (result.origins[0] - result.history_start) / pd.Timedelta(days=1)
    months = history_days / _DAYS_PER_MONTH
    if months < MIN_HISTORY_MONTHS - 0.05:
        first = result.origins[0].tz_convert(result.timezone).strftime("%Y-%m")
        warnings.append(
            f"The first backtest origin ({first}) has only {months:.1f} months of history "
            f"before it; at least {MIN_HISTORY_MONTHS} are needed for annual effects "
            "(heating and cooling seasons, the academic year) to be learned. Import "
            f"{MIN_HISTORY_MONTHS - months:.1f} more months of earlier readings, or ask for "
            "fewer origins; until then seasonal effects are extrapolated."
        )
    return warnings


def _adequacy_notes(result: BacktestResult, chosen: str | None) -> tuple[list[str], list[str]]:
    """(reasons, warnings) about Guideline 14 in the actual-weather (or no-weather) backtest."""
    condition = ACTUAL_WEATHER if ACTUAL_WEATHER in result.conditions else NO_WEATHER
    cards = [card for card in result.scorecards if card.condition == condition]
    monthly_cv, monthly_nmbe = GUIDELINE14_LIMITS["monthly"]
    hourly_cv, hourly_nmbe = GUIDELINE14_LIMITS["hourly"]
    limits = (
        f"ASHRAE Guideline 14 calibration limits (CV(RMSE) ≤ {hourly_cv:g} % and NMBE within "
        f"±{hourly_nmbe:g} % per interval; ≤ {monthly_cv:g} % and ±{monthly_nmbe:g} % on "
        "monthly totals)"
    )
    reasons: list[str] = []
    warnings: list[str] = []
    meeting = [card for card in cards if card.meets_guideline14]
    if cards and not meeting:
        warnings.append(
            f"No model meets the {limits} in the {condition} backtest. Check the cleaning "
            "of the readings and the drivers (temperature, calendar) before budgeting on it."
        )
    chosen_card: Scorecard | None = next((c for c in cards if c.model == chosen), None)
    if chosen_card is not None:
        verdict = "meets" if chosen_card.meets_guideline14 else "does not meet"
        reasons.append(
            f"In the {condition} backtest it {verdict} the Guideline 14 limits: "
            f"{chosen_card.interval_check.describe()}; {chosen_card.monthly_check.describe()}."
        )
        if not chosen_card.meets_guideline14 and meeting:
            names = ", ".join(card.label for card in meeting)
            warnings.append(
                f"The chosen model does not meet the {limits}, but {names} does; it ranks "
                "lower on month totals. Consider it if the hourly detail matters."
            )
    return reasons, warnings


def _typical_weather_warning(result: BacktestResult) -> list[str]:
    skipped = result.failures[result.failures["stage"] == TYPICAL_WEATHER]
    if skipped.empty:
        return []
    origins = sorted(skipped["origin"].unique())
    return [
        f"Typical weather could not be learned before {len(origins)} origin(s) "
        f"({origins[0]} to {origins[-1]}): a typical year needs a full year of temperatures "
        "before the origin. Those origins are missing from the typical-weather ranking."
    ]


def recommend_model(
    result: BacktestResult,
    *,
    labels: pd.DataFrame | None = None,
    margin_points: float = EXPLAINABLE_MARGIN,
    min_miss_percent: float = 3.0,
) -> ModelChoice:
    """Rank the backtested models, choose one, and explain the choice (see module notes).

    Parameters
    ----------
    result : BacktestResult
        A backtest of the candidate models on one meter.
    labels : pandas.DataFrame, optional
        Calendar labels covering the backtest months, for the campus-period diagnostics.
    margin_points : float, default 1.0
        Month-total MAPE points within which an explainable model is preferred.
    min_miss_percent : float, default 3.0
        Smallest systematic miss the diagnostics report.
    """
    condition, warnings = _ranking_condition(result)
    ranking = _ranking_table(result, condition)
    chosen, reasons = _pick(ranking, margin_points, condition)
    adequacy_reasons, adequacy_warnings = _adequacy_notes(result, chosen)
    reasons += adequacy_reasons
    warnings += adequacy_warnings + _history_warnings(result) + _typical_weather_warning(result)
    for _, row in ranking.iterrows():
        if row["origins failed"] and not pd.isna(row["month-total MAPE %"]):
            warnings.append(
                f"{row['name']} {_failure_text(result, row['model'], condition)}; "
                "it is ranked after the models that completed every origin."
            )
    diagnostics = None
    if chosen is not None and result.forecasts is not None:
        wanted = ACTUAL_WEATHER if ACTUAL_WEATHER in result.conditions else condition
        frame = result.forecasts
        rows = frame[
            (frame["model"] == chosen) & (frame["weather"] == wanted) & (frame["lead"] == 1)
        ]
        index = pd.DatetimeIndex(rows["start"])
        diagnostics = replace(
            residual_pattern(
                pd.Series(rows["actual kWh"].to_numpy(), index=index),
                pd.Series(rows["predicted kWh"].to_numpy(), index=index),
                result.timezone,
                labels,
                min_percent=min_miss_percent,
            ),
            weather=wanted,
        )
        reasons.append(f"Residuals ({wanted} backtest): {diagnostics.largest_miss}")
    return ModelChoice(
        chosen=chosen,
        condition=condition,
        ranking=ranking,
        reasons=tuple(_sentence(reason) for reason in reasons),
        warnings=tuple(_sentence(warning) for warning in warnings),
        diagnostics=diagnostics,
    )
