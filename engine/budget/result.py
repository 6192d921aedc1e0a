"""What a budget run produces: per-month totals with a range, per meter, per utility, campus.

These plain dataclasses are the contract between the budget engine, the command line's JSON
(``to_json``), the finance workbook and the window. Energy is kWh; cost is in ``currency``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import pandas as pd


@dataclass(frozen=True)
class Spread:
    """The mean and the requested quantiles of a total over the simulated paths.

    ``quantiles`` is keyed by level as text: ``{"10": ..., "50": ..., "90": ...}``.
    """

    mean: float
    quantiles: dict[str, float]

    def to_json(self) -> dict[str, Any]:
        return {"mean": self.mean, "quantiles": dict(self.quantiles)}

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> Spread:
        return cls(mean=data["mean"], quantiles=dict(data["quantiles"]))


@dataclass(frozen=True)
class PeriodTotal:
    """One month (``period`` = "YYYY-MM") or the whole budget period (``period`` = "total").

    ``actual_to_date`` is the metered energy already in the period before the as-of date (it
    is part of every path); ``energy`` and ``cost`` spread over the paths, cost None without a
    tariff.
    """

    period: str
    actual_to_date: float
    energy: Spread
    cost: Spread | None = None

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "month" if self.period != "total" else "period": self.period,
            "actual_to_date": self.actual_to_date,
            **self.energy.to_json(),
        }
        if self.cost is not None:
            out["cost"] = self.cost.to_json()
        return out

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> PeriodTotal:
        return cls(
            period=data["month"] if "month" in data else data["period"],
            actual_to_date=data["actual_to_date"],
            energy=Spread.from_json(data),
            cost=Spread.from_json(data["cost"]) if "cost" in data else None,
        )


@dataclass
class MeterBudget:
    """A meter's budget: model used, monthly and period totals, and a daily detail table."""

    name: str
    utility: str
    model: str  # the model family's label
    months: list[PeriodTotal]
    total: PeriodTotal
    daily: pd.DataFrame  # index local date; columns "mean", "P10", "P50", "P90" ... (kWh)
    unit: str = "kWh"
    scores: dict[str, Any] = field(default_factory=dict)  # the model's backtest scorecard
    source: str = "readings"  # or "bills": an account known only through its bills
    metered_by: list[str] = field(default_factory=list)  # an account's meters (they count)

    def to_json(self) -> dict[str, Any]:
        out = {
            "name": self.name,
            "utility": self.utility,
            "unit": self.unit,
            "model": self.model,
            "source": self.source,
            "months": [m.to_json() for m in self.months],
            "total": self.total.to_json(),
        }
        if self.source == "bills":
            out["metered_by"] = list(self.metered_by)
        return out

    @classmethod
    def from_json(
        cls,
        data: Mapping[str, Any],
        daily: pd.DataFrame | None = None,
        scores: Mapping[str, Any] | None = None,
    ) -> MeterBudget:
        """The meter's budget from :meth:`to_json`, with the daily detail and scores that the
        JSON leaves out (an empty daily table when not given)."""
        return cls(
            name=data["name"],
            utility=data["utility"],
            model=data["model"],
            months=[PeriodTotal.from_json(m) for m in data["months"]],
            total=PeriodTotal.from_json(data["total"]),
            daily=pd.DataFrame() if daily is None else daily,
            unit=data["unit"],
            scores=dict(scores or {}),
            source=data.get("source", "readings"),
            metered_by=list(data.get("metered_by", [])),
        )


@dataclass(frozen=True)
class PricedPart:
    """A roll-up's priced meters on their own, when some of its meters have no price.

    The roll-up itself has no cost then (a cost of some meters beside the energy of all would
    mislead); this part sums, path by path, the energy and cost of the ``meters`` that are
    priced, and names the ``left_out`` ones.
    """

    meters: list[str]
    left_out: list[str]
    months: list[PeriodTotal]
    total: PeriodTotal

    def to_json(self) -> dict[str, Any]:
        return {
            "meters": list(self.meters),
            "left_out": list(self.left_out),
            "months": [m.to_json() for m in self.months],
            "total": self.total.to_json(),
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any] | None) -> PricedPart | None:
        if data is None:
            return None
        return cls(
            meters=list(data["meters"]),
            left_out=list(data["left_out"]),
            months=[PeriodTotal.from_json(m) for m in data["months"]],
            total=PeriodTotal.from_json(data["total"]),
        )


