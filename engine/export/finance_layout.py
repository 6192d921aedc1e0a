"""Layout helpers of the finance workbook: tables, titles, fact lists, paragraphs, printing.

They sit on :mod:`engine.export.sheets` (formula-safe cells, styled tables) and add what a
sheet holding several blocks needs: columns that keep the widest width of all its tables,
numeric headers aligned with their numbers, header rows tall enough for wrapped text, and long
sentences wrapped inside the width of the tables rather than running off the page.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

import pandas as pd
from openpyxl.cell import Cell
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from engine.export.sheets import put, write_table

FONT_NAME = "Calibri"
TITLE_FONT = Font(name=FONT_NAME, bold=True, size=14)
SECTION_FONT = Font(name=FONT_NAME, bold=True, size=12)
BOLD = Font(name=FONT_NAME, bold=True)
NOTE_FONT = Font(name=FONT_NAME, italic=True)
LINE_HEIGHT = 15.0  # points per line of 11-point text (common practice)
CHARACTER_WIDTH = 0.9  # column-width units per character of 11-point text (a little generous)
HEADER_CHARACTER_WIDTH = 1.2  # the same for bold headers
HEADER_WIDTH = 26.0  # columns widen to fit headers up to this width; longer headers wrap


def table(
    sheet: Worksheet,
    frame: pd.DataFrame,
    *,
    first_row: int = 1,
    index: bool = True,
    formats: dict[str, str] | None = None,
) -> tuple[int, int]:
    """:func:`write_table`, keeping wider columns of earlier tables and fitting the header.

    Returns (last row, last column) like :func:`write_table`.
    """
    widths = {key: dim.width for key, dim in sheet.column_dimensions.items()}
    last_row, last_column = write_table(
        sheet, frame, first_row=first_row, index=index, formats=formats
    )
    for key, width in widths.items():
        sheet.column_dimensions[key].width = max(sheet.column_dimensions[key].width, width)
    _fit_header(sheet, first_row, last_column)
    return last_row, last_column


def _fit_header(sheet: Worksheet, row: int, last_column: int) -> None:
    """Right-align headers over numbers, widen columns for short headers, fit wrapped ones."""
    lines = 1
    for column in range(1, last_column + 1):
        header = sheet.cell(row, column)
        below = sheet.cell(row + 1, column).value
        if isinstance(below, int | float) and not isinstance(below, bool):
            header.alignment = Alignment(horizontal="right", vertical="top", wrap_text=True)
        text = str(header.value)
        dimension = sheet.column_dimensions[get_column_letter(column)]
        needed = len(text) * HEADER_CHARACTER_WIDTH + 1
        dimension.width = max(dimension.width, min(needed, HEADER_WIDTH))
        lines = max(lines, _lines(text, dimension.width, HEADER_CHARACTER_WIDTH))
    if lines > 1:
        sheet.row_dimensions[row].height = LINE_HEIGHT * lines


def title(sheet: Worksheet, row: int, text: str, font: Font = TITLE_FONT) -> int:
    """A bold title in column A; return the next row."""
    put(sheet, row, 1, text).font = font
    return row + 1


def section(sheet: Worksheet, row: int, text: str) -> int:
    """A section title; return the next row."""
    return title(sheet, row, text, SECTION_FONT)


def facts(
    sheet: Worksheet, row: int, pairs: Iterable[tuple[str, Any] | tuple[str, Any, str]]
) -> int:
    """Label (bold, column A) and value (left-aligned, column B) rows; return the next row.

    A pair may carry a third item, the value's number format.
    """
    for label, value, *number_format in pairs:
        put(sheet, row, 1, label).font = BOLD
        cell = put(sheet, row, 2, value)
        cell.alignment = Alignment(horizontal="left")
        if number_format:
            cell.number_format = number_format[0]
        row += 1
    return row


def paragraph(
    sheet: Worksheet,
    row: int,
    text: str,
    *,
    first_column: int = 1,
    last_column: int,
    font: Font | None = None,
) -> Cell:
    """Wrap ``text`` in the merged cells of ``row`` from ``first_column`` to ``last_column``.

    The row is made tall enough for the wrapped lines, so long sentences stay inside the width
    of the tables above (and of a printed page) instead of running off to the right.
    """
    cell = put(sheet, row, first_column, text)
    cell.alignment = Alignment(wrap_text=True, vertical="top")
    if font is not None:
        cell.font = font
    if last_column > first_column:
        sheet.merge_cells(
            start_row=row, start_column=first_column, end_row=row, end_column=last_column
        )
    lines = _lines(text, _width(sheet, first_column, last_column))
    sheet.row_dimensions[row].height = LINE_HEIGHT * lines
    return cell


def _width(sheet: Worksheet, first_column: int, last_column: int) -> float:
    return sum(
        sheet.column_dimensions[get_column_letter(c)].width
        for c in range(first_column, last_column + 1)
    )


def _lines(text: str, width: float, character_width: float = CHARACTER_WIDTH) -> int:
    return max(1, math.ceil(len(text) * character_width / max(width - 1.0, 1.0)))


def print_on_page_width(sheet: Worksheet) -> None:
    """Landscape pages as wide as the sheet, a frozen header repeated on every page."""
    sheet.page_setup.orientation = "landscape"
    sheet.page_setup.fitToWidth = 1
    sheet.page_setup.fitToHeight = 0
    sheet.sheet_properties.pageSetUpPr.fitToPage = True
    if sheet.freeze_panes:
        header_row = sheet[sheet.freeze_panes].row - 1
        sheet.print_title_rows = f"{header_row}:{header_row}"


def money_format(currency: str | None) -> str:
    """Whole currency units with the ISO code in front, e.g. ``"USD "#,##0``."""
    code = (currency or "").replace('"', "").replace("\\", "").strip()
    return f'"{code} "#,##0' if code else "#,##0"
