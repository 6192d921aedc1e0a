"""Read monthly utility bills: billing-period start and end, quantity, peak demand, cost.

Billing periods rarely match calendar months. Bills print the period either as two meter-read
dates (the next period starts on this period's end date) or as first and last day (the next
starts the day after); which one is decided from consecutive bills and stated.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine import units
from engine.errors import InputError
from engine.meters import Finding
from engine.reading import stamp_cells
from engine.reading import vocabulary as vocab
from engine.reading.columns import ColumnFacts, is_numeric_column, is_stamp_column, to_numbers
from engine.reading.options import ReadOptions
from engine.reading.sheets import ChosenTable, read_table_with
from engine.reading.stamps import WINDOW_NOTE, within_window
from engine.reading.table import Table

CURRENCY = r"[$€£¥]|USD|EUR|GBP|CAD|AUD"


@dataclass
class BillFile:
    """Billing periods with quantity in kWh, as read from one file."""

    path: Path
    account: str
    bills: pd.DataFrame  # period_start, period_end (last day, inclusive), days, quantity_kwh,
    # raw_quantity, unit_found, peak_kw, cost, source_row
    unit: units.Unit
    end_convention: str
    findings: list[Finding] = field(default_factory=list)


def read_bill_file(
    path: str | Path, options: ReadOptions | None = None, chosen: ChosenTable | None = None
) -> BillFile:
    """Read a bill file; :class:`InputError` when a needed column is missing or unreadable."""
    return read_table_with(_read, path, options or ReadOptions(), chosen)


def looks_like_bills(table: Table, facts: list[ColumnFacts]) -> bool:
    """Two date columns naming a period's start and end: a bill file."""
    dates = [f for f in facts if is_stamp_column(f, table.data[f.position])]
    return len(dates) >= 2 and any(f.has(vocab.PERIOD_END_WORDS) for f in dates)


def _read(path: Path, options: ReadOptions, chosen: ChosenTable) -> BillFile:
    table, facts = chosen.table, chosen.facts
    dates = [f for f in facts if is_stamp_column(f, table.data[f.position])]
    start = next((f for f in dates if f.has(vocab.PERIOD_START_WORDS)), dates[0])
    end = next((f for f in dates if f is not start and f.has(vocab.PERIOD_END_WORDS)), None)
    if end is None:
        raise InputError(
            "bills need a period start and a period end column; only one date column was found.",
            hint="Name them e.g. 'Period start' and 'Period end'.",
            sheet=table.sheet,
        )
    numbers = [f for f in facts if f not in dates and is_numeric_column(f)]
    quantity = _quantity_column(numbers, options, table.sheet)
    unit = units.find_unit(quantity.header) or units.find_unit(options.unit or "")
    peak = next((f for f in numbers if f is not quantity and _is_demand(f)), None)
    cost = next(
        (f for f in facts if f not in (*dates, quantity, peak) and f.has(vocab.COST_WORDS)), None
    )
    data = table.data
    both = pd.concat([data[start.position], data[end.position]]).rename(
        f"{start.header}' and '{end.header}"
    )
    try:
        parsed = stamp_cells.parse_stamps(both, dayfirst=options.dayfirst)
    except InputError as error:
        position = error.place.row
        n = len(data)
        row = None if position is None else int(data.index[position % n])
        column = (start if position is None or position < n else end).header
        raise InputError(
            error.problem, hint=error.hint, sheet=table.sheet, row=row, column=column
        ) from error
    stamps, bad = within_window(pd.DatetimeIndex(parsed.values), parsed.bad_rows)
    n = len(data)
    good = np.ones(2 * n, dtype=bool)
    good[bad] = False
    good = good[:n] & good[n:]
    frame = pd.DataFrame(
        {
            "period_start": stamps[:n][good].normalize(),
            "period_end": stamps[n:][good].normalize(),
            "raw_quantity": to_numbers(data[quantity.position], table.decimal_comma)[good],
            "peak_kw": _optional(data, peak, table)[good],
            "cost": _money(data, cost)[good],
            "source_row": data.index[good].astype("int64"),
        }
    ).sort_values("period_start", kind="stable")
    findings = _bad_rows(data.index[~good], start.header)
    convention, frame = _normalise_ends(frame)
    frame["days"] = (frame["period_end"] - frame["period_start"]).dt.days + 1
    frame["quantity_kwh"] = units.to_kwh(frame["raw_quantity"], unit)
    frame["unit_found"] = unit.name
    findings += _period_checks(frame)
    frame = frame.reset_index(drop=True)
    return BillFile(path, path.stem, frame, unit, convention, findings)


