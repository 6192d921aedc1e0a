"""The finance workbook's chart: monthly quantiles of the campus (or largest utility) budget.

A native line chart, one series per level, drawn from the cells of the "Monthly" sheet so the
chart and the table can never disagree; the middle level is a solid line and the outer levels
dashed, so the range reads as a band around the middle.
"""

from __future__ import annotations

import math

from openpyxl.chart import LineChart, Reference, Series
from openpyxl.worksheet.worksheet import Worksheet

from engine.export.finance_tables import ENERGY_FORMAT, Block, FigureColumns

MONTH_FORMAT = "mmm yyyy"
MIDDLE_LINE_WIDTH = 28575  # EMU, 2.25 pt
OUTER_LINE_WIDTH = 15875  # EMU, 1.25 pt


def chart_block(blocks: list[Block]) -> Block:
    """The campus block, else the utility with the largest mean, else the largest meter."""
    for scope in ("campus", "utility", "meter"):
        found = [b for b in blocks if b.item.scope == scope]
        if found:
            return max(found, key=lambda b: b.item.total.energy.mean)
    raise ValueError("a budget run without meters has nothing to chart")


def range_chart(
    monthly: Worksheet, header_row: int, block: Block, columns: FigureColumns
) -> LineChart:
    """A line chart of ``block``'s monthly quantiles, read from the sheet ``monthly``."""
    headers = [cell.value for cell in monthly[header_row]]
    first = header_row + 1 + block.first
    last = first + block.count - 1
    levels = columns.levels
    low, middle, high = levels[0], levels[len(levels) // 2], levels[-1]
    chart = LineChart()
    chart.title = f"{block.item.shown_name}: monthly P{middle} with P{low}–P{high} range"
    chart.y_axis.title = f"energy ({columns.unit})"
    chart.y_axis.number_format = ENERGY_FORMAT
    chart.y_axis.scaling.min = axis_floor(
        min(m.energy.quantiles[str(low)] for m in block.item.months)
    )
    chart.x_axis.number_format = MONTH_FORMAT
    chart.x_axis.delete = False  # newer Excel hides axes that are not marked as shown
    chart.y_axis.delete = False
    chart.width, chart.height = 22, 10
    for level in levels:
        column = headers.index(columns.level_header(level)) + 1
        values = Reference(monthly, min_col=column, min_row=first, max_row=last)
        series = Series(values, title=f"P{level}")
        series.smooth = False
        line = series.graphicalProperties.line
        line.width = MIDDLE_LINE_WIDTH if level == middle else OUTER_LINE_WIDTH
        if level != middle:
            line.dashStyle = "dash"
        chart.series.append(series)
    month_column = headers.index("month") + 1
    chart.set_categories(Reference(monthly, min_col=month_column, min_row=first, max_row=last))
    return chart


def axis_floor(lowest: float) -> float:
    """A round value below 90 % of ``lowest`` (0 when not positive): where the y axis starts.

    A line chart of monthly totals starting at zero squeezes the range into a thin band.
    """
    if not math.isfinite(lowest) or lowest <= 0:
        return 0.0
    step = 10 ** math.floor(math.log10(0.9 * lowest)) / 2
    return math.floor(0.9 * lowest / step) * step
