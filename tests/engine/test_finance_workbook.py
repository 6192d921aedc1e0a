"""The finance workbook, read back with a different reader than the one that wrote it.

The budget run is built by hand from simulated daily paths of an invented campus (Marrowby
Institute: two electricity meters and a gas boiler house), so every figure has a known answer
computed here with numpy, apart from the writer. The workbook is read back with calamine (an
xlsx reader independent of openpyxl); the live ``=SUM`` formulas are evaluated in the test and,
when LibreOffice is installed, by LibreOffice itself after a recalculating conversion.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import re
import shutil

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook
from openpyxl.chart import LineChart
from openpyxl.utils import column_index_from_string, get_column_letter
from python_calamine import CalamineWorkbook

from engine.budget.result import (
    BudgetRun,
    Calibration,
    MeterBudget,
    PeriodTotal,
    PricedPart,
    RollUp,
    Spread,
)
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.quality import quality_summary
from engine.errors import InputError
from engine.export.finance_workbook import write_finance_workbook
from engine.meter_labels import MeterLabel
from engine.progress import Cancelled, Progress
from tests.pdf_support import libreoffice_convert, page_texts, print_to_pdf

LEVELS = [10, 50, 90]
PATHS = 400
MONTHS = ["2031-07", "2031-08", "2031-09"]
AS_OF = "2031-07-12"
HOSTILE = "=cmd|' /C calc'!A0"  # a meter name that a spreadsheet would run as a formula
RATES = {"electricity": 0.14, "gas": 0.05}  # invented flat tariff, currency units per kWh
METERS = {  # name: (utility, typical kWh per day, day-to-day spread as a fraction)
    "Tollbridge Hall main": ("electricity", 5200.0, 0.12),
    HOSTILE: ("electricity", 1800.0, 0.25),
    "Kiln Court boilers": ("gas", 2600.0, 0.30),
}


@pytest.fixture(scope="module")
def campus():
    return _campus()


def _campus():
    """Daily energy paths (paths × days) and the metered actual to date, per meter."""
    rng = np.random.default_rng(31)
    days = pd.date_range("2031-07-01", "2031-09-30", freq="D")
    known = days < pd.Timestamp(AS_OF)
    month_of = days.strftime("%Y-%m")
    paths, actual = {}, {}
    for name, (_, level, spread) in METERS.items():
        weather = rng.normal(0.0, spread, size=(PATHS, 1)).repeat(len(days), axis=1) * 0.6
        noise = rng.normal(0.0, spread, size=(PATHS, len(days)))
        daily = level * (1.0 + weather + noise)
        observed = level * (1.0 + rng.normal(0.0, spread, size=len(days)))
        daily[:, known] = observed[known]  # the actual to date is part of every path
        paths[name], actual[name] = daily, np.where(known, observed, 0.0)
    return days, month_of, paths, actual


def _spread(values: np.ndarray) -> Spread:
    quantiles = {str(v): float(np.quantile(values, v / 100)) for v in LEVELS}
    return Spread(float(values.mean()), quantiles)


def _periods(energy: np.ndarray, cost: np.ndarray | None, actual: np.ndarray, month_of):
    """Month totals and the period total of daily paths (paths × days), summed path by path."""

    def period(name: str, inside: np.ndarray) -> PeriodTotal:
        priced = _spread(cost[:, inside].sum(axis=1)) if cost is not None else None
        energy_sum = energy[:, inside].sum(axis=1)
        return PeriodTotal(name, float(actual[inside].sum()), _spread(energy_sum), priced)

    months = [period(month, month_of == month) for month in MONTHS]
    return months, period("total", np.ones(len(month_of), dtype=bool))


def _run(campus, *, priced: bool = True) -> BudgetRun:
    days, month_of, paths, actual = campus

    def cost_of(names: list[str]) -> np.ndarray | None:
        return sum(paths[n] * RATES[METERS[n][0]] for n in names) if priced else None

    meters = []
    for name, (utility, _, _) in METERS.items():
        months, total = _periods(paths[name], cost_of([name]), actual[name], month_of)
        quantiles = np.quantile(paths[name], [v / 100 for v in LEVELS], axis=0)
        daily = pd.DataFrame(
            {"mean": paths[name].mean(axis=0)}
            | {f"P{v}": q for v, q in zip(LEVELS, quantiles, strict=True)},
            index=pd.Index(days.date, name="date"),
        )
        model = "time-of-week and temperature"
        meters.append(MeterBudget(name, utility, model, months, total, daily))

    def roll_up(group: str, names: list[str]) -> RollUp:
        energy = sum(paths[n] for n in names)
        done = sum(actual[n] for n in names)
        months, total = _periods(energy, cost_of(names), done, month_of)
        return RollUp(group, names, months, total)

    groups: dict[str, list[str]] = {}
    for name, (utility, _, _) in METERS.items():
        groups.setdefault(utility, []).append(name)
    check = Calibration(10, 90, held=19, tried=24, scale=1.15, method="half-widths scaled")
    return BudgetRun(
        start=MONTHS[0],
        months=MONTHS,
        as_of=AS_OF,
        weather="typical weather: the spread of the 2016–2030 daily temperatures",
        levels=LEVELS,
        paths=PATHS,
        meters=meters,
        utilities=[roll_up(group, names) for group, names in groups.items()],
        campus=roll_up("campus", list(METERS)),
        calibration={name: check for name in METERS},
        currency="USD" if priced else None,
        tariff="Marrowby flat rate 2031" if priced else None,
        assumptions={
            "as_of": AS_OF,  # as the engine's runs state it twice: once is enough on paper
            "fiscal year starts": "July",
            "drivers": ["temperature", "holidays"],
            "model settings": {
                name: {"balance_point": 15.5, "weekday_terms": True, "cooling_base": None}
                for name in METERS
            },
        },
        cautions=["Kiln Court boilers were re-metered in 2030; earlier data were scaled."],
    )


def _quality() -> dict[str, dict]:
    """Real summaries from the cleaning engine: a day of hourly readings with a filled gap."""
    index = pd.date_range("2031-07-01", periods=24, freq="h", tz="UTC")
    out = {}
    for offset, name in enumerate(METERS):
        raw = pd.Series(np.linspace(100.0, 123.0, 24) + offset, index=index)
        raw.iloc[5 + offset : 9 + offset] = np.nan
        estimated = raw.isna().to_numpy()
        cleaned = CleanedSeries.from_arrays(
            index,
            raw.interpolate().to_numpy(),
            estimated,
            np.zeros(24, dtype=bool),
            pd.Timedelta("1h"),
        )
        out[name] = quality_summary(raw, cleaned)
    return out


STEPS = [
    {
        "id": 7,
        "meter": HOSTILE,
        "kind": "interpolate",
        "params": {"start": "2031-03-02T05:00:00Z", "end": "2031-03-02T09:00:00Z"},
        "note": '=HYPERLINK("http://example.invalid")',
        "created_at": "2031-07-10T08:30:00Z",
    },
    {
        "id": 9,
        "meter": "Kiln Court boilers",
        "kind": "cap",
        "params": {"high": 900.0},
        "note": "+ meter swap spike",
        "created_at": "2031-07-10T08:41:00Z",
    },
]
SCORECARDS = {
    name: {
        "CV(RMSE) hourly %": 14.25 + i,
        "NMBE %": -0.75 * i,
        "month-total MAPE %": 3.5 + i,
        "interval coverage": 0.79,
        "months": 24,
        "meets Guideline 14": True,
    }
    for i, name in enumerate(METERS)
}
DATA_RANGE = {name: ("2028-07-01", "2031-07-11") for name in METERS}


@pytest.fixture(scope="module")
def written(campus, tmp_path_factory):
    run = _run(campus)
    path = tmp_path_factory.mktemp("finance") / "marrowby budget.xlsx"
    write_finance_workbook(
        path,
        run,
        quality=_quality(),
        steps=STEPS,
        scorecards=SCORECARDS,
        data_range=DATA_RANGE,
    )
    return run, path


class Grid:
    """A sheet read by calamine, addressed like a spreadsheet: ``grid[row, column]`` from 1."""

    def __init__(self, path, name: str) -> None:
        sheet = CalamineWorkbook.from_path(str(path)).get_sheet_by_name(name)
        self.top, self.left = sheet.start if sheet.start else (0, 0)
        self.rows = sheet.to_python()

    def __getitem__(self, place: tuple[int, int]):
        row, column = place[0] - 1 - self.top, place[1] - 1 - self.left
        if 0 <= row < len(self.rows) and 0 <= column < len(self.rows[row]):
            return self.rows[row][column]
        return ""

    def find(self, value) -> tuple[int, int]:
        """The first (row, column) holding ``value``."""
        for r, line in enumerate(self.rows):
            for c, cell in enumerate(line):
                if cell == value:
                    return r + 1 + self.top, c + 1 + self.left
        raise AssertionError(f"{value!r} not in the sheet")

    def texts(self) -> list[str]:
        return [str(cell) for line in self.rows for cell in line if isinstance(cell, str)]

    def header(self, row: int) -> list:
        return [self[row, c] for c in range(1, len(self.rows[row - 1 - self.top]) + 1)]


def _monthly_blocks(run: BudgetRun):
    """(scope, name, item) in the order the workbook promises: campus, utilities, meters."""
    return (
        [("campus", run.campus.group, run.campus)]
        + [("utility", u.group, u) for u in run.utilities]
        + [("meter", m.name, m) for m in run.meters]
    )


def _figures(period: PeriodTotal) -> list[float | str]:
    """Actual to date, energy mean and levels, cost mean and levels: the table's column order.

    A month not begun by the as-of date has no actual to date: a blank cell, not 0.
    """
    energy = [period.energy.mean] + [period.energy.quantiles[str(v)] for v in LEVELS]
    cost = [period.cost.mean] + [period.cost.quantiles[str(v)] for v in LEVELS]
    begun = period.period == "total" or period.period <= AS_OF[:7]
    return [period.actual_to_date if begun else "", *energy, *cost]


def _meter_facts(grid: Grid) -> dict[str, dict[str, str]]:
    """The Assumptions sheet's "Each meter" table: meter → fact → words.

    A meter's name heads its block; the rows under it with an empty name belong to it.
    """
    header = next(r for r in range(1, 200) if [grid[r, 1], grid[r, 2]] == ["meter", "fact"])
    out: dict[str, dict[str, str]] = {}
    name = None
    for row in range(header + 1, header + 200):
        if not grid[row, 2]:
            break
        name = grid[row, 1] or name
        out.setdefault(name, {})[grid[row, 2]] = grid[row, 3]
    return out


def _monthly_rows(grid: Grid):
    """Month and Total rows of the monthly sheet, by (scope, name), with their row numbers."""
    header_row, _ = grid.find("scope")
    out: dict[tuple[str, str], list[tuple[int, list]]] = {}
    for row in range(header_row + 1, header_row + len(grid.rows)):
        line = [grid[row, c] for c in range(1, 14)]
        if line[0]:
            out.setdefault((line[0], line[1]), []).append((row, line))
    return header_row, out


def test_monthly_figures_read_back_with_another_reader(written):
    run, path = written
    header_row, blocks = _monthly_rows(Grid(path, "Monthly"))
    header = Grid(path, "Monthly").header(header_row)
    assert header[:4] == ["scope", "budget for", "month", "actual to date (kWh)"]
    assert header[4:8] == ["mean (kWh)", "P10 (kWh)", "P50 (kWh)", "P90 (kWh)"]
    assert header[8] == "cost mean (USD)"
    assert list(blocks) == [(scope, name) for scope, name, _ in _monthly_blocks(run)]
    for scope, name, item in _monthly_blocks(run):
        rows = blocks[scope, name]
        assert [line[2] for _, line in rows] == [
            *(dt.date.fromisoformat(f"{m}-01") for m in MONTHS),
            "Total",
        ]
        for (_, line), month in zip(rows, item.months, strict=False):
            expected = _figures(month)
            assert line[3] == (expected[0] if expected[0] == "" else pytest.approx(expected[0]))
            assert line[4:12] == pytest.approx(expected[1:], rel=1e-12)


def test_total_rows_are_live_sums_that_recompute_to_the_period_total(written, campus):
    """Evaluate each =SUM formula on the cells calamine read; compare with numpy's totals."""
    run, path = written
    _, _, paths, actual = campus
    grid = Grid(path, "Monthly")
    formulas = load_workbook(path)["Monthly"]
    header_row, blocks = _monthly_rows(grid)
    header = grid.header(header_row)
    summed = {
        header.index(n) + 1 for n in ("actual to date (kWh)", "mean (kWh)", "cost mean (USD)")
    }
    for scope, name, item in _monthly_blocks(run):
        names = item.meters if scope != "meter" else [name]
        energy = sum(paths[n] for n in names).sum(axis=1)  # period total per path
        cost = sum(paths[n].sum(axis=1) * RATES[METERS[n][0]] for n in names)
        expected = {
            "actual to date (kWh)": sum(actual[n].sum() for n in names),
            "mean (kWh)": energy.mean(),
            "cost mean (USD)": cost.mean(),
        }
        total_row, line = blocks[scope, name][-1]
        month_rows = [row for row, _ in blocks[scope, name][:-1]]
        for column in summed:
            formula = formulas.cell(total_row, column).value
            match = re.fullmatch(r"=SUM\(([A-Z]+)(\d+):([A-Z]+)(\d+)\)", formula)
            assert match, formula
            first_col, first, last_col, last = match.groups()
            assert first_col == last_col == formulas.cell(total_row, column).column_letter
            assert [int(first), int(last)] == [month_rows[0], month_rows[-1]]
            cells = [grid[row, column] for row in range(int(first), int(last) + 1)]
            value = sum(cell for cell in cells if cell != "")  # SUM skips blank cells
            assert value == pytest.approx(expected[header[column - 1]], rel=1e-9)
            assert line[column - 1] == ""  # no stale value beside the formula


