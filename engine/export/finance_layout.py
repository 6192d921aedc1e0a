"""Layout helpers of the finance workbook: tables, titles, fact lists, paragraphs, printing.

They sit on :mod:`engine.export.sheets` (formula-safe cells, styled tables) and add what a
sheet holding several blocks needs: columns that keep the widest width of all its tables,
numeric headers aligned with their numbers, header rows tall enough for wrapped text, and long
sentences wrapped inside the width of the tables rather than running off the page.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import pandas as pd
from openpyxl.cell import Cell
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from engine.export.printing import PageLabels, set_up_printing
from engine.export.sheets import (
    CHARACTER_WIDTH,
    LINE_HEIGHT,
    fit_header_row,
    put,
    text_lines,
    write_table,
)

FONT_NAME = "Calibri"
TITLE_FONT = Font(name=FONT_NAME, bold=True, size=14)
SECTION_FONT = Font(name=FONT_NAME, bold=True, size=12)
BOLD = Font(name=FONT_NAME, bold=True)
NOTE_FONT = Font(name=FONT_NAME, italic=True)


def table(
    sheet: Worksheet,
    frame: pd.DataFrame,
    *,
    first_row: int = 1,
    index: bool = True,
    formats: dict[str, str] | None = None,
) -> tuple[int, int]:
    """:func:`write_table`, keeping wider columns of earlier tables, headers over numbers right.

    Returns (last row, last column) like :func:`write_table`.
    """
    widths = {key: dim.width for key, dim in sheet.column_dimensions.items()}
    last_row, last_column = write_table(
        sheet, frame, first_row=first_row, index=index, formats=formats
    )
    for key, width in widths.items():
        sheet.column_dimensions[key].width = max(sheet.column_dimensions[key].width, width)
    for column, cells in enumerate(
        sheet.iter_cols(min_row=first_row + 1, max_row=last_row, max_col=last_column), start=1
    ):
        below = next((cell.value for cell in cells if cell.value is not None), None)
        if isinstance(below, int | float) and not isinstance(below, bool):
            header = sheet.cell(first_row, column)
            header.alignment = Alignment(horizontal="right", vertical="top", wrap_text=True)
    fit_header_row(sheet, first_row, last_column)  # again: earlier tables may have widened it
    return last_row, last_column


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
        cell = put(sheet, row, 1, label)
        cell.font, cell.alignment = BOLD, Alignment(vertical="top")
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
    lines = text_lines(text, _width(sheet, first_column, last_column))
    sheet.row_dimensions[row].height = LINE_HEIGHT * lines
    return cell


def labelled(
    sheet: Worksheet,
    row: int,
    label: str,
    text: str,
    *,
    first_column: int = 2,
    last_column: int,
    font: Font | None = BOLD,
) -> int:
    """A label in column A and its text wrapped from ``first_column``; return the next row.

    A label wider than column A (a long meter name) wraps too, and the row is as tall as the
    taller of the two.
    """
    cell = put(sheet, row, 1, label)
    cell.alignment = Alignment(wrap_text=True, vertical="top")
    if font is not None:
        cell.font = font
    paragraph(sheet, row, text, first_column=first_column, last_column=last_column)
    lines = max(
        text_lines(label, _width(sheet, 1, 1), CHARACTER_WIDTH),  # a name: as wide as digits
        text_lines(text, _width(sheet, first_column, last_column)),
    )
    sheet.row_dimensions[row].height = LINE_HEIGHT * lines
    return row + 1


def _width(sheet: Worksheet, first_column: int, last_column: int) -> float:
    return sum(
        sheet.column_dimensions[get_column_letter(c)].width
        for c in range(first_column, last_column + 1)
    )


def print_on_page_width(sheet: Worksheet, labels: PageLabels | None = None) -> None:
    """Print one page wide, the frozen header row (else the first row) on every page, charts
    included (:func:`engine.export.printing.set_up_printing`)."""
    header = frozen_header(sheet)
    set_up_printing(sheet, labels or PageLabels(), title_rows=(header, header))


def frozen_header(sheet: Worksheet) -> int:
    """The row above the frozen panes (a table's header), else 1 (a sheet's title)."""
    return sheet[sheet.freeze_panes].row - 1 if sheet.freeze_panes else 1


def money_format(currency: str | None) -> str:
    """Whole currency units with the ISO code in front, e.g. ``"USD "#,##0``."""
    code = (currency or "").replace('"', "").replace("\\", "").strip()
    return f'"{code} "#,##0' if code else "#,##0"