def _quantity_column(
    numbers: list[ColumnFacts], options: ReadOptions, sheet: str | None
) -> ColumnFacts:
    for f in numbers:
        unit = units.find_unit(f.header)
        if unit is not None and unit.kind in ("energy", "gas_volume", "steam_mass"):
            return f
    if options.unit and numbers:
        return numbers[0]
    raise InputError(
        "no quantity column with an energy unit was found (e.g. 'Billed kWh' or 'Therms').",
        hint="Put the unit in the header or give it with --unit.",
        sheet=sheet,
    )


def _is_demand(facts: ColumnFacts) -> bool:
    unit = units.find_unit(facts.header)
    return (unit is not None and unit.kind == "power") or facts.has(vocab.DEMAND_WORDS)


def _optional(data: pd.DataFrame, facts: ColumnFacts | None, table: Table) -> np.ndarray:
    if facts is None:
        return np.full(len(data), np.nan)
    return to_numbers(data[facts.position], table.decimal_comma)


def _money(data: pd.DataFrame, facts: ColumnFacts | None) -> np.ndarray:
    if facts is None:
        return np.full(len(data), np.nan)
    text = data[facts.position].astype(str).str.replace(CURRENCY, "", regex=True)
    return to_numbers(text.where(data[facts.position].notna(), None), decimal_comma=False)


def _normalise_ends(frame: pd.DataFrame) -> tuple[str, pd.DataFrame]:
    """Make ``period_end`` the last day of the period, from how consecutive bills meet."""
    gaps = frame["period_start"].iloc[1:].to_numpy() - frame["period_end"].iloc[:-1].to_numpy()
    days = pd.to_timedelta(gaps).days
    if len(days) and np.mean(days == 0) > 0.5:
        frame = frame.assign(period_end=frame["period_end"] - pd.Timedelta(days=1))
        return "read dates (each period ends the day before the next read date)", frame
    return "first and last day of each period", frame


def _bad_rows(rows: pd.Index, column: str) -> list[Finding]:
    if not len(rows):
        return []
    shown = ", ".join(str(int(r)) for r in rows[:10])
    return [
        Finding(
            kind="unparsed_rows",
            count=len(rows),
            rows=tuple(int(r) for r in rows[:50]),
            message=f"{len(rows)} bill row(s) have an unreadable period date ({WINDOW_NOTE}; "
            f"column '{column}') and were left out: rows {shown}.",
        )
    ]


def _period_checks(frame: pd.DataFrame) -> list[Finding]:
    findings = []
    nxt = frame["period_start"].shift(-1)
    overlap = (nxt <= frame["period_end"]).sum()
    hole = (nxt > frame["period_end"] + pd.Timedelta(days=1)).sum()
    if overlap:
        findings.append(
            Finding(
                kind="bill_overlap",
                count=int(overlap),
                message=f"{overlap} billing period(s) overlap the next one.",
            )
        )
    if hole:
        findings.append(
            Finding(
                kind="bill_gap",
                count=int(hole),
                message=f"{hole} gap(s) between consecutive billing periods.",
            )
        )
    backwards = (frame["days"] <= 0).sum()
    if backwards:
        findings.append(
            Finding(
                kind="bill_backwards",
                count=int(backwards),
                message=f"{backwards} bill(s) end before they start.",
            )
        )
    return findings