def test_total_row_quantiles_are_the_period_totals_own(written, campus):
    """Quantiles do not add up (basic probability: only outcomes moving in lockstep would)."""
    run, path = written
    _, _, paths, _ = campus
    grid = Grid(path, "Monthly")
    types = load_workbook(path)["Monthly"]
    header_row, blocks = _monthly_rows(grid)
    header = grid.header(header_row)
    columns = [header.index(f"P{v} (kWh)") + 1 for v in LEVELS]
    total_row, line = blocks["campus", run.campus.group][-1]
    month_rows = [row for row, _ in blocks["campus", run.campus.group][:-1]]
    period = sum(paths.values()).sum(axis=1)
    for level, column in zip(LEVELS, columns, strict=True):
        assert types.cell(total_row, column).data_type == "n"
        # numpy's quantile of the period total over the paths, computed apart from the writer
        assert line[column - 1] == pytest.approx(np.quantile(period, level / 100), rel=1e-12)
    low, high = columns[0], columns[-1]
    assert line[high - 1] < sum(grid[row, high] for row in month_rows)
    assert line[low - 1] > sum(grid[row, low] for row in month_rows)
    below = grid[total_row + 1, low]
    assert "quantiles" in below  # the note under the total row's P-columns
    note = " ".join(grid.texts())
    assert "not sums" in note and "quantiles do not add up" in note


