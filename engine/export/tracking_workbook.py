"""The tracking workbook: an adopted budget against the actuals, month by month.

Sheet "Tracking": a block per meter, utility and the campus — a table of the months (the
budget's range as adopted, the actual, the variance and its weather, usage and price
effects, whether the actual fell outside the range) and the year-end outlook beside the
adopted total. A native line chart of the campus (else the first block) draws the actual
against the adopted range from the table's own cells. Sheet "Notes": the identity the parts
obey, what each figure means, and the cautions (a forecast is not a design load).
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
from openpyxl import Workbook
from openpyxl.chart import LineChart, Reference, Series
from openpyxl.worksheet.worksheet import Worksheet

from engine.export.finance_chart import MIDDLE_LINE_WIDTH, OUTER_LINE_WIDTH, axis_floor
from engine.export.finance_layout import (
    facts,
    money_format,
    paragraph,
    print_on_page_width,
    section,
    table,
    title,
)
from engine.export.saving import save_workbook

ENERGY_FORMAT = "#,##0"
SHEETS = ("Tracking", "Notes")
NOTES_WIDTH = 8  # columns the notes' paragraphs wrap across


def month_frame(group: dict, levels: list[str], currency: str | None) -> pd.DataFrame:
    """One row per budget month of a meter or roll-up: budget, actual and the split."""
    rows = []
    for month in group["months"]:
        row = {"month": month["month"], "status": month["status"]}
        row |= {f"budget P{level} (kWh)": month["budget"]["quantiles"][level] for level in levels}
        row |= {
            "budget to date (kWh)": month["budget_to_date"],
            "actual (kWh)": month["actual"],
            "variance (kWh)": month["variance_kwh"],
            "weather effect (kWh)": month["weather_kwh"],
            "usage effect (kWh)": month["usage_kwh"],
            f"outside P{levels[0]}–P{levels[-1]}": _yes_no(month["outside_range"]),
        }
        if "budget_cost" in month:
            money = f" ({currency})" if currency else ""
            row |= {
                f"cost: budget P50{money}": month["budget_cost"]["quantiles"]["50"],
                f"cost: actual{money}": month["actual_cost"],
                f"cost: variance{money}": month["variance_cost"],
                f"cost: weather effect{money}": month["weather_cost"],
                f"cost: usage effect{money}": month["usage_cost"],
                f"cost: price effect{money}": month["price_cost"],
            }
        rows.append(row)
    return pd.DataFrame(rows)


def _yes_no(flag: bool | None) -> str | None:
    return None if flag is None else ("outside" if flag else "inside")


def _block(sheet: Worksheet, row: int, group: dict, report: dict) -> tuple[int, int, int]:
    """Write one meter's or roll-up's block at ``row``; returns (next row, header row, rows)."""
    levels = [str(level) for level in report["levels"]]
    label = group.get("display_name") or group.get("name") or group.get("group")
    kind = group.get("utility") or "roll-up of " + ", ".join(group.get("meters", []))
    row = section(sheet, row, f"{label} ({kind})")
    frame = month_frame(group, levels, report.get("currency"))
    money = money_format(report.get("currency"))
    formats = {
        column: money if column.startswith("cost:") else ENERGY_FORMAT
        for column in frame.columns[2:]
        if not column.startswith("outside")
    }
    header = row
    last_row, _ = table(sheet, frame, first_row=row, index=False, formats=formats)
    row = facts(sheet, last_row + 1, _outlook_facts(group, levels))
    return row + 1, header, len(frame)


def _outlook_facts(group: dict, levels: list[str]) -> list[tuple]:
    adopted = group["adopted_total"]["quantiles"]
    outlook = group.get("outlook")
    items: list[tuple] = [
        (f"adopted total P{level} (kWh)", adopted[level], ENERGY_FORMAT) for level in levels
    ]
    if outlook:
        items.insert(0, ("actual to date (kWh)", outlook["actual_to_date"], ENERGY_FORMAT))
        items += [
            (f"year-end outlook P{level} (kWh)", outlook["quantiles"][level], ENERGY_FORMAT)
            for level in levels
        ]
    else:
        items.append(("year-end outlook", "not made"))
    return items


def _chart(sheet: Worksheet, header: int, count: int, group: dict, levels: list[str]):
    """Actual against the adopted range, drawn from the block's table cells."""
    headers = [cell.value for cell in sheet[header]]
    chart = LineChart()
    label = group.get("display_name") or group.get("name") or group.get("group")
    chart.title = f"{label}: actual against the adopted P{levels[0]}–P{levels[-1]} range"
    chart.y_axis.title = "energy (kWh)"
    chart.y_axis.number_format = ENERGY_FORMAT
    lows = [month["budget"]["quantiles"][levels[0]] for month in group["months"]]
    actuals = [m["actual"] for m in group["months"] if m["actual"] is not None and m["complete"]]
    chart.y_axis.scaling.min = axis_floor(min([*lows, *actuals]))
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.width, chart.height = 22, 10
    names = [(f"budget P{level} (kWh)", f"P{level}") for level in levels]
    for column_name, shown in [*names, ("actual (kWh)", "actual")]:
        column = headers.index(column_name) + 1
        values = Reference(sheet, min_col=column, min_row=header + 1, max_row=header + count)
        series = Series(values, title=shown)
        series.smooth = False
        line = series.graphicalProperties.line
        middle = shown in (f"P{levels[len(levels) // 2]}", "actual")
        line.width = MIDDLE_LINE_WIDTH if middle else OUTER_LINE_WIDTH
        if shown != "actual" and not middle:
            line.dashStyle = "dash"
        chart.series.append(series)
    month_column = headers.index("month") + 1
    categories = Reference(sheet, min_col=month_column, min_row=header + 1, max_row=header + count)
    chart.set_categories(categories)
    return chart


def write_tracking_workbook(path: str | Path, report: dict) -> Path:
    """Write the tracking report (:func:`engine.tracking.track_budget`) to ``path`` whole or
    not at all; returns the path."""
    book = Workbook()
    sheet = book.active
    sheet.title = SHEETS[0]
    row = title(sheet, 1, f"Budget '{report['budget']}' tracked as of {report['as_of']}")
    row = facts(
        sheet,
        row + 1,
        [
            ("adopted", f"{report['adopted_at']} (as of {report['adopted_as_of']})"),
            ("months", f"{report['months'][0]} .. {report['months'][-1]}"),
            ("identity", report["identity"]),
        ],
    )
    groups = [*([report["campus"]] if report.get("campus") else []), *report["utilities"]]
    groups += report["meters"]
    chart_at = None
    levels = [str(level) for level in report["levels"]]
    for group in groups:
        start = row + 1
        row, header, count = _block(sheet, start, group, report)
        if chart_at is None:
            chart_at = (header, count, group)
    header, count, group = chart_at
    chart = _chart(sheet, header, count, group, levels)
    sheet.add_chart(chart, f"A{row + 2}")
    print_on_page_width(sheet)
    _notes(book.create_sheet(SHEETS[1]), report)
    return save_workbook(book, path, "tracking workbook")


def _notes(sheet: Worksheet, report: dict) -> None:
    texts = [
        ("The parts add up", [report["identity"]]),
        ("What each figure is", [f"{k}: {v}" for k, v in report["assumptions"].items()]),
        ("Before you use these numbers", report["cautions"]),
    ]
    row = title(sheet, 1, "How to read the tracking")
    for heading, paragraphs in texts:
        row = section(sheet, row + 1, heading)
        for text in paragraphs:
            paragraph(sheet, row, text, last_column=NOTES_WIDTH)
            row += 1
