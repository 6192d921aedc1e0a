"""Page setup shared by the workbooks: print areas that hold the charts, and page breaks that
keep blocks whole.

Page sizes: A4 is 210 × 297 mm (ISO 216), US Letter 8.5 × 11 in; a row without a height of
its own is 15 points in Excel with 11-point Calibri (common practice); a chart's height is
given in centimetres (2.54 cm an inch, 72 points an inch).
"""

from __future__ import annotations

import itertools
import math

from openpyxl import Workbook
from openpyxl.chart import LineChart, Reference

from engine.export.printing import PageLabels, set_up_printing

LETTER_PORTRAIT_HEIGHT = 11.0 * 72  # points; shorter than A4's 297 mm
MARGINS = 0.75 + 0.75  # inches, top and bottom, as the workbooks set them


def _blocks(sheet, count: int, rows: int) -> list[int]:
    """``count`` blocks of a name row and ``rows`` - 1 figures, a blank row between them."""
    starts = []
    row = 2
    for number in range(count):
        starts.append(row)
        sheet.cell(row, 1, f"meter {number}")
        for offset in range(1, rows):
            sheet.cell(row + offset, 1, "month")
            sheet.cell(row + offset, 2, float(offset))
        row += rows + 1
    return starts


def test_page_breaks_fall_between_blocks_and_pages_hold_what_they_are_given():
    sheet = Workbook().active
    sheet.cell(1, 1, "title")
    starts = _blocks(sheet, count=12, rows=14)
    set_up_printing(sheet, PageLabels(), title_rows=(1, 1), blocks=starts)
    assert sheet.page_setup.orientation == "portrait"  # two narrow columns
    breaks = [b.id for b in sheet.row_breaks.brk]
    assert breaks and all(b + 1 in starts for b in breaks)  # only before a block
    page = LETTER_PORTRAIT_HEIGHT - MARGINS * 72 - 15  # less the repeated title row
    edges = [0, *breaks, sheet.max_row]
    for top, bottom in itertools.pairwise(edges):
        assert (bottom - top) * 15 <= page  # every row 15 points: nothing runs over
    # two blocks (2 × 225 points) always fit in a page: the breaks waste no more than that
    assert len(edges) - 1 <= math.ceil(12 / 2)


def test_a_block_taller_than_a_page_starts_where_it_is():
    """A break before it would only add a page: it cannot be kept whole anyway."""
    sheet = Workbook().active
    sheet.cell(1, 1, "title")
    starts = _blocks(sheet, count=2, rows=60)  # 60 rows of 15 points: more than a page
    set_up_printing(sheet, PageLabels(), title_rows=(1, 1), blocks=starts)
    assert sheet.row_breaks.brk == []


def test_the_print_area_reaches_below_a_chart():
    sheet = Workbook().active
    for row in range(1, 5):
        sheet.cell(row, 1, float(row))
    chart = LineChart()
    chart.add_data(Reference(sheet, min_col=1, min_row=1, max_row=4))
    chart.height = 10  # cm
    sheet.add_chart(chart, "A6")
    set_up_printing(sheet, PageLabels(project="Orrinvale"), title_rows=(1, 1))
    last_row = int(sheet.print_area.rsplit("$", 1)[1])
    assert last_row >= 6 + 10 / 2.54 * 72 / 15  # the chart's top row and its height in rows
    assert sheet.oddHeader.left.text == "Orrinvale"