def test_libreoffice_recalculates_the_same_totals(written, tmp_path):
    """Optional: skipped when LibreOffice (soffice) is not installed."""
    soffice = shutil.which("soffice")
    if soffice is None:
        pytest.skip("LibreOffice is not installed; the formulas were checked in Python only")
    run, path = written
    recalculated = libreoffice_convert(path, tmp_path, "xlsx", out=tmp_path / "out", timeout=120)
    grid = Grid(recalculated, "Monthly")
    _, blocks = _monthly_rows(grid)
    for scope, name, item in _monthly_blocks(run):
        _, line = blocks[scope, name][-1]
        # LibreOffice keeps 15 significant digits
        assert line[3:12] == pytest.approx(_figures(item.total), rel=1e-12)


def test_formula_looking_text_stays_text_everywhere(written, campus):
    _, path = written
    book = load_workbook(path)
    hostile_cells = 0
    for sheet in book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.value in (HOSTILE, STEPS[0]["note"], STEPS[1]["note"]):
                    assert cell.data_type == "s", (sheet.title, cell.coordinate)
                    hostile_cells += 1
                elif cell.data_type == "f":  # our own sums are the only formulas
                    assert sheet.title == "Monthly"
                    assert re.fullmatch(r"=SUM\([A-Z]+\d+:[A-Z]+\d+\)", cell.value)
    days = len(campus[0])
    # the meter's monthly block (3 months, Total), its daily rows, its row in data quality, in
    # scores, in the Overview's backtest lines, in the Assumptions' meter and step tables, and
    # the two hostile step notes
    assert hostile_cells == 4 + days + 1 + 1 + 1 + 1 + 1 + 2
    for name in ("Monthly", "Daily", "Data quality", "Model scores", "Assumptions", "Overview"):
        assert HOSTILE in Grid(path, name).texts(), name
    assert STEPS[0]["note"] in Grid(path, "Assumptions").texts()


