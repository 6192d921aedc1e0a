"""The engine side of the fit wizard: rank backtested models, say why, and warn.

Rules, stated so the wizard can show them:

* **Ranking.** Models are ranked by their month-total MAPE in the typical-weather backtest
  (the one-month-ahead forecasts of every origin pooled: the error a budget made at each
  month start would have had), rounded to 0.1 percentage point, then by their per-interval
  CV(RMSE) in the same backtest. Without temperatures the no-weather backtest is used. When
  the question is "what would this weather do" (a budget on a given weather file), the
  actual-weather backtest is the one that answers it, so the ranking uses that instead: a
  weather-blind benchmark that beats the weather models only because typical weather was
  wrong is then not chosen for a meter that responds to weather. A
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

The chosen model's residual diagnostics (:mod:`engine.residual_patterns`) go with the choice.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import pandas as pd

from engine.backtest import (
    ACTUAL_WEATHER,
    NO_WEATHER,
    TYPICAL_WEATHER,
    BacktestResult,
)
from engine.project.columns import json_records
from engine.residual_patterns import ResidualPattern, residual_pattern
from engine.scoring import GUIDELINE14_LIMITS, Scorecard
from engine.words import counted

#: Months of history the first backtest origin needs for annual effects (see module notes).
MIN_HISTORY_MONTHS = 12
#: Average Gregorian month, in days, for saying how much history there is.
_DAYS_PER_MONTH = 365.2425 / 12


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
            "ranking": json_records(self.ranking),
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


def _ranking_condition(
    result: BacktestResult, preferred: str | None = None
) -> tuple[str, list[str]]:
    """The condition to rank on (``preferred`` when the backtest scored it), with a warning
    when typical weather had to be skipped."""
    if preferred is not None and any(card.condition == preferred for card in result.scorecards):
        return preferred, []
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
    condition: str | None = None,
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
    condition : str, optional
        The weather condition to rank on when the backtest scored it (``"actual weather"``
        for a budget on given weather); by default typical weather, else none.
    """
    asked = condition
    condition, warnings = _ranking_condition(result, asked)
    ranking = _ranking_table(result, condition)
    chosen, reasons = _pick(ranking, margin_points, condition)
    if asked is not None and condition == asked == ACTUAL_WEATHER:
        reasons.append(
            "Models are ranked under the weather that actually happened, because the budget "
            "is asked for a given weather: the question is how well each model turns known "
            "temperatures into energy, not how well it guesses the weather."
        )
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
