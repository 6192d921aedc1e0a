"""What the fit wizard tells a person before and after it fits: the readings it learns from and
what was left out, the families it compares and why, and the ranking in one sentence.

Plain facts computed from a prepared meter (:class:`engine.ready_meters.ReadyMeter`), the
model registry and a stored recommendation (``ModelChoice.to_dict()``), so the window and
its tests read the same numbers. No Qt here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.backtest import BacktestResult, backtest_origins
from engine.errors import InputError
from engine.meters import utility_words
from engine.models import MODEL_FAMILIES
from engine.ready_meters import ReadyMeter
from engine.selection import EXPLAINABLE_MARGIN
from engine.wizard import RACED_FAMILIES, TRADE_BASELINE
from engine.words import counted

#: Cleaning step kinds that keep readings out of the models' fits.
LEAVING_OUT = {
    "exclude": "left out of fitting",
    "remove": "readings removed",
}
_DAY = pd.Timedelta(days=1)


@dataclass(frozen=True)
class LeftOut:
    """One range of the cleaning log that keeps readings out of the fits (local times)."""

    kind: str
    start: pd.Timestamp
    end: pd.Timestamp
    note: str

    def words(self) -> str:
        """ "2025-12-20 to 2026-01-03: left out of fitting (winter closure)"."""
        last = self.end - pd.Timedelta(1, "ns")
        span = f"{self.start:%Y-%m-%d %H:%M} to {last:%Y-%m-%d %H:%M}"
        if self.start == self.start.normalize() and self.end == self.end.normalize():
            span = f"{self.start:%Y-%m-%d} to {last:%Y-%m-%d}"
        note = f" ({self.note})" if self.note else ""
        return f"{span}: {LEAVING_OUT[self.kind]}{note}"


@dataclass(frozen=True)
class ReadingsBrief:
    """The readings a meter's models learn from, and what is not among them.

    ``first``/``last`` are the local starts of the first and last interval with a usable
    reading; ``intervals`` counts the model's intervals (hours, or days for daily meters)
    with a usable reading, ``span`` all of them from first to last, ``days`` the local days
    with at least one. ``excluded`` counts the meter's own intervals that cleaning keeps out
    of fitting, ``estimated`` those it filled or changed (used as estimates). ``weather`` is
    the share of usable intervals with a known temperature (None: the project has no weather).
    """

    meter: str
    utility: str
    timezone: str
    resolution: str
    meter_interval: pd.Timedelta
    first: pd.Timestamp
    last: pd.Timestamp
    intervals: int
    span: int
    days: int
    excluded: int
    estimated: int
    left_out: tuple[LeftOut, ...]
    weather: float | None
    model_interval: pd.Timedelta

    def backtest_months(self, origins: int) -> list[str]:
        """The local months ("YYYY-MM") a backtest of ``origins`` origins forecasts."""
        ends = pd.DatetimeIndex([self.first, self.last]).tz_convert("UTC")
        starts = backtest_origins(ends, self.timezone, origins, self.model_interval)
        return [f"{start.tz_convert(self.timezone):%Y-%m}" for start in starts]

    def lines(self) -> list[str]:
        """The facts as short sentences, in the order a person reads them."""
        unit = "day" if self.resolution == "daily" else "hour"
        lines = [
            f"'{self.meter}' ({utility_words(self.utility)}): the models learn from "
            f"{counted(self.intervals, f'{self.resolution} reading')} on "
            f"{counted(self.days, 'day')}, {self.first:%Y-%m-%d} to {self.last:%Y-%m-%d}.",
        ]
        missing = self.span - self.intervals
        if missing:
            lines.append(
                f"{counted(missing, unit)} of that span have no usable reading (missing, or "
                "left out by cleaning) and are skipped."
            )
        every = _interval_words(self.meter_interval)
        if self.left_out:
            days = self.excluded * self.meter_interval / _DAY
            lines.append(
                f"The cleaning log leaves {counted(self.excluded, every)} ({days:,.1f} days) out: "
                + "; ".join(part.words() for part in self.left_out)
                + "."
            )
        else:
            lines.append("The cleaning log leaves nothing out of fitting.")
        if self.estimated:
            lines.append(
                f"{counted(self.estimated, every)} were filled or changed by cleaning; the "
                "models learn from them as estimates."
            )
        if self.weather is None:
            lines.append(
                "The project has no weather: the models use the calendar only, so they cannot "
                "follow a cold or hot month."
            )
        else:
            lines.append(
                f"Outdoor temperature is known for {100 * self.weather:.1f} % of those readings."
            )
        return lines


def readings_brief(ready: ReadyMeter) -> ReadingsBrief:
    """What :func:`~engine.steps.prepared_site.prepare_site` made of a meter, in countable facts."""
    inputs = ready.inputs
    usable = inputs.energy.notna().to_numpy() if inputs.energy is not None else None
    if usable is None or not usable.any():
        raise InputError(
            f"meter '{ready.name}' has no readings left to learn from.",
            hint="Undo the cleaning steps that remove or exclude all of its readings.",
        )
    positions = np.flatnonzero(usable)
    local = inputs.index.tz_convert(inputs.timezone)
    first, last = local[positions[0]], local[positions[-1]]
    days = local[usable].tz_localize(None).normalize().nunique()
    weather = None
    if inputs.temperature is not None:
        weather = float(inputs.temperature.notna().to_numpy()[usable].mean())
    return ReadingsBrief(
        meter=ready.name,
        utility=ready.utility,
        timezone=inputs.timezone,
        resolution="daily" if inputs.interval >= _DAY else "hourly",
        meter_interval=ready.raw.interval,
        first=first,
        last=last,
        intervals=int(usable.sum()),
        span=int(positions[-1] - positions[0] + 1),
        days=int(days),
        excluded=int(ready.cleaned.excluded.sum()),
        estimated=int(ready.cleaned.estimated.sum()),
        left_out=tuple(_left_out(ready.steps, inputs.timezone)),
        weather=weather,
        model_interval=inputs.interval,
    )


def _left_out(steps: Sequence[dict], timezone: str) -> list[LeftOut]:
    return [
        LeftOut(
            step["kind"],
            pd.Timestamp(step["params"]["start"]).tz_convert(timezone),
            pd.Timestamp(step["params"]["end"]).tz_convert(timezone),
            step.get("note") or "",
        )
        for step in steps
        if step["kind"] in LEAVING_OUT and {"start", "end"} <= set(step["params"])
    ]


def _interval_words(interval: pd.Timedelta) -> str:
    minutes = int(interval / pd.Timedelta(minutes=1))
    if minutes >= 24 * 60:
        return "day"
    if minutes == 60:
        return "hour"
    return f"{minutes}-minute reading"


@dataclass(frozen=True)
class FamilyNote:
    """One family the wizard compares: ``how`` it forecasts and ``why`` it is in the race."""

    family: str
    label: str
    how: str
    why: str


def family_notes(
    names: Sequence[str], margin_points: float = EXPLAINABLE_MARGIN
) -> list[FamilyNote]:
    """How each named family forecasts and why the wizard compares it, one sentence each.

    The reasons restate the recommendation's rules (:mod:`engine.selection`): explainable
    families can be chosen outright; the others are yardsticks or checks, chosen only when
    clearly better, and the slow ones stop once they can no longer win.
    """
    notes = []
    for name in names:
        family = MODEL_FAMILIES[name]
        how = family().how_it_forecasts()
        if name == TRADE_BASELINE:
            why = (
                "Explainable, and the trade's own baseline: what a finance office budgets "
                "without the tool (the same month last year), with the weather and calendar "
                "taken out. It can be recommended when the backtest supports it; the share of "
                "last year it carries (all, or half beside the regression) is chosen by month "
                "totals."
            )
        elif family.explainable:
            why = (
                "Explainable: it can be recommended, and its effects are stated in physical units."
            )
        elif family.benchmark:
            why = "A benchmark: the plainest forecast, which any model worth using must beat."
        else:
            why = (
                "A check on the explainable models: recommended only when its month totals "
                f"beat the best explainable one by more than {margin_points:g} point."
            )
        if name in RACED_FAMILIES:
            why += " It stops early once it can no longer win."
        notes.append(FamilyNote(name, _capital(family.label), _capital(how) + ".", why))
    return notes


def ranking_sentence(choice: dict, backtest: BacktestResult | None = None) -> str:
    """The wizard's recommendation in one sentence, with the numbers the ranking holds.

    "Calendar regression: month totals within 3.1 % on 12 past months, best of 5; the
    benchmark 'seasonal naive benchmark' was 7.9 %." ``choice`` is a stored
    ``ModelChoice.to_dict()`` (after a choice by hand, the sentence is still about the
    recommended model); ``backtest`` gives the number of months scored.
    """
    ranking = pd.DataFrame(choice["ranking"])
    chosen = recommended(choice)
    if chosen is None or ranking.empty:
        return "No model could be scored, so none is recommended."
    scored = ranking[ranking["month-total MAPE %"].notna()]
    stopped = scored["model"].map(lambda m: bool(backtest and backtest.stopped(m)))
    row = ranking.set_index("model").loc[chosen]
    months = _months_scored(backtest, chosen, choice["condition"])
    over = f" on {counted(months, 'past month')}" if months else ""
    place = "best" if int(row["rank"]) == 1 else f"{_ordinal(int(row['rank']))}"
    sentence = (
        f"{_capital(row['name'])}: month totals within {row['month-total MAPE %']:.1f} %"
        f"{over} ({choice['condition']}), {place} of {int((~stopped).sum())}"
    )
    if stopped.any():
        sentence += f"; {counted(int(stopped.sum()), 'model')} stopped early, unable to win"
    benchmark = _benchmark_row(scored, chosen)
    if benchmark is not None:
        sentence += (
            f"; the benchmark '{benchmark['name']}' was {benchmark['month-total MAPE %']:.1f} %"
        )
    return sentence + "."


def recommended(choice: dict) -> str | None:
    """The model the wizard recommended, also after a different one was chosen by hand."""
    return (choice.get("recommendation") or {}).get("chosen", choice["chosen"])


def _benchmark_row(scored: pd.DataFrame, chosen: str) -> pd.Series | None:
    """The best-ranked benchmark other than the chosen model (ranked models are named by
    their family)."""
    is_benchmark = scored["model"].map(
        lambda m: m != chosen and m in MODEL_FAMILIES and MODEL_FAMILIES[m].benchmark
    )
    benchmarks = scored[is_benchmark.astype(bool)]
    return None if benchmarks.empty else benchmarks.iloc[0]


def _months_scored(backtest: BacktestResult | None, model: str, condition: str) -> int:
    card = None if backtest is None else backtest.scorecard(model, condition)
    return 0 if card is None else card.months


def _ordinal(number: int) -> str:
    suffix = "th" if 10 <= number % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(number % 10)
    return f"{number}{suffix or 'th'}"


def _capital(text: str) -> str:
    return text[:1].upper() + text[1:]