def test_chart_draws_the_campus_quantiles_from_the_monthly_cells(written):
    run, path = written
    charts = load_workbook(path)["Overview"]._charts
    assert len(charts) == 1
    chart = charts[0]
    assert isinstance(chart, LineChart)
    grid = Grid(path, "Monthly")
    for series, level in zip(chart.series, LEVELS, strict=True):
        assert series.tx.v == f"P{level}"
        reference = series.val.numRef.f
        match = re.fullmatch(r"'?Monthly'?!\$([A-Z]+)\$(\d+):\$([A-Z]+)\$(\d+)", reference)
        assert match, reference
        column = column_index_from_string(match.group(1))
        values = [grid[row, column] for row in range(int(match.group(2)), int(match.group(4)) + 1)]
        monthly = [m.energy.quantiles[str(level)] for m in run.campus.months]
        assert values == pytest.approx(monthly, rel=1e-12)


def test_numbers_carry_number_formats_and_headers_are_frozen(written):
    _, path = written
    book = load_workbook(path)
    monthly = book["Monthly"]
    header_row = next(r for r in range(1, 10) if monthly.cell(r, 1).value == "scope")
    assert monthly.freeze_panes == f"A{header_row + 1}"
    first = monthly[header_row + 1]
    assert first[2].number_format == "mmm yyyy"
    assert {c.number_format for c in first[3:8]} == {"#,##0"}
    assert all("USD" in c.number_format and "#,##0" in c.number_format for c in first[8:12])
    # columns as wide as the numbers as shown ("1,234,567"), not as Python prints the float
    for column in range(4, 13):
        values = [
            row[0].value
            for row in monthly.iter_rows(min_row=header_row + 1, min_col=column, max_col=column)
            if isinstance(row[0].value, float)
        ]
        prefix = "USD " if column > 8 else ""
        shown = max(len(f"{prefix}{v:,.0f}") for v in values)
        width = monthly.column_dimensions[get_column_letter(column)].width
        assert shown <= width <= max(shown + 4, 16), (column, shown, width)
    daily = book["Daily"]
    assert daily.freeze_panes == "A3"  # under the note and the header
    assert daily["C3"].number_format == "yyyy-mm-dd" and daily["D3"].number_format == "#,##0"
    quality = book["Data quality"]
    headers = [c.value for c in quality[1]]
    assert quality.cell(2, headers.index("coverage before cleaning") + 1).number_format == ("0.0%")
    assert quality.freeze_panes == "A2" and book["Model scores"].freeze_panes == "A2"
    scores = book["Model scores"]
    headers = [c.value for c in scores[1]]
    assert scores.cell(2, headers.index("interval coverage") + 1).number_format == "0.0%"
    assert scores.cell(2, headers.index("NMBE %") + 1).number_format == "0.0"


def test_overview_states_totals_assumptions_and_cautions(written):
    run, path = written
    grid = Grid(path, "Overview")
    texts = " ".join(grid.texts())
    assert grid[grid.find("As of")[0], 2] == dt.date(2031, 7, 12)
    assert run.weather in texts and run.tariff in texts
    sentence = run.calibration["Kiln Court boilers"].sentence()
    assert sentence[:1].upper() + sentence[1:] + "." in texts
    for words in ("estimates", "licensed engineer", "local codes", "not a design load"):
        assert words in texts
    assert run.cautions[0] in texts
    header_row, _ = grid.find("scope")
    header = grid.header(header_row)
    rows = {
        grid[r, 2]: [grid[r, c] for c in range(1, len(header) + 1)]
        for r in range(header_row + 1, header_row + 4)
    }
    assert list(rows) == ["campus", "electricity", "gas"]
    for item in [run.campus, *run.utilities]:
        assert rows[item.group][2] == len(item.meters)
        assert rows[item.group][3:] == pytest.approx(_figures(item.total), rel=1e-12)


