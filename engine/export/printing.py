"""Page setup: how each sheet of our workbooks prints on A4 or Letter paper.

Every sheet prints one page wide, in portrait when its printed columns fit a portrait page at a
readable scale and in landscape otherwise, as many pages tall as its rows need; its header
rows repeat on every page; its print area is the part a reader needs on paper; and each page's
header and footer say which project and sheet it is from, which page of how many, and (for a
budget) that the figures are estimates. The paper size is left to the printer, which picks A4
or Letter by its locale.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from openpyxl.utils import coordinate_to_tuple, get_column_letter
from openpyxl.worksheet.page import PageMargins
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

#: The smallest scale a sheet prints at in portrait; a sheet that would print smaller turns
#: to landscape, which holds about 1.4 times the width.
PORTRAIT_SCALE = 0.85
DEFAULT_COLUMN_WIDTH = 8.43  # a column without a width of its own (the spreadsheet default)
MARGINS = dict(left=0.5, right=0.5, top=0.75, bottom=0.75, header=0.3, footer=0.3)  # inches
NOTE_SIZE = 8  # points, the footer's note
LONGEST_NAME = 60  # characters of the project name in the header (Excel allows 255 in all)
#: (width, height) in points of a page that fits both A4 (ISO 216: 8.27 × 11.69 in) and US
#: Letter (8.5 × 11 in) in each orientation: the narrower width and the shorter height.
PAPER = {"portrait": (8.27 * 72, 11.0 * 72), "landscape": (11.0 * 72, 8.27 * 72)}
POINTS_PER_UNIT = 5.25  # a column-width unit: about 7 pixels at 96 per inch (from memory)
ROW_HEIGHT = 15.0  # points, a row without a height of its own (11-point Calibri)
CM_PER_ROW = ROW_HEIGHT / 72 * 2.54  # a chart's height in rows
FILL = 0.97  # share of a page that page breaks plan to fill: the sizes above are estimates


@dataclass(frozen=True)
class PageLabels:
    """What every printed page says besides the sheet's own cells.

    ``project`` heads each page on the left (None: the workbook's file name); ``note`` is the
    footer's sentence, e.g. that budgets are estimates (None: no note).
    """

    project: str | None = None
    note: str | None = None


def set_up_printing(
    sheet: Worksheet,
    labels: PageLabels,
    *,
    title_rows: tuple[int, int] | None,
    last_row: int | None = None,
    last_column: int | None = None,
    blocks: Sequence[int] = (),
) -> None:
    """Print ``sheet`` one page wide from A1 to (``last_row``, ``last_column``).

    ``title_rows`` (first, last) repeat at the top of every page; the last row and column
    default to the sheet's used range and the rows under its charts. ``blocks`` are the
    first rows of blocks that should not be split over two pages (a meter's months, a
    meter's facts): a page break goes before a block that would not fit on what is left of
    the page.
    """
    last_row = last_row or used_rows(sheet)
    last_column = last_column or sheet.max_column
    sheet.print_area = f"A1:{get_column_letter(last_column)}{last_row}"
    if title_rows is not None:
        sheet.print_title_rows = f"{title_rows[0]}:{title_rows[1]}"
    setup = sheet.page_setup
    portrait = _scale(sheet, "portrait", last_column) >= PORTRAIT_SCALE
    setup.orientation = "portrait" if portrait else "landscape"
    setup.fitToWidth = 1
    setup.fitToHeight = 0  # as many pages tall as the rows need, at the scale the width allows
    sheet.sheet_properties.pageSetUpPr.fitToPage = True
    sheet.page_margins = PageMargins(**MARGINS)
    sheet.print_options.gridLines = False
    _header_and_footer(sheet, labels)
    if blocks:
        _keep_blocks_together(sheet, blocks, title_rows, last_row, last_column)


def used_rows(sheet: Worksheet) -> int:
    """The last row with a value or under a chart (charts are not cells: max_row misses them)."""
    bottom = sheet.max_row
    for chart in sheet._charts:  # openpyxl keeps a sheet's charts only here
        anchor = chart.anchor
        top = coordinate_to_tuple(anchor)[0] if isinstance(anchor, str) else anchor._from.row + 1
        bottom = max(bottom, top + math.ceil(chart.height / CM_PER_ROW))
    return bottom


def printed_width(sheet: Worksheet, last_column: int) -> float:
    """The width of columns A to ``last_column`` in column-width units."""
    widths = (
        sheet.column_dimensions[get_column_letter(c)].width
        if get_column_letter(c) in sheet.column_dimensions
        else DEFAULT_COLUMN_WIDTH
        for c in range(1, last_column + 1)
    )
    return sum(width or DEFAULT_COLUMN_WIDTH for width in widths)


def _keep_blocks_together(
    sheet: Worksheet,
    blocks: Sequence[int],
    title_rows: tuple[int, int] | None,
    last_row: int,
    last_column: int,
) -> None:
    """Row breaks before the blocks that would otherwise run over the end of a page."""
    printable_height = PAPER[sheet.page_setup.orientation][1] - (
        (MARGINS["top"] + MARGINS["bottom"]) * 72
    )
    scale = _scale(sheet, sheet.page_setup.orientation, last_column)
    repeated = sum(_height(sheet, r) for r in range(*_span(title_rows))) if title_rows else 0.0
    page = FILL * printable_height / scale - repeated
    starts = sorted(b for b in set(blocks) if 1 < b <= last_row)
    ends = [*(b - 1 for b in starts[1:]), last_row]
    position = sum(_height(sheet, r) for r in range(1, starts[0])) if starts else 0.0
    for start, end in zip(starts, ends, strict=True):
        block = sum(_height(sheet, r) for r in range(start, end + 1))
        filled = _last_filled(sheet, start, end, last_column)
        needed = sum(_height(sheet, r) for r in range(start, filled + 1))  # blank rows may spill
        if position > 0 and position + needed > page >= needed:  # it fits on a page of its own
            sheet.row_breaks.append(Break(id=start - 1))
            position = 0.0
        position += block
        if position > page:  # a block taller than a page ran on by itself
            position %= page


def _last_filled(sheet: Worksheet, first: int, last: int, last_column: int) -> int:
    """The last row from ``first`` to ``last`` with a value in it (``first`` if none)."""
    for row in range(last, first, -1):
        if any(sheet.cell(row, c).value is not None for c in range(1, last_column + 1)):
            return row
    return first


def _scale(sheet: Worksheet, orientation: str, last_column: int) -> float:
    """The scale at which columns A to ``last_column`` fit across a page (at most 1)."""
    printable = PAPER[orientation][0] - (MARGINS["left"] + MARGINS["right"]) * 72
    return min(1.0, printable / (printed_width(sheet, last_column) * POINTS_PER_UNIT))


def _span(rows: tuple[int, int]) -> tuple[int, int]:
    return rows[0], rows[1] + 1


def _height(sheet: Worksheet, row: int) -> float:
    dimension = sheet.row_dimensions.get(row)
    return dimension.height if dimension is not None and dimension.height else ROW_HEIGHT


def _header_and_footer(sheet: Worksheet, labels: PageLabels) -> None:
    """Project left, sheet name centre, "Page x of y" right; the note in the footer."""
    project = labels.project[:LONGEST_NAME].replace("&", "&&") if labels.project else "&F"
    sheet.oddHeader.left.text = project
    sheet.oddHeader.center.text = "&B&A&B"
    sheet.oddHeader.right.text = "Page &P of &N"
    if labels.note:
        sheet.oddFooter.center.text = labels.note.replace("&", "&&")
        sheet.oddFooter.center.size = NOTE_SIZE
