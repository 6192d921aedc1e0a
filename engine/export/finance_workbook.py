"""The finance workbook: a budget run laid out for the people who pay the bills.

Sheets: "Overview" (period totals, the run's main assumptions, the backtested range check,
cautions and a chart of the monthly range), "Monthly" (a block per campus, utility and meter
with a total row), "Daily", "Assumptions", "Data quality" and "Model scores". Numbers are
stored as numbers with number formats. In each total row the additive columns (actual to date
and means) are live ``=SUM`` formulas over the months, while the quantile columns hold the
period total's own quantiles as values: quantiles of a sum are not the sum of quantiles. All
user text goes through :func:`engine.export.sheets.put`, so a meter name or note that starts
like a formula stays text.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from engine import progress as progress_steps
from engine.budget.result import BudgetRun
from engine.budget.summary import COST_CAUTION as BUDGET_COST_CAUTION
from engine.budget.summary import ESTIMATE_CAUTION as BUDGET_ESTIMATE_CAUTION
from engine.budget.summary import PEAK_CAUTION as BUDGET_PEAK_CAUTION
from engine.errors import InputError
from engine.export.finance_chart import MONTH_FORMAT, chart_block, range_chart
from engine.export.finance_layout import (
    BOLD,
    NOTE_FONT,
    facts,
    money_format,
    paragraph,
    print_on_page_width,
    section,
    table,
    title,
)
from engine.export.finance_tables import (
    ENERGY_FORMAT,
    Block,
    FigureColumns,
    daily_frame,
    figure_columns,
    meters_frame,
    monthly_frame,
    overview_frame,
    quality_formats,
    quality_frame,
    scores_frame,
    steps_frame,
)
from engine.export.saving import save_workbook
from engine.export.sheets import DATE_FORMAT, put
from engine.progress import Progress

SHEETS = ("Overview", "Monthly", "Daily", "Assumptions", "Data quality", "Model scores")
LABEL_WIDTH = 26
TOTAL_NOTE = "P-columns: the period total's own quantiles"

#: Row of the weather assumption among the Overview's facts (it is wrapped after the table).
WEATHER_ROW = 5
ESTIMATE_CAUTION = (
    "These budgets are estimates, not bills: they rest on the assumptions on the sheet "
    "'Assumptions', they come with the P{low}–P{high} range shown, and the check above says how "
    "often such ranges held the actual total in past months."
)
DESIGN_LOAD_CAUTION = (
    "A forecast peak or month total is not a design load: sizing of electrical service, "
    "protection and plant capacity are decisions for a licensed engineer under local codes."
)
TARIFF_CAUTION = (
    "Costs follow the tariff as entered in Loadledger; the utility's bill and the tariff's legal "
    "text prevail."
)


def write_finance_workbook(
    path: str | Path,
    run: BudgetRun,
    *,
    quality: dict[str, dict],
    steps: list[dict],
    scorecards: dict[str, dict],
    data_range: dict[str, tuple[str, str]],
    progress: Progress | None = None,
) -> Path:
    """Write the finance workbook of ``run`` to ``path`` (.xlsx) and return the path.

    Parameters
    ----------
    path
        Where to write; the folder must exist and the name must end in ``.xlsx``.
    run
        The budget run to lay out.
    quality
        Per meter, a data-quality summary as :func:`engine.cleaning.quality.quality_summary`
        returns it.
    steps
        The cleaning steps applied: dicts with ``id``, ``meter``, ``kind``, ``params``,
        ``note`` and ``created_at``.
    scorecards
        Per meter, the chosen model's backtest scores (score name → value); a meter missing
        here falls back to its own ``MeterBudget.scores``.
    data_range
        Per meter, the first and last reading used, as text.
    progress
        Optional progress reporting and cancellation.

    Raises
    ------
    InputError
        When the path cannot be written or the run mixes energy units.
    """
    path = _checked_path(Path(path))
    if not run.meters:
        raise InputError(
            "the budget run has no meters, so there is nothing to export.",
            hint="Run the budget with at least one meter first.",
            file=path,
        )
    columns = figure_columns(run)
    book = Workbook()
    book.remove(book.active)
    sheets = {name: book.create_sheet(name) for name in SHEETS}
    progress_steps.step(progress, 0.05, "Monthly table")
    header_row, blocks = _write_monthly(sheets["Monthly"], run, columns)
    _write_overview(sheets["Overview"], run, columns)
    chart = range_chart(sheets["Monthly"], header_row, chart_block(blocks), columns)
    sheets["Overview"].add_chart(chart, f"A{sheets['Overview'].max_row + 2}")
    progress_steps.step(progress, 0.2, "Daily detail")
    _write_daily(sheets["Daily"], run)
    progress_steps.step(progress, 0.7, "Assumptions, data quality and scores")
    _write_assumptions(sheets["Assumptions"], run, steps, data_range)
    table(
        sheets["Data quality"],
        quality_frame([m.name for m in run.meters], quality, steps),
        formats=quality_formats(quality),
    )
    scores, formats = scores_frame(run, scorecards)
    table(sheets["Model scores"], scores, formats=formats)
    for sheet in sheets.values():
        print_on_page_width(sheet)
    progress_steps.step(progress, 0.85, "Saving the workbook")
    save_workbook(book, path, "finance workbook")
    progress_steps.step(progress, 1.0, "Finance workbook written")
    return path


def _checked_path(path: Path) -> Path:
    if path.suffix.lower() != ".xlsx":
        raise InputError(
            "the finance workbook is written as an Excel .xlsx file.",
            hint="Give a file name ending in .xlsx.",
            file=path,
        )
    if not path.parent.is_dir():
        raise InputError(
            f"the folder {path.parent} does not exist.",
            hint="Create the folder or choose another one.",
            file=path,
        )
    return path


def _figure_formats(columns: FigureColumns) -> dict[str, str]:
    return dict.fromkeys([columns.actual, *columns.energy], ENERGY_FORMAT) | dict.fromkeys(
        columns.cost, money_format(columns.currency)
    )


def _write_monthly(
    sheet: Worksheet, run: BudgetRun, columns: FigureColumns
) -> tuple[int, list[Block]]:
    """Write the monthly blocks; return the header row and where each block sits."""
    low, high = columns.levels[0], columns.levels[-1]
    header_row = 4
    frame, blocks = monthly_frame(run, columns)
    formats = _figure_formats(columns) | {"month": MONTH_FORMAT}
    table(sheet, frame, first_row=header_row, index=False, formats=formats)
    sums = [list(frame.columns).index(name) + 1 for name in columns.additive]
    note_column = len(frame.columns) + 1
    for block in blocks:
        first = header_row + 1 + block.first
        total = header_row + 1 + block.total_row
        for row in range(first, total):
            sheet.cell(row, 3).alignment = Alignment(horizontal="left")
        for column in sums:
            if sheet.cell(first, column).value is None:
                continue  # an unpriced group has no cost to sum: leave its total blank too
            letter = get_column_letter(column)
            # set directly: our own formula, the one value that put() must not turn into text
            sheet.cell(total, column).value = f"=SUM({letter}{first}:{letter}{total - 1})"
        for column in range(1, note_column):
            sheet.cell(total, column).font = BOLD
        note = put(sheet, total, note_column, TOTAL_NOTE)
        note.font, note.alignment = NOTE_FONT, Alignment(indent=1)
    sheet.column_dimensions[get_column_letter(note_column)].width = len(TOTAL_NOTE) + 4
    title(sheet, 1, "Monthly budget: month totals include the actual to date")
    paragraph(
        sheet,
        2,
        "In each Total row, actual to date and the means are live sums of the months above. "
        f"The P-columns of a Total row hold the quantiles of the period total over {run.paths:,} "
        f"simulated paths, not sums: quantiles do not add up (a sum of monthly P{high} values "
        f"overstates the P{high} of the period, a sum of P{low} values understates its P{low}).",
        last_column=note_column - 1,
        font=NOTE_FONT,
    )
    return header_row, blocks


def _write_overview(sheet: Worksheet, run: BudgetRun, columns: FigureColumns) -> None:
    low, high = columns.levels[0], columns.levels[-1]
    first, last = run.months[0], run.months[-1]
    title(sheet, 1, f"Energy budget {first} to {last}")
    row = facts(
        sheet,
        WEATHER_ROW - 2,
        [
            ("Budget months", f"{first} to {last} ({len(run.months)} months)"),
            ("As of", pd.Timestamp(run.as_of).to_pydatetime(), DATE_FORMAT),
            ("Weather assumption", run.weather),
            ("Tariff", run.tariff or "none: energy only, no cost"),
            ("Simulated paths", run.paths, "#,##0"),
            (
                "Range shown",
                f"P{low} to P{high}: {high - low} % of the simulated outcomes fall between them",
            ),
        ],
    )
    row = section(sheet, row + 1, "Period totals")
    frame = overview_frame(run, columns)
    row, width = table(sheet, frame, first_row=row, index=False, formats=_figure_formats(columns))
    sheet.freeze_panes = None
    sheet.column_dimensions["A"].width = max(sheet.column_dimensions["A"].width, LABEL_WIDTH)
    # now that the columns have their widths, wrap the (long) weather assumption across them
    paragraph(sheet, WEATHER_ROW, run.weather, first_column=2, last_column=width)
    row = section(sheet, row + 2, "How well the range held in backtests")
    for meter, check in run.calibration.items():
        put(sheet, row, 1, meter).alignment = Alignment(vertical="top")
        sentence = check.sentence()
        paragraph(
            sheet, row, sentence[:1].upper() + sentence[1:] + ".", first_column=2, last_column=width
        )
        row += 1
    if not run.calibration:
        text = "No backtest was run: the range has not been checked against past months."
        paragraph(sheet, row, text, last_column=width)
        row += 1
    row = section(sheet, row + 1, "Before you use these numbers")
    cautions = [ESTIMATE_CAUTION.format(low=low, high=high), DESIGN_LOAD_CAUTION]
    if columns.with_cost:
        cautions.append(TARIFF_CAUTION)
    # the engine's standard cautions say what the three above say; keep only its own notes
    standard = {BUDGET_ESTIMATE_CAUTION, BUDGET_COST_CAUTION, BUDGET_PEAK_CAUTION}
    for text in [*cautions, *(c for c in run.cautions if c not in standard)]:
        paragraph(sheet, row, text, last_column=width)
        row += 1


def _write_daily(sheet: Worksheet, run: BudgetRun) -> None:
    frame = daily_frame(run)
    if frame.empty:
        put(sheet, 1, 1, "This budget run has no daily detail.")
        return
    formats = {"date": DATE_FORMAT} | dict.fromkeys(frame.columns[3:], ENERGY_FORMAT)
    last_row, last_column = table(sheet, frame, index=False, formats=formats)
    sheet.auto_filter.ref = f"A1:{get_column_letter(last_column)}{last_row}"


def _write_assumptions(
    sheet: Worksheet, run: BudgetRun, steps: list[dict], data_range: dict[str, tuple[str, str]]
) -> None:
    title(sheet, 1, "What this budget assumes")
    row = section(sheet, 3, "Budget run")
    calibration = sorted({c.method for c in run.calibration.values()})
    row = facts(
        sheet,
        row,
        [
            ("first budget month", run.months[0]),
            ("last budget month", run.months[-1]),
            ("as of (later data ignored)", run.as_of),
            ("weather assumption", run.weather),
            ("tariff", run.tariff or "none"),
            ("currency", run.currency or "none"),
            ("levels", ", ".join(f"P{level}" for level in run.levels)),
            ("simulated paths", run.paths),
            ("range calibration", "; ".join(calibration) or "none"),
            *((str(key), _plain(value)) for key, value in run.assumptions.items()),
        ],
    )
    row = section(sheet, row + 1, "Meters: data used and model chosen")
    row, _ = table(
        sheet, meters_frame(run, data_range), first_row=row, formats={"range scale": "0.00"}
    )
    put(sheet, row + 1, 1, "Backtest scores of each model: sheet 'Model scores'.").font = NOTE_FONT
    row = section(sheet, row + 3, "Cleaning steps applied")
    if steps:
        table(sheet, steps_frame(steps), first_row=row, index=False)
    else:
        put(sheet, row, 1, "None: the models used the readings as imported.")
    sheet.freeze_panes = None
    sheet.column_dimensions["A"].width = max(sheet.column_dimensions["A"].width, LABEL_WIDTH)


def _plain(value: Any) -> Any:
    """Scalars as they are; anything else as sorted JSON text."""
    if value is None or isinstance(value, str | int | float | bool):
        return value
    return json.dumps(value, sort_keys=True, default=str)