def test_daily_detail_per_local_date_and_meter(written, campus):
    _, path = written
    days, _, paths, _ = campus
    grid = Grid(path, "Daily")
    assert "for screens" in grid[1, 1]
    assert grid.header(2) == [
        "meter",
        "utility",
        "date",
        "mean (kWh)",
        "P10 (kWh)",
        "P50 (kWh)",
        "P90 (kWh)",
    ]
    rows = grid.rows[2:]
    assert len(rows) == len(METERS) * len(days)
    for name in METERS:
        mine = [r for r in rows if r[0] == name]
        assert [r[2] for r in mine] == list(days.date)
        assert [r[3] for r in mine] == pytest.approx(paths[name].mean(axis=0), rel=1e-12)
        p90 = np.quantile(paths[name], 0.9, axis=0)
        assert [r[6] for r in mine] == pytest.approx(p90, rel=1e-12)


def test_assumptions_quality_and_scores(written):
    run, path = written
    assumptions = Grid(path, "Assumptions")
    texts = assumptions.texts()
    for expected in (run.as_of, run.weather, "P10, P50, P90", "July", "temperature, holidays"):
        assert expected in texts
    assert texts.count(run.as_of) == 1
    facts = _meter_facts(assumptions)
    for name, (utility, _, _) in METERS.items():
        mine = facts[name]
        assert mine["utility"] == utility
        assert mine["model"] == "time-of-week and temperature"
        assert mine["readings used"] == "2028-07-01 to 2031-07-11"
        assert "19 of 24 past months" in mine["range in backtests"]
        assert "(half-widths scaled)" in mine["range in backtests"]
        assert mine["priced by"] == "tariff: Marrowby flat rate 2031"
    # the settings of each model in words: names without underscores, yes/no, none
    settings = facts["Kiln Court boilers"]["model settings"]
    assert settings == "balance point: 15.5; weekday terms: yes; cooling base: none"
    assert facts["Kiln Court boilers"]["caution"] == run.cautions[0]
    steps = " ".join(texts)
    assert "Fill with a straight line between the readings either side" in steps
    assert "start: 2031-03-02 05:00 UTC; end: 2031-03-02 09:00 UTC" in steps
    assert "Limit readings to a low and/or high value: high: 900" in steps

    quality = Grid(path, "Data quality")
    header = quality.header(1)
    summaries = _quality()
    for line in quality.rows[1:]:
        summary = summaries[line[0]]
        assert line[header.index("coverage before cleaning")] == pytest.approx(
            summary["coverage_before"]
        )
        assert line[header.index("estimated energy (kWh)")] == pytest.approx(
            summary["estimated_kwh"]
        )
        steps = sum(step["meter"] == line[0] for step in STEPS)
        assert line[header.index("cleaning steps applied")] == steps
    # 4 of 24 hourly readings were missing before the fill (the invented gap above)
    assert quality.rows[1][header.index("coverage before cleaning")] == pytest.approx(20 / 24)

    scores = Grid(path, "Model scores")
    header = scores.header(1)
    assert header[:2] == ["meter", "model"]
    for line in scores.rows[1:]:
        card = SCORECARDS[line[0]] | {"meets Guideline 14": "yes"}  # words, not TRUE or 1
        assert {k: line[header.index(k)] for k in card} == pytest.approx(card)


def test_without_a_tariff_there_are_no_cost_columns(campus, tmp_path):
    run = _run(campus, priced=False)
    path = write_finance_workbook(
        tmp_path / "energy only.xlsx", run, quality={}, steps=[], scorecards={}, data_range={}
    )
    grid = Grid(path, "Monthly")
    header_row, _ = grid.find("scope")
    assert not any("cost" in str(h) for h in grid.header(header_row))
    overview = " ".join(Grid(path, "Overview").texts())
    assert "none: energy only" in overview and "tariff's legal text" not in overview
    assert "None: the models used the readings as imported." in Grid(path, "Assumptions").texts()


def test_bad_places_and_mixed_units_are_reported(written, tmp_path):
    run, _ = written
    kwargs = {"quality": {}, "steps": [], "scorecards": {}, "data_range": {}}
    with pytest.raises(InputError, match=r"\.xlsx"):
        write_finance_workbook(tmp_path / "budget.csv", run, **kwargs)
    with pytest.raises(InputError, match="does not exist"):
        write_finance_workbook(tmp_path / "missing" / "budget.xlsx", run, **kwargs)
    taken = tmp_path / "a folder.xlsx"
    taken.mkdir()
    with pytest.raises(InputError, match="could not be saved") as caught:
        write_finance_workbook(taken, run, **kwargs)
    assert "a folder.xlsx" in str(caught.value)
    mixed = _run_with_unit(run, "therm")
    with pytest.raises(InputError, match="mixes energy units"):
        write_finance_workbook(tmp_path / "mixed.xlsx", mixed, **kwargs)


