"""The finance workbook's tables as plain frames, before any spreadsheet layout.

Each function turns part of a :class:`~engine.budget.result.BudgetRun` (or the quality, step
and score records that go with it) into a :class:`pandas.DataFrame` whose headers are what the
reader sees. Energy headers carry the run's unit and cost headers its currency; formats,
formulas and the chart are added by :mod:`engine.export.finance_workbook`.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from engine.budget.result import BudgetRun, MeterBudget, PeriodTotal, RollUp
from engine.cleaning.steps import STEP_KINDS
from engine.errors import InputError
from engine.export.sheets import SHARE_FORMAT
from engine.meter_labels import Labels, shown_name
from engine.meters import utility_words
from engine.units import from_kwh

ENERGY_FORMAT = "#,##0"
COUNT_FORMAT = "#,##0"
PERCENT_POINTS_FORMAT = "0.0"
RATIO_FORMAT = "0.00"

#: Our own headers for the keys of :func:`engine.cleaning.quality.quality_summary`.
QUALITY_LABELS: dict[str, str] = {
    "intervals": "intervals",
    "coverage_before": "coverage before cleaning",
    "coverage_after": "coverage after cleaning",
    "estimated_intervals": "estimated intervals",
    "estimated_share": "estimated share",
    "estimated_kwh": "estimated energy (kWh)",
    "excluded_share": "left out of fitting",
    "energy_before_kwh": "energy before cleaning (kWh)",
    "energy_after_kwh": "energy after cleaning (kWh)",
    "energy_added_kwh": "energy added (kWh)",
    "energy_removed_kwh": "energy removed (kWh)",
}
STEPS_COUNT = "cleaning steps applied"
#: The scope of a roll-up's priced meters on their own (when some of its meters have no price).
PRICED_SCOPE = "priced meters only"
READ_UNIT_HEADER = "mean in the unit read"
TOTAL_LABEL = "Total"
STEP_HEADERS = ["meter", "step", "what was done", "note", "added (UTC)"]
#: Our own words for the keys of ``BudgetRun.assumptions``; other keys lose their underscores.
ASSUMPTION_LABELS: dict[str, str] = {
    "as_of": "as of (later data ignored)",
    "history_ignored_from": "readings ignored from",
    "weather": "weather assumption",
    "weather_scenarios": "weather scenarios",
    "model_errors": "model errors",
    "parameter_uncertainty": "parameter uncertainty",
    "calibration": "range calibration",
    "roll_ups": "roll-ups",
    "campus_energy": "campus energy",
    "floor": "lowest value",
    "models": "model",
}
LIST_SHOWN = 6  # longer lists are shown by their count, first and last items
ISO_STAMP = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}")


@dataclass(frozen=True)
class Budgeted:
    """One thing with a budget: the campus, a utility roll-up or a single meter."""

    scope: str  # "campus", "utility", "meter" or PRICED_SCOPE
    name: str
    meters: int
    months: list[PeriodTotal]
    total: PeriodTotal
    shown: str = ""  # a meter's display name ("": its name)
    #: The unit its meters were read in, when not kWh and shared by all of them (therm, ccf,
    #: ton-hour): the budget is shown in it too, beside kWh.
    read_unit: str | None = None
    #: A roll-up's priced meters only: the unpriced meters it leaves out, as readers name them.
    left_out: tuple[str, ...] = ()
    #: Where a single meter's figures come from: "readings", or "bills" for a bill account.
    source: str = "readings"
    #: How many of a roll-up's ``meters`` are bill accounts (counted in its totals).
    accounts: int = 0

    @property
    def shown_name(self) -> str:
        """The name as readers see it: a meter's display name, a utility's key in words, a
        roll-up's priced part with what it leaves out."""
        if self.shown:
            return self.shown
        if self.scope == PRICED_SCOPE:
            return f"{self.name.replace('_', ' ')}, {PRICED_SCOPE} ({self.left_out_words})"
        return self.name.replace("_", " ") if self.scope == "utility" else self.name

    @property
    def left_out_words(self) -> str:
        """ "leaves out Boilers: no price": the meters a priced part leaves out, in words."""
        return f"leaves out {', '.join(self.left_out)}: no price"


