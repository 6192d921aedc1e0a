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

from pathlib import Path

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
    frozen_header,
    labelled,
    money_format,
    paragraph,
    section,
    table,
    title,
)
from engine.export.finance_tables import (
    ENERGY_FORMAT,
    READ_UNIT_HEADER,
    Block,
    FigureColumns,
    budgeted,
    daily_frame,
    figure_columns,
    meter_facts,
    monthly_frame,
    overview_frame,
    quality_formats,
    quality_frame,
    run_facts,
    scores_frame,
    steps_frame,
)
from engine.export.printing import PageLabels, set_up_printing
from engine.export.saving import save_workbook
from engine.export.sheets import (
    DATE_FORMAT,
    HEADER_FILL,
    HEADER_FONT,
    fit_header_row,
    put,
    wrap_long_text,
)
from engine.meter_labels import Labels, shown_name
from engine.progress import Progress

SHEETS = ("Overview", "Monthly", "Daily", "Assumptions", "Data quality", "Model scores")
LABEL_WIDTH = 26
NAME_WIDTH = 36  # column A widens to the longest meter name up to this; longer names wrap
#: Assumptions columns B–E (fact or step, the words, a step's note, when it was added):
#: with column A they fit a landscape page at about 95 %.
ASSUMPTION_WIDTHS = {"B": 20.0, "C": 56.0, "D": 20.0, "E": 20.0}
CHART_ROWS = 20  # rows of 15 points under the Overview's 10 cm chart, and one to spare
CHART_CAPTION = (
    "Chart: {name}'s month totals, P{middle} with the P{low}–P{high} range, drawn from the "
    "sheet 'Monthly'."
)
DAILY_HEADER_ROW = 2
PAGE_NOTE = "Budgets are estimates, not bills: read them with the sheet 'Assumptions'."
DAILY_NOTE = (
    "Daily detail for screens: one row per meter and day ({rows:,} rows); filter by meter or "
    "date. On paper this sheet prints this note only: the month totals and their range print "
    "on the sheet 'Monthly', the period totals on 'Overview'."
)
TOTAL_NOTE = "P-columns of the Total row above: the period total's own quantiles"

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
    project: str | None = None,
    labels: Labels | None = None,
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
    project
        The project's name, printed at the top of every page (None: the workbook's file
        name).
    labels
        Each meter's display name and unit read in (:mod:`engine.meter_labels`), by raw name:
        meters are named by their display names, and budgets of meters read in another unit
        than kWh are shown in it too. None: raw names, kWh only.
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
    columns = figure_columns(run, labels)
    book = Workbook()
    book.remove(book.active)
    sheets = {name: book.create_sheet(name) for name in SHEETS}
    progress_steps.step(progress, 0.05, "Monthly table")
    header_row, blocks = _write_monthly(sheets["Monthly"], run, columns)
    _write_overview(sheets["Overview"], run, columns)
    chart = range_chart(sheets["Monthly"], header_row, chart_block(blocks), columns)
    chart_row = sheets["Overview"].max_row + 2
    sheets["Overview"].add_chart(chart, f"A{chart_row}")
    caption_row = chart_row + CHART_ROWS  # under the chart: it also ends the chart's block
    put(sheets["Overview"], caption_row, 1, _caption(chart_block(blocks), columns)).font = NOTE_FONT
    progress_steps.step(progress, 0.2, "Daily detail")
    _write_daily(sheets["Daily"], run, labels)
    progress_steps.step(progress, 0.7, "Assumptions, data quality and scores")
    kept = {
        "Overview": [chart_row],  # the chart prints whole, on the next page if need be
        "Monthly": [header_row + 1 + block.first for block in blocks],
        "Assumptions": _write_assumptions(sheets["Assumptions"], run, steps, data_range, labels),
    }
    names = {m.name: shown_name(labels, m.name) for m in run.meters}
    table(
        sheets["Data quality"],
        quality_frame(list(names), quality, steps).rename(index=names),
        formats=quality_formats(quality),
    )
    scores, formats = scores_frame(run, scorecards)
    table(sheets["Model scores"], scores.rename(index=names), formats=formats)
    printed = {"Overview": (1, caption_row), "Daily": (1, 1)}
    _set_up_pages(book, PageLabels(project, PAGE_NOTE), printed, kept)
    progress_steps.step(progress, 0.85, "Saving the workbook")
    save_workbook(book, path, "finance workbook")
    progress_steps.step(progress, 1.0, "Finance workbook written")
    return path