def _run_with_unit(run: BudgetRun, unit: str) -> BudgetRun:
    meters = [*run.meters[:-1], dataclasses.replace(run.meters[-1], unit=unit)]
    return dataclasses.replace(run, meters=meters)


def test_progress_is_reported_and_cancel_stops_before_saving(written, tmp_path):
    run, _ = written
    kwargs = {"quality": {}, "steps": [], "scorecards": {}, "data_range": {}}
    seen: list[float] = []
    write_finance_workbook(
        tmp_path / "a.xlsx", run, progress=Progress(lambda f, m: seen.append(f)), **kwargs
    )
    assert seen == sorted(seen) and seen[-1] == 1.0
    stopped = Progress()
    stopped.cancel()
    with pytest.raises(Cancelled):
        write_finance_workbook(tmp_path / "b.xlsx", run, progress=stopped, **kwargs)
    assert not (tmp_path / "b.xlsx").exists()


def test_an_unpriced_meter_has_no_cost_total(campus, tmp_path):
    run = _run(campus, priced=True)
    unpriced = run.meters[0]
    run.meters[0] = dataclasses.replace(
        unpriced,
        months=[dataclasses.replace(m, cost=None) for m in unpriced.months],
        total=dataclasses.replace(unpriced.total, cost=None),
    )
    path = write_finance_workbook(
        tmp_path / "mixed.xlsx", run, quality={}, steps=[], scorecards={}, data_range={}
    )
    sheet = load_workbook(path)["Monthly"]
    rows = list(sheet.iter_rows(values_only=True))
    header = next(i for i, row in enumerate(rows) if row and row[0] == "scope")
    names = list(rows[header])
    cost = next(i for i, name in enumerate(names) if str(name).startswith("cost mean"))
    totals = {row[1]: row[cost] for row in rows[header + 1 :] if row[2] == "Total"}
    assert totals[unpriced.name] is None  # nothing to sum: no "USD 0" for a meter with no tariff
    priced = run.meters[1].name
    assert str(totals[priced]).startswith("=SUM(")


def test_a_campus_with_an_unpriced_meter_shows_its_priced_meters_cost(campus, tmp_path):
    """The campus has no cost with the gas meter unpriced; its priced meters (the two
    electricity meters, energy and cost summed path by path here with numpy) are a row of the
    overview and a block of the monthly sheet, named plainly with what they leave out."""
    run = _run(campus, priced=True)
    _, month_of, paths, actual = campus
    gas = run.meters[2] = _unpriced(run.meters[2])
    run.utilities[1] = _unpriced(run.utilities[1])
    electric = [name for name, (utility, _, _) in METERS.items() if utility == "electricity"]
    energy = sum(paths[n] for n in electric)
    cost = energy * RATES["electricity"]
    months, total = _periods(energy, cost, sum(actual[n] for n in electric), month_of)
    run.campus = dataclasses.replace(
        _unpriced(run.campus),
        priced_only=PricedPart(electric, [gas.name], months, total),
    )
    labels = {gas.name: MeterLabel(gas.name, "natural_gas", display_name="Kiln boilers")}
    path = write_finance_workbook(
        tmp_path / "part.xlsx",
        run,
        quality={},
        steps=[],
        scorecards={},
        data_range={},
        labels=labels,
    )
    named = "campus, priced meters only (leaves out Kiln boilers: no price)"
    grid = Grid(path, "Overview")
    row, _ = grid.find(named)
    header = grid.header(grid.find("scope")[0])
    assert grid[row, 1] == "priced meters only" and grid[row, 3] == 2
    shown = [grid[row, c] for c in range(4, len(header) + 1)]
    assert shown == pytest.approx(_figures(total), rel=1e-12)
    assert grid[grid.find("campus")[0], header.index("cost mean (USD)") + 1] == ""
    monthly = Grid(path, "Monthly")
    rows = [r for r in range(1, len(monthly.rows) + 1) if monthly[r, 2] == named]
    assert [monthly[r, 3] for r in rows][-1] == "Total" and len(rows) == len(MONTHS) + 1


def _unpriced(item):
    """A meter's budget or a roll-up without its cost (no price, or a meter without one)."""
    return dataclasses.replace(
        item,
        months=[dataclasses.replace(m, cost=None) for m in item.months],
        total=dataclasses.replace(item.total, cost=None),
    )


def test_the_daily_sheet_names_utilities_in_words(campus, tmp_path):
    """A natural-gas meter's days read "natural gas", not the key "natural_gas"."""
    run = _run(campus)
    run.meters[2] = dataclasses.replace(run.meters[2], utility="natural_gas")
    path = write_finance_workbook(
        tmp_path / "daily.xlsx", run, quality={}, steps=[], scorecards={}, data_range={}
    )
    grid = Grid(path, "Daily")
    column = grid.header(grid.find("utility")[0]).index("utility") + 1
    first = grid.find("utility")[0] + 1
    utilities = {grid[row, column] for row in range(first, first + len(grid.rows))}
    assert "natural gas" in utilities and not any("_" in str(u) for u in utilities)