@dataclass(frozen=True)
class FigureColumns:
    """The headers of the figure columns shared by the overview and the monthly table."""

    unit: str
    levels: tuple[int, ...]
    currency: str | None
    with_cost: bool
    #: The month of the as-of date and the budget's first month ("YYYY-MM"): months not begun
    #: by the as-of date have no actual to date (blank, not 0).
    as_of_month: str = "9999-12"
    first_month: str = "0000-01"
    #: Each meter's display name and unit read in (by raw name); none: raw names, kWh only.
    labels: Labels = field(default_factory=dict, compare=False)
    #: Whether some budgeted thing is shown in the unit it was read in (a column of its own).
    with_read_unit: bool = False

    @property
    def read_unit(self) -> list[str]:
        """The column of the mean in the unit read in (the unit is in each cell's format)."""
        return [READ_UNIT_HEADER] if self.with_read_unit else []

    @property
    def actual(self) -> str:
        return f"actual to date ({self.unit})"

    @property
    def energy(self) -> list[str]:
        return [f"mean ({self.unit})"] + [f"P{level} ({self.unit})" for level in self.levels]

    @property
    def cost(self) -> list[str]:
        if not self.with_cost:
            return []
        code = f" ({self.currency})" if self.currency else ""
        return [f"cost mean{code}"] + [f"cost P{level}{code}" for level in self.levels]

    @property
    def shown(self) -> list[str]:
        """Every figure header in the order tables show them."""
        return [self.actual, *self.energy, *self.read_unit, *self.cost]

    @property
    def additive(self) -> list[str]:
        """Columns whose total is the sum of the months (means add up; quantiles do not)."""
        return [self.actual, self.energy[0], *self.read_unit, *self.cost[:1]]

    def level_header(self, level: int) -> str:
        return self.energy[1 + self.levels.index(level)]

    def figures(self, total: PeriodTotal, read_unit: str | None = None) -> dict[str, float | None]:
        """The actual to date, energy, (when shown) the mean in ``read_unit`` and cost figures
        of one period."""
        month = self.first_month if total.period == "total" else total.period
        begun = month <= self.as_of_month
        out: dict[str, float | None] = {self.actual: total.actual_to_date if begun else None}
        energy = [total.energy.mean] + [total.energy.quantiles[str(v)] for v in self.levels]
        out.update(zip(self.energy, energy, strict=True))
        if self.with_read_unit:
            mean = None if read_unit is None else from_kwh(total.energy.mean, read_unit)
            out[READ_UNIT_HEADER] = mean
        if self.with_cost:
            cost = total.cost
            values = (
                [cost.mean] + [cost.quantiles[str(v)] for v in self.levels]
                if cost is not None
                else [None] * (1 + len(self.levels))
            )
            out.update(zip(self.cost, values, strict=True))
        return out


def budgeted(run: BudgetRun, labels: Labels | None = None) -> list[Budgeted]:
    """The campus roll-up, then each utility roll-up, then each meter, as in the run; meters
    under their display names and with their units read in from ``labels``. A roll-up with
    some unpriced meters is followed by its priced meters only (:data:`PRICED_SCOPE`), the
    one cost total it can have."""
    labels = labels or {}

    def read_unit(meters: Sequence[str]) -> str | None:
        found = {labels[m].other_unit if m in labels else None for m in meters}
        return found.pop() if len(found) == 1 else None

    bills = {m.name for m in run.meters if m.source == "bills"}

    def rolled(scope: str, roll: RollUp, members: Sequence[str], **more: Any) -> Budgeted:
        part = roll if scope != PRICED_SCOPE else roll.priced_only
        accounts = len(bills.intersection(members))
        return Budgeted(scope, roll.group, len(members), part.months, part.total, accounts=accounts,
                        **more)  # fmt: skip

    def with_priced(scope: str, roll: RollUp, **more: Any) -> list[Budgeted]:
        out = [rolled(scope, roll, roll.meters, **more)]
        part = roll.priced_only
        if part is not None:
            left_out = tuple(shown_name(labels, name) for name in part.left_out)
            out.append(rolled(PRICED_SCOPE, roll, part.meters, left_out=left_out))
        return out

    out = with_priced("campus", run.campus) if run.campus is not None else []
    for u in run.utilities:
        out += with_priced("utility", u, read_unit=read_unit(u.meters))
    out += [
        Budgeted("meter", m.name, 1, m.months, m.total, shown_name(labels, m.name),
                 read_unit([m.name]), source=m.source)
        for m in run.meters
    ]  # fmt: skip
    return out


