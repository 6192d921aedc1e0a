"""Decide what each column of a table holds: stamps, values, meter names, units, or nothing.

The decision uses the cells first and the header words second, and every decision is written
down in plain words (``reason``) so that ``inspect`` can show what the importer understood.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine import units
from engine.reading import vocabulary as vocab
from engine.reading.table import Table, cell_kind

SAMPLE_ROWS = 400
#: Larger numbers are typing or export errors: a year of the world's electricity is about
#: 3e13 kWh (from memory), and a register read in Wh stays far below this too.
LARGEST_READING = 1e15
EXCEL_SERIAL_RANGE = (20000.0, 80000.0)  # 1954-10-03 .. 2119-01-10
LABEL_REPEAT_SHARE = 0.6  # a label column repeats: at most this share of sampled cells differ


@dataclass
class ColumnFacts:
    """What the cells of one column look like, from a sample of its rows."""

    position: int
    header: str
    shares: dict[str, float]  # share of non-empty cells of each cell kind
    filled: float  # share of sampled rows that are non-empty
    distinct: int  # distinct non-empty values in the sample
    sampled: int  # rows in the sample

    def share(self, *kinds: str) -> float:
        return sum(self.shares.get(kind, 0.0) for kind in kinds)

    def has(self, words: tuple[str, ...]) -> bool:
        return vocab.has_word(self.header, words)


def describe_columns(table: Table) -> list[ColumnFacts]:
    """Facts about every column of ``table`` from an evenly spread sample of its rows."""
    data = table.data
    step = max(len(data) // SAMPLE_ROWS, 1)
    sample = data.iloc[::step]
    facts = []
    for position in data.columns:
        kinds = sample[position].map(cell_kind)
        nonempty = kinds[kinds != "empty"]
        shares = (nonempty.value_counts(normalize=True).to_dict()) if len(nonempty) else {}
        facts.append(
            ColumnFacts(
                position=position,
                header=table.headers[position],
                shares=shares,
                filled=len(nonempty) / max(len(kinds), 1),
                distinct=int(sample[position].dropna().astype(str).nunique()),
                sampled=len(kinds),
            )
        )
    return facts


def is_stamp_column(facts: ColumnFacts, values: pd.Series | None = None) -> bool:
    """Dates or date-times by content, or Excel serial numbers under a time-like header."""
    if facts.share("datetime", "date") >= 0.8:
        return True
    if facts.share("number") >= 0.95 and facts.has(vocab.TIME_WORDS) and values is not None:
        numbers = _numeric(values).dropna()
        low, high = EXCEL_SERIAL_RANGE
        return bool(len(numbers) and numbers.between(low, high).mean() > 0.95)
    return False


def is_clock_column(facts: ColumnFacts) -> bool:
    return facts.share("clock") >= 0.8


def is_numeric_column(facts: ColumnFacts) -> bool:
    return facts.share("number") >= 0.5 and facts.filled > 0


def is_label_column(facts: ColumnFacts, rows: int) -> bool:
    """Text (or id) cells repeating a few names: the meter column of a long layout.

    Numbers count as meter ids only under a meter-like header that names no unit.
    """
    if facts.filled < 0.9 or facts.distinct < 1 or rows < 2:
        return False
    repeats = facts.distinct <= max(1, int(LABEL_REPEAT_SHARE * facts.sampled))
    texty = facts.share("text") >= 0.8
    named_ids = (
        facts.share("number") >= 0.8
        and facts.has(vocab.METER_WORDS)
        and units.find_unit(facts.header) is None
    )
    return repeats and (texty or named_ids)


def to_numbers(cells: pd.Series, decimal_comma: bool) -> np.ndarray:
    """Cells → float64; numbers written as text (also with decimal comma or thousands) too.

    Cells that are not numbers become NaN, and so do numbers beyond :data:`LARGEST_READING`
    (and infinities): no meter, bill or thermometer gives them, and their sums would overflow.
    The caller reports them by row.
    """
    numbers = _numeric(cells)
    retry = numbers.isna() & cells.notna()
    if retry.any():
        text = cells[retry].astype(str).str.strip().str.replace("\u00a0", "").str.replace(" ", "")
        if decimal_comma:
            text = text.str.replace(".", "", regex=False).str.replace(",", ".", regex=False)
        else:
            text = text.str.replace(r"(?<=\d),(?=\d{3}(\D|$))", "", regex=True)
        numbers = numbers.astype("float64")
        numbers[retry] = _numeric(text)
    values = numbers.to_numpy(dtype="float64", na_value=np.nan)
    return np.where(np.abs(values) <= LARGEST_READING, values, np.nan)


def _numeric(cells: pd.Series) -> pd.Series:
    """``pd.to_numeric`` as float64, with integers too long for a float (400 digits) as NaN."""
    try:
        numbers = pd.to_numeric(cells, errors="coerce")
    except OverflowError:  # a Python int beyond a float's range, in an object column
        return cells.map(_float_or_nan).astype("float64")
    if numbers.dtype == object:  # text of such integers came through as Python ints
        return numbers.map(_float_or_nan).astype("float64")
    return numbers.astype("float64")


def _float_or_nan(value: object) -> float:
    if isinstance(value, str) or value is None:
        value = pd.to_numeric(value, errors="coerce") if isinstance(value, str) else None
    try:
        return float(value)
    except (TypeError, ValueError, OverflowError):
        return np.nan