PRINTED_LAST_ROWS = {"Daily": 1}  # the daily detail prints its note only


def test_every_sheet_prints_one_page_wide_with_titles_area_and_labels(written):
    """Page setup as a spreadsheet stores it (ECMA-376 Part 1, pageSetup, headerFooter)."""
    _, path = written
    book = load_workbook(path)
    for sheet in book.worksheets:
        setup = sheet.page_setup
        assert sheet.sheet_properties.pageSetUpPr.fitToPage, sheet.title
        assert (setup.fitToWidth, setup.fitToHeight) == (1, 0), sheet.title
        assert setup.orientation in ("portrait", "landscape")
        assert re.fullmatch(r"\$(\d+):\$\1", sheet.print_title_rows), sheet.title
        area = re.fullmatch(r"'?[^!]+'?!\$A\$1:\$([A-Z]+)\$(\d+)", sheet.print_area)
        assert area, (sheet.title, sheet.print_area)
        last_row = int(area.group(2))
        assert last_row == PRINTED_LAST_ROWS.get(sheet.title, last_row)
        if sheet.title not in PRINTED_LAST_ROWS:  # every row with a value prints
            assert last_row >= sheet.max_row, sheet.title
            assert column_index_from_string(area.group(1)) >= sheet.max_column, sheet.title
        assert "&A" in sheet.oddHeader.center.text
        assert sheet.oddHeader.left.text == "&F"  # no project name given: the file's name
        assert sheet.oddHeader.right.text == "Page &P of &N"
        assert "estimates" in sheet.oddFooter.center.text
    monthly = book["Monthly"]
    header_row = next(r for r in range(1, 10) if monthly.cell(r, 1).value == "scope")
    assert monthly.print_title_rows == f"${header_row}:${header_row}"
    assert monthly.page_setup.orientation == "landscape"  # 12 columns of figures
    # the Overview prints its chart, which sits under the last row with a value
    anchor = book["Overview"]._charts[0].anchor._from.row + 1
    assert int(book["Overview"].print_area.rsplit("$", 1)[1]) > anchor + 10


def test_the_project_name_heads_each_page(campus, tmp_path):
    run = _run(campus)
    path = write_finance_workbook(
        tmp_path / "b.xlsx",
        run,
        quality={},
        steps=[],
        scorecards={},
        data_range={},
        project="Marrowby & Kiln",
    )
    for sheet in load_workbook(path).worksheets:
        assert sheet.oddHeader.left.text == "Marrowby && Kiln"  # & doubled: not a code


def test_no_cell_holds_json_and_assumptions_read_at_text_size(written):
    _, path = written
    book = load_workbook(path)
    for sheet in book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if isinstance(cell.value, str):
                    assert not cell.value.lstrip().startswith(("{", "[")), cell.coordinate
    assumptions = book["Assumptions"]
    assert assumptions.page_setup.orientation == "landscape"
    for row in assumptions.iter_rows():
        for cell in row:
            if isinstance(cell.value, str):
                assert (cell.font.sz or 11) >= 10, cell.coordinate
                if len(cell.value) > _width(assumptions, cell):
                    assert cell.alignment.wrap_text, cell.coordinate
                    assert _height(assumptions, cell) >= 2 * 15, cell.coordinate


LONG_NAME = "Tollbridge Hall main incomer, west switchroom, panel LV-3 (revenue grade)"


def test_long_meter_names_are_shown_whole(campus, tmp_path):
    """Each cell holding a long meter name is as wide as the name or wraps it on tall rows.

    A width unit holds about one character of 11-point Calibri (from memory: the unit is the
    width of the digit 0); 15 points a line is the default row height (common practice).
    """
    run = _renamed(_run(campus), "Tollbridge Hall main", LONG_NAME)
    path = write_finance_workbook(
        tmp_path / "long.xlsx", run, quality={}, steps=[], scorecards={}, data_range={}
    )
    seen = set()
    for sheet in load_workbook(path).worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.value != LONG_NAME:
                    continue
                seen.add(sheet.title)
                width = _width(sheet, cell)
                if width < len(LONG_NAME):
                    lines = int(np.ceil(len(LONG_NAME) / (width - 1)))
                    assert cell.alignment.wrap_text, (sheet.title, cell.coordinate)
                    assert _height(sheet, cell) >= 15 * lines, (sheet.title, cell.coordinate)
    assert seen == {"Overview", "Monthly", "Daily", "Assumptions", "Data quality", "Model scores"}


def _renamed(run: BudgetRun, old: str, new: str) -> BudgetRun:
    """``run`` with meter ``old`` called ``new`` everywhere it is named."""
    meters = [dataclasses.replace(m, name=new) if m.name == old else m for m in run.meters]
    swap = [new if name == old else name for name in run.campus.meters]
    utilities = [
        dataclasses.replace(u, meters=[new if n == old else n for n in u.meters])
        for u in run.utilities
    ]
    calibration = {new if k == old else k: v for k, v in run.calibration.items()}
    return dataclasses.replace(
        run,
        meters=meters,
        utilities=utilities,
        campus=dataclasses.replace(run.campus, meters=swap),
        calibration=calibration,
    )


