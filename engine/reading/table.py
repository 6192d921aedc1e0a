"""Find the table inside a grid: the header row below any title rows, and the data rows.

Exports put titles, export dates and blank lines above the header; some have no header at all.
The header is the last mostly-text row directly above the first run of rows that carry numbers.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine import units
from engine.errors import InputError
from engine.reading.grid import BLANK_HEADER, Grid

SCAN_ROWS = 60
#: Each column is described one by one; a thousand meters in one file is already far more than
#: an export holds, and wider tables are stray cells or a wrong delimiter.
MAX_TABLE_COLUMNS = 1_000
NUMBER_RE = re.compile(r"^[-+]?(\d{1,3}([ ,.\u00a0']\d{3})+|\d+)([.,]\d+)?([eE][-+]?\d+)?$")
DATE_RE = re.compile(
    r"^\s*(\d{4}[-/.]\d{1,2}[-/.]\d{1,2}|\d{1,2}[-/.]\d{1,2}[-/.]\d{2,4})"
    r"([ T]+\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?\s*([AaPp][Mm])?)?"
    r"\s*(Z|[+-]\d{2}:?\d{2}|UTC)?\s*$"
)
CLOCK_RE = re.compile(r"^\s*\d{1,2}:\d{2}(:\d{2})?\s*([AaPp][Mm])?\s*$")


@dataclass
class Table:
    """The data block of a grid with its header texts and the file's row number of each row."""

    sheet: str | None
    headers: list[str]
    data: pd.DataFrame  # columns 0..n-1 as in headers; index = 1-based row number in the file
    header_row: int | None  # 1-based row number of the header in the file, None if absent
    decimal_comma: bool


def cell_kind(value: object) -> str:
    """'empty', 'number', 'datetime', 'date', 'clock' or 'text' for one raw cell."""
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return "empty"
    if isinstance(value, bool):
        return "text"
    if isinstance(value, int | float | np.number):
        return "number"
    if isinstance(value, dt.datetime | pd.Timestamp):
        return "datetime"
    if isinstance(value, dt.date):
        return "date"
    if isinstance(value, dt.time):
        return "clock"
    text = str(value).strip()
    if NUMBER_RE.match(text):
        return "number"
    match = DATE_RE.match(text)
    if match:
        return "datetime" if match.group(2) else "date"
    if CLOCK_RE.match(text):
        return "clock"
    return "text"


def locate_table(grid: Grid) -> Table | None:
    """The header and data rows of ``grid``; ``None`` when the grid holds no numeric rows."""
    cells = grid.cells
    if cells.empty:
        return None
    kinds = _head_kinds(cells.head(SCAN_ROWS))
    filled = (kinds != "empty").sum(axis=1)
    typed = kinds.isin(("number", "datetime", "date", "clock")).sum(axis=1)
    is_data = (filled >= 2) & (typed >= 1) & (typed * 2 >= filled)
    first = _first_data_run(is_data.to_numpy())
    if first is None:
        return None
    header_pos = _header_above(kinds, first)
    width = int((kinds.iloc[first:] != "empty").sum(axis=0).gt(0).to_numpy().nonzero()[0].max()) + 1
    if header_pos is not None:
        width = max(width, int(np.flatnonzero((kinds.iloc[header_pos] != "empty").to_numpy())
                               .max()) + 1)  # fmt: skip
    if width > MAX_TABLE_COLUMNS:
        raise InputError(
            f"the table is {width:,} columns wide; the tool reads at most {MAX_TABLE_COLUMNS:,}.",
            hint="Split it into files of fewer meters, or delete stray cells far to the right.",
            sheet=grid.sheet,
        )
    data = grid.block(first, width)
    data = data[data.notna().any(axis=1)]
    data.index = data.index + 1
    data.columns = range(width)
    names_above = _names_above_unit_row(cells, kinds, header_pos)
    headers = _header_texts(cells.iloc[header_pos, :width] if header_pos is not None else None,
                            width)  # fmt: skip
    if names_above is not None:
        headers = _join_names_and_units(_header_texts(names_above[:width], width), headers)
    return Table(
        sheet=grid.sheet,
        headers=headers,
        data=data,
        header_row=header_pos + 1 if header_pos is not None else None,
        decimal_comma=grid.decimal_comma,
    )


def _head_kinds(head: pd.DataFrame) -> pd.DataFrame:
    """The kind of every cell of the first rows; columns empty there are not looked at (a
    far cell further down can make a sheet thousands of columns wide)."""
    used = head.notna().to_numpy().any(axis=0)
    kinds = pd.DataFrame("empty", index=head.index, columns=head.columns, dtype=object)
    if used.any():
        kinds.iloc[:, np.flatnonzero(used)] = head.iloc[:, np.flatnonzero(used)].map(cell_kind)
    return kinds


def _first_data_run(is_data: np.ndarray, run: int = 3) -> int | None:
    """First row that starts ``run`` consecutive data rows (or runs to the end of the scan)."""
    n = len(is_data)
    for i in range(n):
        window = is_data[i : min(i + run, n)]
        if window.all() and len(window) > 0:
            return i
    return None


def _header_above(kinds: pd.DataFrame, first: int) -> int | None:
    """The row directly above the data (skipping blanks) if it is mostly text."""
    for pos in range(first - 1, -1, -1):
        row = kinds.iloc[pos]
        filled = row != "empty"
        if not filled.any():
            continue
        text_share = (row[filled] == "text").mean()
        return pos if text_share >= 0.5 else None
    return None


def _names_above_unit_row(
    cells: pd.DataFrame, kinds: pd.DataFrame, header_pos: int | None
) -> pd.Series | None:
    """The names row when the header row holds only units (a two-row header), else None."""
    if header_pos is None or header_pos == 0:
        return None
    texts = [str(v) for v in cells.iloc[header_pos].tolist() if cell_kind(v) == "text"]
    if len(texts) < 1 or not all(units.find_unit(t) for t in texts):
        return None
    above = kinds.iloc[header_pos - 1]
    if (above == "text").sum() < len(texts):
        return None
    return cells.iloc[header_pos - 1]


def _join_names_and_units(names: list[str], unit_row: list[str]) -> list[str]:
    """'Library' over 'kWh' becomes 'Library (kWh)'; columns with no unit keep their name."""
    joined = []
    for name, unit in zip(names, unit_row, strict=True):
        if units.find_unit(unit) is None:
            joined.append(name)
        elif name.startswith(BLANK_HEADER):
            joined.append(unit)
        else:
            joined.append(f"{name} ({unit})")
    return joined


def _header_texts(row: pd.Series | None, width: int) -> list[str]:
    if row is None:
        return [f"{BLANK_HEADER}{i + 1}" for i in range(width)]
    texts = []
    for i, value in enumerate(row.tolist()):
        text = "" if value is None or (isinstance(value, float) and np.isnan(value)) else str(value)
        texts.append(" ".join(text.split()) or f"{BLANK_HEADER}{i + 1}")
    return texts
