"""Write tables into openpyxl sheets the way a reader expects a workbook to look.

Numbers stay numbers with number formats, the header row is frozen and bold, columns are sized
to their content, and any text that a spreadsheet could take for a formula (starting with
``=``, ``+``, ``-`` or ``@``) is written as plain text.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
HEADER_FILL = PatternFill("solid", start_color="DCE6E0")
HEADER_FONT = Font(name="Calibri", bold=True)
NUMBER_FORMAT = "#,##0.0"
SHARE_FORMAT = "0.0%"
DATE_FORMAT = "yyyy-mm-dd"
DATETIME_FORMAT = "yyyy-mm-dd hh:mm"
MAX_WIDTH = 60


def put(sheet: Worksheet, row: int, column: int, value: object):
    """Set one cell; text that looks like a formula is stored as literal text, unchanged.

    openpyxl would store ``"=..."`` as a formula; such text is forced to the string type and
    marked with the quote prefix (what typing a leading apostrophe does), so the user's text is
    kept exactly and never runs.
    """
    value = cell_value(value)
    cell = sheet.cell(row=row, column=column, value=value)
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        cell.data_type = "s"
        cell.quotePrefix = True
    return cell


def cell_value(value: object) -> object:
    """A plain Python value for openpyxl: numbers, dates or text; None for missing."""
    if value is None or value is pd.NaT:
        return None
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, pd.Timestamp):
        value = value.to_pydatetime()
    if isinstance(value, dt.datetime) and value.tzinfo is not None:
        value = value.replace(tzinfo=None)
    return value


def write_table(
    sheet: Worksheet,
    frame: pd.DataFrame,
    *,
    first_row: int = 1,
    index: bool = True,
    formats: dict[str, str] | None = None,
) -> tuple[int, int]:
    """Write ``frame`` with a styled header at ``first_row``; return (last row, last column)."""
    table = frame.reset_index() if index else frame
    headers = [str(c) for c in table.columns]
    for col, header in enumerate(headers, start=1):
        cell = put(sheet, first_row, col, header)
        cell.font, cell.fill = HEADER_FONT, HEADER_FILL
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    formats = formats or {}
    for col, header in enumerate(headers, start=1):
        number_format = formats.get(header) or _default_format(table.iloc[:, col - 1])
        for offset, value in enumerate(table.iloc[:, col - 1].tolist(), start=1):
            cell = put(sheet, first_row + offset, col, value)
            if number_format:
                cell.number_format = number_format
    sheet.freeze_panes = sheet.cell(row=first_row + 1, column=1)
    _size_columns(sheet, table, headers)
    return first_row + len(table), len(headers)


def _default_format(column: pd.Series) -> str | None:
    if pd.api.types.is_datetime64_any_dtype(column):
        times = pd.DatetimeIndex(column)
        return (
            DATE_FORMAT
            if (times.dropna() == times.dropna().normalize()).all()
            else (DATETIME_FORMAT)
        )
    if pd.api.types.is_float_dtype(column):
        return NUMBER_FORMAT
    return None


def _size_columns(sheet: Worksheet, table: pd.DataFrame, headers: list[str]) -> None:
    for col, header in enumerate(headers, start=1):
        sample = table.iloc[:200, col - 1].astype(str).str.len()
        width = max(len(header) * 0.9, float(sample.max()) if len(sample) else 0) + 2
        sheet.column_dimensions[get_column_letter(col)].width = min(max(width, 8), MAX_WIDTH)