def figure_columns(run: BudgetRun, labels: Labels | None = None) -> FigureColumns:
    """The figure headers of ``run``; every roll-up and meter must share one energy unit.

    With ``labels``, meters are named by their display names, and a column shows the mean in
    the unit read in wherever that is not kWh."""
    units = {m.unit for m in run.meters} | {u.unit for u in run.utilities}
    if run.campus is not None:
        units.add(run.campus.unit)
    if len(units) > 1:
        raise InputError(
            f"the budget run mixes energy units ({', '.join(sorted(units))}).",
            hint="Budget every meter in kWh (the importer converts units) and run it again.",
        )
    items = budgeted(run, labels)
    with_cost = any(p.cost is not None for b in items for p in [*b.months, b.total])
    return FigureColumns(
        unit=units.pop() if units else "kWh",
        levels=tuple(sorted(run.levels)),
        currency=run.currency,
        with_cost=with_cost,
        as_of_month=run.as_of[:7],
        first_month=run.months[0],
        labels=dict(labels or {}),
        with_read_unit=any(b.read_unit for b in items),
    )


@dataclass(frozen=True)
class Block:
    """Where one budgeted thing sits in the monthly frame: its first month row and count."""

    item: Budgeted
    first: int  # 0-based row of the frame
    count: int

    @property
    def total_row(self) -> int:
        return self.first + self.count


def monthly_frame(run: BudgetRun, columns: FigureColumns) -> tuple[pd.DataFrame, list[Block]]:
    """One block per budgeted thing: its months, a total row, then a blank row between blocks.

    The total row holds the period total's own figures; the workbook replaces the additive
    columns with live sums of the month rows.
    """
    rows: list[dict[str, Any]] = []
    blocks: list[Block] = []
    for item in budgeted(run, columns.labels):
        if rows:
            rows.append({})
        blocks.append(Block(item, len(rows), len(item.months)))
        for month in item.months:
            rows.append(_monthly_row(item, pd.Timestamp(f"{month.period}-01"), month, columns))
        rows.append(_monthly_row(item, TOTAL_LABEL, item.total, columns))
    headers = ["scope", "budget for", "month", *columns.shown]
    return pd.DataFrame(rows, columns=headers), blocks


def _monthly_row(
    item: Budgeted, month: object, period: PeriodTotal, columns: FigureColumns
) -> dict[str, Any]:
    row = {"scope": item.scope, "budget for": item.shown_name, "month": month}
    return row | columns.figures(period, item.read_unit)


def overview_frame(run: BudgetRun, columns: FigureColumns) -> pd.DataFrame:
    """Period totals of the campus and each utility (of each meter when there is no roll-up)."""
    every = budgeted(run, columns.labels)
    items = [b for b in every if b.scope != "meter"] or every
    rows = [
        {"scope": b.scope, "budget for": b.shown_name, "meters": b.meters}
        | columns.figures(b.total, b.read_unit)
        for b in items
    ]
    headers = ["scope", "budget for", "meters", *columns.shown]
    return pd.DataFrame(rows, columns=headers)


def daily_frame(run: BudgetRun, labels: Labels | None = None) -> pd.DataFrame:
    """Daily detail, one row per local date and meter (by display name): mean and the run's
    quantiles."""
    figures = ["mean", *(f"P{level}" for level in run.levels)]
    parts = []
    for meter in run.meters:
        daily = meter.daily
        if daily.empty:
            continue
        missing = [name for name in figures if name not in daily.columns]
        if missing:
            raise ValueError(f"daily detail of meter {meter.name!r} lacks {missing}")
        part = daily[figures].set_axis([f"{n} ({meter.unit})" for n in figures], axis=1)
        part.insert(0, "date", pd.to_datetime(daily.index).tz_localize(None).normalize())
        part.insert(0, "utility", utility_words(meter.utility))
        part.insert(0, "meter", shown_name(labels, meter.name))
        parts.append(part.reset_index(drop=True))
    return pd.concat(parts, ignore_index=True) if parts else pd.DataFrame()


def quality_frame(
    meters: Sequence[str], quality: Mapping[str, Mapping[str, Any]], steps: Sequence[dict]
) -> pd.DataFrame:
    """The data-quality summary of each meter with the number of cleaning steps applied."""
    names = _ordered(meters, quality)
    counts = pd.Series([str(s.get("meter")) for s in steps], dtype=object).value_counts()
    rows = [
        {QUALITY_LABELS.get(k, k.replace("_", " ")): v for k, v in quality.get(n, {}).items()}
        | {STEPS_COUNT: int(counts.get(n, 0))}
        for n in names
    ]
    return pd.DataFrame(rows, index=pd.Index(names, name="meter"))


def quality_formats(quality: Mapping[str, Mapping[str, Any]]) -> dict[str, str]:
    """Number formats of the quality headers, decided on the summary keys."""
    keys = {key: None for summary in quality.values() for key in summary}
    formats = {QUALITY_LABELS.get(k, k.replace("_", " ")): _key_format(k) for k in keys}
    return formats | {STEPS_COUNT: COUNT_FORMAT}