def _width(sheet, cell) -> float:
    """The width a cell's text has: its merged range's, or its column's and those of the
    empty cells to its right (where unwrapped text runs on)."""
    for merged in sheet.merged_cells.ranges:
        if cell.coordinate in merged:
            return _columns(sheet, merged.min_col, merged.max_col)
    if cell.alignment.wrap_text:
        return _columns(sheet, cell.column, cell.column)
    last = cell.column
    while last < sheet.max_column and sheet.cell(cell.row, last + 1).value is None:
        last += 1
    return _columns(sheet, cell.column, last)


def _columns(sheet, first: int, last: int) -> float:
    return sum(sheet.column_dimensions[get_column_letter(c)].width for c in range(first, last + 1))


def _height(sheet, cell) -> float:
    return sheet.row_dimensions[cell.row].height or 15.0


def test_libreoffice_prints_a_few_pages_each_naming_its_sheet(written, tmp_path):
    """Optional: skipped without LibreOffice (soffice) and poppler (pdftotext).

    The sheets' own lengths bound the pages: Daily (its note), Data quality and Model scores
    one page each; the Overview, Monthly's 6 blocks of 3 months and Assumptions' facts of 3
    meters and 2 steps at most 2 pages each (the Overview's chart goes whole to a second page
    when the page breaks are planned at the 15-point rows of Excel). Printed in full, the
    daily detail alone (276 rows) would take 5 pages or more.
    """
    soffice, pdftotext = shutil.which("soffice"), shutil.which("pdftotext")
    if soffice is None or pdftotext is None:
        pytest.skip("LibreOffice or pdftotext is not installed")
    _, path = written
    pages = page_texts(print_to_pdf(path, tmp_path, timeout=180))
    names = sorted(load_workbook(path).sheetnames, key=len, reverse=True)
    per_sheet: dict[str, int] = {}
    for number, page in enumerate(pages, start=1):
        header = page.strip().splitlines()[0]
        assert f"Page {number} of {len(pages)}" in header
        sheet = next(name for name in names if name in header)
        per_sheet[sheet] = per_sheet.get(sheet, 0) + 1
        assert "Budgets are estimates" in page
    assert per_sheet["Daily"] == 1
    assert per_sheet["Data quality"] == per_sheet["Model scores"] == 1
    assert max(per_sheet[name] for name in ("Overview", "Monthly", "Assumptions")) <= 2
    assert len(pages) <= 9


def test_utility_keys_are_written_in_words(campus, tmp_path):
    run = _run(campus)
    gas = [
        dataclasses.replace(u, group="natural_gas") if u.group == "gas" else u
        for u in run.utilities
    ]
    path = tmp_path / "words.xlsx"
    write_finance_workbook(
        path,
        dataclasses.replace(run, utilities=gas),
        quality=_quality(),
        steps=STEPS,
        scorecards=SCORECARDS,
        data_range=DATA_RANGE,
    )
    shown = {cell for row in load_workbook(path)["Overview"].values for cell in row}
    assert "natural gas" in shown and "natural_gas" not in shown


def test_display_names_and_the_unit_read_in_are_shown_beside_kwh(campus, tmp_path):
    run = _run(campus)
    labels = {
        "Kiln Court boilers": MeterLabel("Kiln Court boilers", "gas", "therm", "Boiler house"),
        "Tollbridge Hall main": MeterLabel("Tollbridge Hall main", "electricity"),
    }
    path = tmp_path / "labelled.xlsx"
    write_finance_workbook(
        path, run, quality=_quality(), steps=STEPS, scorecards=SCORECARDS,
        data_range=DATA_RANGE, labels=labels,
    )  # fmt: skip
    grid = Grid(path, "Monthly")
    header_row, blocks = _monthly_rows(grid)
    header = grid.header(header_row)
    assert header[8] == "mean in the unit read"
    assert ("meter", "Boiler house") in blocks and ("meter", "Kiln Court boilers") not in blocks
    boiler = next(m for m in run.meters if m.name == "Kiln Court boilers")
    # NIST SP 811 (2008), B.8: therm (EC) = 1.055 06 E+08 J, kWh = 3.6 E+06 J
    kwh_per_therm = 1.05506e8 / 3.6e6
    for (_, line), month in zip(blocks["meter", "Boiler house"], boiler.months, strict=False):
        assert line[8] == pytest.approx(month.energy.mean / kwh_per_therm)
    gas = next(u for u in run.utilities if u.group == "gas")  # its one meter reads therms
    assert blocks["utility", "gas"][0][1][8] == pytest.approx(
        gas.months[0].energy.mean / kwh_per_therm
    )
    for scope_name in (("utility", "electricity"), ("meter", "Tollbridge Hall main")):
        assert all(line[8] == "" for _, line in blocks[scope_name][:-1])  # kWh only
    sheet = load_workbook(path)["Monthly"]
    first_row = blocks["meter", "Boiler house"][0][0]
    assert sheet.cell(first_row, 9).number_format.endswith('"therm"')
    facts = _meter_facts(Grid(path, "Assumptions"))
    assert facts["Boiler house"]["column in the meter file"] == "Kiln Court boilers"
    daily = {row[0] for row in load_workbook(path)["Daily"].values}
    assert "Boiler house" in daily and "Kiln Court boilers" not in daily