def _caption(block: Block, columns: FigureColumns) -> str:
    levels = columns.levels
    return CHART_CAPTION.format(
        name=block.item.shown_name,
        middle=levels[len(levels) // 2],
        low=levels[0],
        high=levels[-1],
    )


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


def _read_unit_formats(
    sheet: Worksheet, header_row: int, headers: list[str], items: list[tuple[int, str | None]]
) -> None:
    """Each figure in the unit read in carries its unit in its number format ("1,234 therm"),
    since the column holds therms beside ton-hours; ``items`` are (frame row, unit) pairs."""
    if READ_UNIT_HEADER not in headers:
        return
    column = headers.index(READ_UNIT_HEADER) + 1
    for row, unit in items:
        if unit is not None:
            sheet.cell(header_row + 1 + row, column).number_format = f'{ENERGY_FORMAT} "{unit}"'


def _write_monthly(
    sheet: Worksheet, run: BudgetRun, columns: FigureColumns
) -> tuple[int, list[Block]]:
    """Write the monthly blocks; return the header row and where each block sits."""
    low, high = columns.levels[0], columns.levels[-1]
    header_row = 4
    frame, blocks = monthly_frame(run, columns)
    formats = _figure_formats(columns) | {"month": MONTH_FORMAT}
    table(sheet, frame, first_row=header_row, index=False, formats=formats)
    _read_unit_formats(sheet, header_row, list(frame.columns), [
        (row, block.item.read_unit)
        for block in blocks for row in range(block.first, block.total_row + 1)
    ])  # fmt: skip
    sums = [list(frame.columns).index(name) + 1 for name in columns.additive]
    last_column = len(frame.columns)
    # under the P-columns of each Total row (in the blank row between blocks), not beside it:
    # a column for a note would widen every printed page
    note_column = list(frame.columns).index(columns.level_header(low)) + 1
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
        for column in range(1, last_column + 1):
            sheet.cell(total, column).font = BOLD
        put(sheet, total + 1, note_column, TOTAL_NOTE).font = NOTE_FONT
    title(sheet, 1, "Monthly budget: month totals include the actual to date")
    paragraph(
        sheet,
        2,
        "In each Total row, actual to date and the means are live sums of the months above. "
        f"The P-columns of a Total row hold the quantiles of the period total over {run.paths:,} "
        f"simulated paths, not sums: quantiles do not add up (a sum of monthly P{high} values "
        f"overstates the P{high} of the period, a sum of P{low} values understates its P{low}).",
        last_column=last_column,
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
    first = row
    row, width = table(sheet, frame, first_row=row, index=False, formats=_figure_formats(columns))
    items = [b for b in budgeted(run, columns.labels) if b.scope != "meter"] or budgeted(
        run, columns.labels
    )
    _read_unit_formats(
        sheet, first, list(frame.columns), [(n, b.read_unit) for n, b in enumerate(items)]
    )
    sheet.freeze_panes = None
    sheet.column_dimensions["A"].width = _name_width(
        run, sheet.column_dimensions["A"].width, columns.labels
    )
    # now that the columns have their widths, wrap the (long) weather assumption across them
    paragraph(sheet, WEATHER_ROW, run.weather, first_column=2, last_column=width)
    row = section(sheet, row + 2, "How well the range held in backtests")
    for meter, check in run.calibration.items():
        sentence = check.sentence()
        row = labelled(
            sheet,
            row,
            shown_name(columns.labels, meter),
            sentence[:1].upper() + sentence[1:] + ".",
            last_column=width,
            font=None,
        )
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


def _name_width(run: BudgetRun, width: float, labels: Labels | None) -> float:
    """Column A's width: at least ``width`` and :data:`LABEL_WIDTH`, the longest meter name
    as shown up to :data:`NAME_WIDTH` (longer names wrap)."""
    longest = max(len(shown_name(labels, meter.name)) for meter in run.meters) + 2
    return max(width, LABEL_WIDTH, min(longest, NAME_WIDTH))


def _write_daily(sheet: Worksheet, run: BudgetRun, labels: Labels | None) -> None:
    """The daily detail under a note; the note is all that prints (see _set_up_pages)."""
    frame = daily_frame(run, labels)
    if frame.empty:
        put(sheet, 1, 1, "This budget run has no daily detail.")
        return
    formats = {"date": DATE_FORMAT} | dict.fromkeys(frame.columns[3:], ENERGY_FORMAT)
    last_row, last_column = table(
        sheet, frame, first_row=DAILY_HEADER_ROW, index=False, formats=formats
    )
    sheet.auto_filter.ref = f"A{DAILY_HEADER_ROW}:{get_column_letter(last_column)}{last_row}"
    text = DAILY_NOTE.format(rows=len(frame))
    paragraph(sheet, 1, text, last_column=last_column, font=NOTE_FONT)


def _write_assumptions(
    sheet: Worksheet,
    run: BudgetRun,
    steps: list[dict],
    data_range: dict[str, tuple[str, str]],
    labels: Labels | None,
) -> list[int]:
    """One row per fact of the whole budget, then per meter and fact, then the cleaning steps.

    Returns the first rows of the blocks that print best unsplit (each meter's facts).

    The columns are fixed first, so every wrapped sentence is measured against the width it
    prints at; the words come from :func:`run_facts` and :func:`meter_facts` (never JSON).
    """
    whole = run_facts(run)
    sheet.column_dimensions["A"].width = _name_width(
        run, max(len(label) for label, _ in whole), labels
    )
    for letter, width in ASSUMPTION_WIDTHS.items():
        sheet.column_dimensions[letter].width = width
    last = len(ASSUMPTION_WIDTHS) + 1
    title(sheet, 1, "What this budget assumes")
    row = section(sheet, 3, "The whole budget")
    for label, words in whole:
        row = labelled(sheet, row, label, words, last_column=last)
    blocks = [row + 1]  # the section's title and header stay with its first meter
    row = section(sheet, row + 1, "Each meter")
    _header_cells(sheet, row, ["meter", "fact", "what it assumes"], last_column=last)
    shown = None
    for meter, fact, words in meter_facts(run, data_range, labels):
        row += 1
        if shown is not None and meter != shown:
            blocks.append(row)
        # the meter's name heads its block of facts; the rows below it belong to it
        name = meter if meter != shown else ""
        labelled(sheet, row, name, words, first_column=3, last_column=last)
        put(sheet, row, 2, fact).alignment = Alignment(vertical="top", wrap_text=True)
        shown = meter
    put(sheet, row + 2, 1, "Backtest scores of each model: sheet 'Model scores'.").font = NOTE_FONT
    blocks.append(row + 4)
    row = section(sheet, row + 4, "Cleaning steps applied")
    if steps:
        _steps_table(sheet, steps, row)
    else:
        put(sheet, row, 1, "None: the models used the readings as imported.")
    sheet.freeze_panes = None
    return blocks


def _header_cells(sheet: Worksheet, row: int, headers: list[str], *, last_column: int) -> None:
    """A table header row; the last header spans to ``last_column``."""
    for column, text in enumerate(headers, start=1):
        cell = put(sheet, row, column, text)
        cell.font, cell.fill = HEADER_FONT, HEADER_FILL
    for column in range(len(headers) + 1, last_column + 1):
        sheet.cell(row, column).fill = HEADER_FILL


def _steps_table(sheet: Worksheet, steps: list[dict], row: int) -> None:
    """The steps as a table that wraps inside the sheet's columns instead of widening them."""
    widths = {key: dimension.width for key, dimension in sheet.column_dimensions.items()}
    last_row, last_column = table(sheet, steps_frame(steps), first_row=row, index=False)
    for key, width in widths.items():
        sheet.column_dimensions[key].width = width
    fit_header_row(sheet, row, last_column)
    wrap_long_text(sheet, row + 1, last_row, last_column)
    for cells in sheet.iter_rows(min_row=row, max_row=last_row, min_col=2, max_col=2):
        cells[0].alignment = Alignment(horizontal="center", vertical="top")  # the step number


def _set_up_pages(
    book: Workbook,
    labels: PageLabels,
    printed: dict[str, tuple[int, int]],
    kept: dict[str, list[int]],
) -> None:
    """Page setup of every sheet: one page wide, its header row repeated on each page.

    The header row is the frozen one of a sheet holding one table, else the title; some
    sheets' (title row, last printed row) are given in ``printed``: the Overview prints down
    to the bottom of its chart, and the Daily sheet its note only. A finance reader needs the
    month and period totals on paper, which Monthly and Overview print; a year of days per
    meter is thousands of rows (82 pages of the sample's fiscal year) that nobody reads on
    paper but people filter on screen, so the Daily sheet prints the note saying where the
    totals are. ``kept`` holds the first rows of blocks that print unsplit where they fit.
    """
    for sheet in book.worksheets:
        header, last_row = printed.get(sheet.title, (frozen_header(sheet), None))
        set_up_printing(
            sheet,
            labels,
            title_rows=(header, header),
            last_row=last_row,
            blocks=kept.get(sheet.title, ()),
        )