def _key_format(key: str) -> str:
    lowered = key.lower()
    if "share" in lowered or "coverage" in lowered:
        return SHARE_FORMAT
    if "intervals" in lowered:
        return COUNT_FORMAT
    return ENERGY_FORMAT


def scores_frame(
    run: BudgetRun, scorecards: Mapping[str, Mapping[str, Any]]
) -> tuple[pd.DataFrame, dict[str, str]]:
    """Each meter's model and backtest scores, with a number format per score.

    ``scorecards`` wins over a meter's own ``scores``; meters without either still get a row.
    """
    cards = {m.name: dict(m.scores) for m in run.meters if m.scores} | {
        name: dict(card) for name, card in scorecards.items()
    }
    models = {m.name: m.model for m in run.meters}
    names = _ordered(list(models), cards)
    frame = pd.DataFrame(
        [_score_row(models.get(n), cards.get(n, {})) for n in names],
        index=pd.Index(names, name="meter"),
    )
    formats = {name: _score_format(name, frame[name]) for name in frame.columns[1:]}
    return frame, {k: v for k, v in formats.items() if v}


def _score_row(model: str | None, card: Mapping[str, Any]) -> dict[str, Any]:
    """The model's name (a card's own "name" wins over the run's label; its "model" key is
    the family's code, not for readers), then the scores with yes/no for true/false (a
    spreadsheet may print them as 1 and 0)."""
    row = {"model": card.get("name", model)}
    for key, value in card.items():
        if key not in ("model", "name"):
            row[key] = in_words(value) if isinstance(value, bool) else value
    return row


def _score_format(name: str, values: pd.Series) -> str | None:
    numbers = [v for v in values if isinstance(v, int | float) and not isinstance(v, bool)]
    if not numbers:
        return None
    if "coverage" in name.lower() and all(0 <= v <= 1 for v in numbers):
        return SHARE_FORMAT  # a fraction of months or intervals
    if "%" in name:
        return PERCENT_POINTS_FORMAT  # already in percent
    if "kwh" in name.lower() or all(isinstance(v, int) for v in numbers):
        return COUNT_FORMAT
    return RATIO_FORMAT


def steps_frame(steps: Sequence[dict]) -> pd.DataFrame:
    """The cleaning steps applied, in the order given: what each did, in words, with its note."""
    rows = [
        {
            "meter": step.get("meter"),
            "step": step.get("id"),
            "what was done": _step_words(step),
            "note": step.get("note") or "",
            "added (UTC)": in_words(step.get("created_at")),
        }
        for step in steps
    ]
    return pd.DataFrame(rows, columns=STEP_HEADERS)


def _step_words(step: Mapping[str, Any]) -> str:
    kind = str(step.get("kind"))
    what = STEP_KINDS.get(kind, kind.replace("_", " "))
    settings = step.get("params") or {}
    return f"{what[:1].upper()}{what[1:]}" + (f": {in_words(settings)}" if settings else "")


def in_words(value: Any) -> str:
    """A setting or assumption as a reader would write it: never JSON.

    Mappings become "key: value; key: value", long lists their count with the first and last
    items, times stamped in ISO form a plain "yyyy-mm-dd hh:mm" in UTC, yes/no for booleans.
    """
    if value is None:
        return "none"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.4g}"
    if isinstance(value, str):
        return _stamp_words(value) if ISO_STAMP.match(value) else value
    if isinstance(value, Mapping):
        return "; ".join(f"{_label(key)}: {in_words(item)}" for key, item in value.items())
    if isinstance(value, Sequence):
        items = [in_words(item) for item in value]
        if len(items) > LIST_SHOWN:
            return f"{len(items)} ({items[0]}, {items[1]}, … {items[-1]})"
        return ", ".join(items) or "none"
    return str(value)


def _stamp_words(text: str) -> str:
    try:
        stamp = pd.Timestamp(text)
    except ValueError:
        return text
    if stamp.tzinfo is not None:
        return stamp.tz_convert("UTC").strftime("%Y-%m-%d %H:%M UTC")
    return stamp.strftime("%Y-%m-%d %H:%M")


def _label(key: object) -> str:
    return ASSUMPTION_LABELS.get(str(key), str(key).replace("_", " "))