@dataclass
class RollUp:
    """Totals over several meters, summed path by path (``group`` a utility or "campus").

    ``priced_only`` is set when some but not all of its meters are priced (see
    :class:`PricedPart`); it is None when every meter or none is priced.
    """

    group: str
    meters: list[str]
    months: list[PeriodTotal]
    total: PeriodTotal
    unit: str = "kWh"
    priced_only: PricedPart | None = None

    def to_json(self) -> dict[str, Any]:
        return {
            "group": self.group,
            "unit": self.unit,
            "meters": list(self.meters),
            "months": [m.to_json() for m in self.months],
            "total": self.total.to_json(),
            "priced_meters_only": self.priced_only.to_json() if self.priced_only else None,
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> RollUp:
        """The roll-up from :meth:`to_json` (runs kept before ``priced_meters_only`` existed
        read without it)."""
        return cls(
            group=data["group"],
            meters=list(data["meters"]),
            months=[PeriodTotal.from_json(m) for m in data["months"]],
            total=PeriodTotal.from_json(data["total"]),
            unit=data["unit"],
            priced_only=PricedPart.from_json(data.get("priced_meters_only")),
        )


@dataclass(frozen=True)
class Skill:
    """How the budget's P50 month totals compared with a naive budget's, over past months.

    ``p50_mape`` and ``baseline_mape`` are mean absolute percentage errors of the month totals
    over the ``months`` both could be scored on; ``relative`` is ``1 − p50_mape /
    baseline_mape`` (0.2: the P50 missed by a fifth less than the baseline; negative: it
    missed by more).
    """

    baseline: str
    months: int
    p50_mape: float
    baseline_mape: float

    @property
    def relative(self) -> float:
        if not self.months or self.baseline_mape == 0:
            return float("nan")
        return 1.0 - self.p50_mape / self.baseline_mape

    def sentence(self) -> str:
        if not self.months:
            return f"no past month could be compared with {self.baseline}"
        months = f"{self.months} past month{'s' if self.months != 1 else ''}"
        if math.isfinite(self.relative):
            verdict = "better" if self.relative > 0 else "worse"
            compared = f"{abs(self.relative):.0%} {verdict}"
        else:  # the baseline hit every month exactly: no share of its error to compare
            compared = "which missed by nothing, so no relative skill can be given"
        return (
            f"P50 month totals missed by {self.p50_mape:.1f} % on average over {months}, "
            f"against {self.baseline_mape:.1f} % for {self.baseline} ({compared})"
        )

    def to_json(self) -> dict[str, Any]:
        known = bool(self.months)
        relative = self.relative
        return {
            "baseline": self.baseline,
            "months": self.months,
            "p50_mape": self.p50_mape if known else None,
            "baseline_mape": self.baseline_mape if known else None,
            "relative": relative if known and math.isfinite(relative) else None,
            "summary": self.sentence(),
        }


@dataclass
class Calibration:
    """How the P-low–P-high range held actual month totals in the backtest, and any correction.

    ``held``/``tried``: months whose actual total fell inside the range, of those tried.
    ``scale``: the factor applied to the range's half-widths (1.0 when none was needed).
    """

    level_low: int
    level_high: int
    held: int
    tried: int
    scale: float
    method: str
    #: The P50's skill against the same month last year, and against a seasonal naive budget.
    vs_last_year: Skill | None = None
    vs_seasonal_naive: Skill | None = None
    #: What the past budgets covered: "months" (meters) or "bills" (bill accounts).
    periods: str = "months"

    @property
    def coverage(self) -> float:
        return self.held / self.tried if self.tried else float("nan")

    def sentence(self) -> str:
        nominal = self.level_high - self.level_low
        each = "month" if self.periods == "months" else "bill"
        text = (
            f"the {nominal} % range held the actual {each} total in {self.held} of "
            f"{self.tried} past {self.periods}"
        )
        if self.scale != 1.0:
            text += (
                f"; ranges were {'widened' if self.scale > 1 else 'narrowed'} by a factor "
                f"{self.scale:.2f} ({self.method})"
            )
        if self.vs_last_year is not None and self.vs_last_year.months:
            text += f"; {self.vs_last_year.sentence()}"
        return text

    def to_json(self) -> dict[str, Any]:
        return {
            "levels": [self.level_low, self.level_high],
            "held": self.held,
            "tried": self.tried,
            "coverage": self.coverage if self.tried else None,
            "scale": self.scale,
            "method": self.method,
            "summary": self.sentence(),
            "skill_vs_last_year": _skill_json(self.vs_last_year),
            "skill_vs_seasonal_naive": _skill_json(self.vs_seasonal_naive),
            "periods": self.periods,
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> Calibration:
        low, high = data["levels"]
        return cls(
            low,
            high,
            data["held"],
            data["tried"],
            data["scale"],
            data["method"],
            _skill_from_json(data.get("skill_vs_last_year")),
            _skill_from_json(data.get("skill_vs_seasonal_naive")),
            data.get("periods", "months"),
        )


def _skill_json(skill: Skill | None) -> dict[str, Any] | None:
    return None if skill is None else skill.to_json()


def _skill_from_json(data: Mapping[str, Any] | None) -> Skill | None:
    """A :class:`Skill` from :meth:`Skill.to_json` (budgets kept before it was added: None)."""
    if data is None:
        return None
    unknown = float("nan")
    p50 = data["p50_mape"]
    baseline = data["baseline_mape"]
    return Skill(
        data["baseline"],
        data["months"],
        unknown if p50 is None else p50,
        unknown if baseline is None else baseline,
    )


@dataclass
class BudgetRun:
    """Everything a budget run produced, with the assumptions that a reader must see."""

    start: str  # first budget month, "YYYY-MM"
    months: list[str]  # every budget month, "YYYY-MM"
    as_of: str  # ISO date; data after it was ignored
    weather: str  # the weather assumption in words
    levels: list[int]  # e.g. [10, 50, 90]
    paths: int
    meters: list[MeterBudget]
    utilities: list[RollUp]
    campus: RollUp | None
    calibration: dict[str, Calibration]  # per meter name
    currency: str | None = None
    tariff: str | None = None
    assumptions: dict[str, Any] = field(default_factory=dict)
    cautions: list[str] = field(default_factory=list)

    def to_json(self) -> dict[str, Any]:
        return {
            "start": self.start,
            "months": list(self.months),
            "as_of": self.as_of,
            "weather": self.weather,
            "levels": list(self.levels),
            "paths": self.paths,
            "currency": self.currency,
            "tariff": self.tariff,
            "meters": [m.to_json() for m in self.meters],
            "utilities": [u.to_json() for u in self.utilities],
            "campus": self.campus.to_json() if self.campus else None,
            "calibration": {k: v.to_json() for k, v in self.calibration.items()},
            "assumptions": self.assumptions,
            "cautions": list(self.cautions),
        }

    @classmethod
    def from_json(
        cls,
        data: Mapping[str, Any],
        daily: Mapping[str, pd.DataFrame] | None = None,
        scores: Mapping[str, Mapping[str, Any]] | None = None,
    ) -> BudgetRun:
        """The run from :meth:`to_json`, with each meter's daily detail and scores by name."""
        daily, scores = daily or {}, scores or {}
        return cls(
            start=data["start"],
            months=list(data["months"]),
            as_of=data["as_of"],
            weather=data["weather"],
            levels=list(data["levels"]),
            paths=data["paths"],
            meters=[
                MeterBudget.from_json(m, daily.get(m["name"]), scores.get(m["name"]))
                for m in data["meters"]
            ],
            utilities=[RollUp.from_json(u) for u in data["utilities"]],
            campus=RollUp.from_json(data["campus"]) if data["campus"] else None,
            calibration={k: Calibration.from_json(v) for k, v in data["calibration"].items()},
            currency=data["currency"],
            tariff=data["tariff"],
            assumptions=dict(data["assumptions"]),
            cautions=list(data["cautions"]),
        )
