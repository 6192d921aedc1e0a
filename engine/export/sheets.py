"""Write tables into openpyxl sheets the way a reader expects a workbook to look.

Numbers stay numbers with number formats, the header row is frozen and bold, columns are sized
to their content, and any text that a spreadsheet could take for a formula (starting with
``=``, ``+``, ``-`` or ``@``) is written as plain text.
"""

from __future__ import annotations

import datetime as dt
import math
import re
import textwrap

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
MAX_WIDTH = 45  # widest column; longer text wraps
HEADER_WIDTH = 14.0  # columns widen to fit headers up to this width; longer headers wrap
LINE_HEIGHT = 15.0  # points per line of 11-point text (common practice)
CHARACTER_WIDTH = 1.0  # column-width units per character of 11-point text (digits are 1.0)
PROSE_WIDTH = 0.85  # the same, on average over a sentence (narrow letters and spaces)
HEADER_CHARACTER_WIDTH = 1.1  # the same for bold headers


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
    column_formats = []
    for col, header in enumerate(headers, start=1):
        number_format = formats.get(header) or _default_format(table.iloc[:, col - 1])
        column_formats.append(number_format)
        for offset, value in enumerate(table.iloc[:, col - 1].tolist(), start=1):
            cell = put(sheet, first_row + offset, col, value)
            if number_format:
                cell.number_format = number_format
    sheet.freeze_panes = sheet.cell(row=first_row + 1, column=1)
    _size_columns(sheet, table, column_formats)
    fit_header_row(sheet, first_row, len(headers))
    wrap_long_text(sheet, first_row + 1, first_row + len(table), len(headers))
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


def _size_columns(sheet: Worksheet, table: pd.DataFrame, formats: list[str | None]) -> None:
    """Each column as wide as its longest shown value (every row, not a sample), within bounds.

    Numbers count as their number format shows them, not as Python prints the float, so a
    column of ``#,##0`` kilowatt-hours is as wide as "12,212,709" and no wider.
    """
    for col, number_format in enumerate(formats, start=1):
        longest = shown_length(table.iloc[:, col - 1], number_format)
        width = longest * CHARACTER_WIDTH + 2
        sheet.column_dimensions[get_column_letter(col)].width = min(max(width, 8), MAX_WIDTH)


def shown_length(column: pd.Series, number_format: str | None) -> int:
    """The number of characters of the longest value of ``column`` as a spreadsheet shows it."""
    values = column.dropna()
    if values.empty:
        return 0
    if pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values):
        ends = [float(values.min()), float(values.max())]  # the longest is at one end
        return max(len(formatted(v, number_format)) for v in ends)
    if pd.api.types.is_datetime64_any_dtype(values):
        return len(number_format or DATETIME_FORMAT)
    return int(values.map(lambda v: _shown_length(v, number_format)).max())


def _shown_length(value: object, number_format: str | None) -> int:
    if isinstance(value, int | float) and not isinstance(value, bool):
        return len(formatted(float(value), number_format))
    if isinstance(value, dt.date):
        return len(number_format or DATE_FORMAT)
    return max(len(line) for line in str(value).split("\n"))


def formatted(value: float, number_format: str | None) -> str:
    """``value`` roughly as ``number_format`` shows it: decimals, separators, %, quoted text."""
    if not number_format or number_format == "General":
        return f"{value:.10g}"
    literal = "".join(re.findall(r'"([^"]*)"', number_format))
    code = re.sub(r'"[^"]*"', "", number_format)
    decimals = len(code.split(".", 1)[1].rstrip("%")) if "." in code else 0
    if "%" in code:
        return f"{value * 100:.{decimals}f}%{literal}"
    grouping = "," if "," in code else ""
    return f"{literal}{value:{grouping}.{decimals}f}"


def fit_header_row(sheet: Worksheet, row: int, last_column: int) -> None:
    """Widen columns for headers up to :data:`HEADER_WIDTH`; make the row tall for the rest.

    A long header over a narrow column of numbers wraps onto two or three lines instead of
    widening the column (and shrinking every printed page).
    """
    lines = 1
    for column in range(1, last_column + 1):
        text = str(sheet.cell(row, column).value)
        dimension = sheet.column_dimensions[get_column_letter(column)]
        needed = len(text) * HEADER_CHARACTER_WIDTH + 1
        dimension.width = max(dimension.width, min(needed, HEADER_WIDTH))
        lines = max(lines, text_lines(text, dimension.width, HEADER_CHARACTER_WIDTH))
    sheet.row_dimensions[row].height = LINE_HEIGHT * lines if lines > 1 else None


def wrap_long_text(sheet: Worksheet, first_row: int, last_row: int, last_column: int) -> None:
    """Wrap text longer than its column (a long meter name or note) and make its row tall.

    Row heights are written because a spreadsheet does not grow rows for wrapped text it did
    not lay out itself.
    """
    widths = [
        sheet.column_dimensions[get_column_letter(c)].width for c in range(1, last_column + 1)
    ]
    for row in sheet.iter_rows(min_row=first_row, max_row=last_row, max_col=last_column):
        lines = [  # counted as wide as digits: names and codes are wider than prose
            text_lines(cell.value, width, CHARACTER_WIDTH) if isinstance(cell.value, str) else 1
            for cell, width in zip(row, widths, strict=True)
        ]
        if max(lines) == 1:
            continue
        for cell, needed in zip(row, lines, strict=True):  # the whole row reads from the top
            horizontal = cell.alignment.horizontal
            cell.alignment = Alignment(horizontal=horizontal, vertical="top", wrap_text=needed > 1)
        sheet.row_dimensions[row[0].row].height = LINE_HEIGHT * max(lines)


def text_lines(text: str, width: float, character_width: float = PROSE_WIDTH) -> int:
    """Lines ``text`` takes when wrapped at word breaks in a column ``width`` units wide.

    An estimate: characters are counted at ``character_width`` units each.
    """
    per_line = max(int((width - 1.0) / character_width), 1)
    if len(text) <= per_line and "\n" not in text:
        return 1
    return sum(max(1, len(textwrap.wrap(line, per_line))) for line in text.split("\n"))