def run_facts(run: BudgetRun) -> list[tuple[str, str]]:
    """What the whole budget assumes, as (label, words) rows; per-meter items are left out.

    An assumption given per meter (a mapping keyed by the run's meter names) belongs to
    :func:`meter_facts`; other mappings give one row per key; a row whose words repeat an
    earlier row's is dropped (the run states its as-of date and weather twice).
    """
    rows = [
        ("budget months", f"{run.months[0]} to {run.months[-1]} ({len(run.months)} months)"),
        ("as of (later data ignored)", run.as_of),
        ("weather assumption", run.weather),
        ("tariff", run.tariff or "none: energy only, no cost"),
        ("currency", run.currency or "none"),
        ("levels", ", ".join(f"P{level}" for level in run.levels)),
        ("simulated paths", f"{run.paths:,}"),
    ]
    meters = {m.name for m in run.meters}
    for key, value in run.assumptions.items():
        if _per_meter(value, meters):
            continue
        if isinstance(value, Mapping):
            rows += [(f"{_label(key)} ({_label(k)})", in_words(v)) for k, v in value.items()]
        else:
            rows.append((_label(key), in_words(value)))
    first = {words: index for index, (_, words) in reversed(list(enumerate(rows)))}
    return [row for index, row in enumerate(rows) if first[row[1]] == index]


def meter_facts(
    run: BudgetRun, data_range: Mapping[str, tuple[str, str]], labels: Labels | None = None
) -> list[tuple[str, str, str]]:
    """One (meter, fact, words) row per meter (by display name) and fact: model, its settings,
    data, range, cost.

    The facts: utility, model and its settings, the readings used, every per-meter assumption
    of the run, how the range held in backtests, what prices the cost, and the run's cautions
    that name the meter.
    """
    meters = {m.name for m in run.meters}
    per_meter = {key: value for key, value in run.assumptions.items() if _per_meter(value, meters)}
    bill_prices = run.assumptions.get("prices from bills") or {}
    rows = []
    for meter in run.meters:
        facts = [("utility", utility_words(meter.utility)), ("model", meter.model)]
        facts += _account_facts(meter)
        facts += [
            (_label(key), in_words(value[meter.name]))
            for key, value in per_meter.items()
            if meter.name in value and in_words(value[meter.name]) != meter.model
        ]
        if meter.name in data_range:
            first, last = data_range[meter.name]
            used = "bills used" if meter.source == "bills" else "readings used"
            facts.append((used, f"{first} to {last}"))
        check = run.calibration.get(meter.name)
        if check is not None:
            words = check.sentence()  # says how the range was corrected, if it was
            facts.append(("range in backtests", words[:1].upper() + words[1:]))
            if check.scale == 1.0:
                facts.append(("range correction", check.method))
        facts.append(("priced by", _pricing(run, meter, bill_prices)))
        named = {meter.name, shown_name(labels, meter.name)}
        facts += [("caution", c) for c in run.cautions if any(n in c for n in named)]
        if labels and meter.name in labels and labels[meter.name].display_name:
            facts.insert(0, ("column in the meter file", meter.name))
        rows += [(shown_name(labels, meter.name), fact, words) for fact, words in facts]
    return rows


def _per_meter(value: Any, meters: set[str]) -> bool:
    return isinstance(value, Mapping) and bool(value) and set(map(str, value)) <= meters


def _account_facts(meter: MeterBudget) -> list[tuple[str, str]]:
    """Where a bill account's figures come from, and whether the totals count it."""
    if meter.source != "bills":
        return []
    facts = [("source", "bills: an account known only through its billing periods")]
    if meter.metered_by:
        facts.append(
            (
                "counted in totals",
                f"no: measured by {', '.join(meter.metered_by)}, which count instead",
            )
        )
    return facts


def _pricing(run: BudgetRun, meter: MeterBudget, bill_prices: Mapping[str, Any]) -> str:
    if meter.total.cost is None:
        return "not priced: energy only"
    accounts = run.assumptions.get("bill accounts") or {}
    if meter.source == "bills" and meter.name in accounts.get("prices", {}):
        return f"its own bills: {accounts['prices'][meter.name]}"
    if meter.name in accounts.get("meters priced by their account", {}):
        return f"its account's bills: {accounts['meters priced by their account'][meter.name]}"
    if meter.utility in bill_prices:
        return f"prices from bills: {in_words(bill_prices[meter.utility])}"
    return f"tariff: {run.tariff}" if run.tariff else "priced"


def _ordered(first: Sequence[str], more: Mapping[str, Any]) -> list[str]:
    """``first`` in order, then keys of ``more`` not already there."""
    return list(dict.fromkeys([*first, *more]))
