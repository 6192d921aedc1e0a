"""What the importer understood of one file: a summary, a table and the findings.

It shows the engine's own report (:func:`engine.reading.describe`), so the window and
``loadledger inspect`` always tell the same story.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from html import escape
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QTreeWidget,
    QTreeWidgetItem,
    QVBoxLayout,
    QWidget,
)

from engine.meters import utility_words
from engine.words import counted

#: Data role holding a cell's number as the engine gave it (the text is rounded for reading).
NUMBER_ROLE = Qt.ItemDataRole.UserRole
ROWS_SHOWN = 8

STAMP_WORDS = {"start": "interval start", "end": "interval end", "between reads": "between reads"}
KIND_WORDS = {
    "meters": "meter readings",
    "bills": "utility bills",
    "weather": "weather station",
    "calendar": "campus calendar",
}


@dataclass(frozen=True)
class Column:
    """A table column: header, the words for a row, the number behind them (if any)."""

    header: str
    words: Callable[[dict], str]
    number: str | None = None
    note: str | None = None


def _interval(minutes: float | None) -> str:
    if minutes is None:
        return "–"
    if minutes % 1440 == 0:
        days = int(minutes // 1440)
        return "1 day" if days == 1 else f"{days} days"
    if minutes % 60 == 0:
        return f"{int(minutes // 60)} h"
    return f"{minutes:g} min"


def _stamp(iso: str | None) -> str:
    """``2023-07-01T00:00:00-05:00`` as ``2023-07-01 00:00 (UTC−05:00)``."""
    if not iso:
        return "–"
    offset = iso[19:] or "+00:00"
    return f"{iso[:10]} {iso[11:16]} (UTC{offset.replace('-', '−')})"


def _quantity(value: float | None, decimals: int = 1) -> str:
    return "–" if value is None else f"{value:,.{decimals}f}"


METER_COLUMNS = (
    Column("Meter", lambda m: m["name"]),
    Column("Utility", lambda m: utility_words(m["utility"])),
    Column("Unit found", lambda m: f"{m['unit_found']} → {m['unit']}"),
    Column("Interval", lambda m: _interval(m["interval_minutes"]), "interval_minutes"),
    Column("Total kWh", lambda m: _quantity(m["total_kwh"]), "total_kwh"),
    Column("Readings", lambda m: f"{m['count']:,}", "count"),
    Column("Coverage", lambda m: f"{m['coverage']:.1%}", "coverage"),
    Column("First", lambda m: _stamp(m["first"])),
    Column("Last", lambda m: _stamp(m["last"])),
    Column("Time zone", lambda m: m["timezone"]),
    Column("Values", lambda m: m["values"], note="values_note"),
    Column("Stamps mark", lambda m: STAMP_WORDS.get(m["stamps"], m["stamps"])),
    Column("Because", lambda m: m["stamps_note"], note="stamps_note"),
)
BILL_COLUMNS = (
    Column("Account", lambda b: b["account"]),
    Column("Unit found", lambda b: f"{b['unit_found']} → {b['unit']}"),
    Column("Billing periods", lambda b: str(b["periods"]), "periods"),
    Column("Periods are", lambda b: b["period_end"]),
    Column("First starts", lambda b: b["first_period_start"] or "–"),
    Column("Last ends", lambda b: b["last_period_end"] or "–"),
    Column("Total kWh", lambda b: _quantity(b["total_kwh"]), "total_kwh"),
    Column("Total cost", lambda b: _quantity(b["total_cost"], 2), "total_cost"),
    Column("Highest peak kW", lambda b: _quantity(b["max_peak_kw"]), "max_peak_kw"),
)
WEATHER_COLUMNS = (
    Column("Station", lambda w: w["station"]),
    Column("Unit found", lambda w: f"{w['unit_found']} → °C"),
    Column("Readings are", lambda w: "daily max/min" if w["daily_extremes"] else "temperatures"),
    Column("Interval", lambda w: _interval(w["interval_minutes"]), "interval_minutes"),
    Column("Time zone", lambda w: w["timezone"]),
    Column("First", lambda w: _stamp(w["first"])),
    Column("Last", lambda w: _stamp(w["last"])),
    Column("Readings", lambda w: f"{w['count']:,}", "count"),
    Column("Mean °C", lambda w: _quantity(w["mean_c"]), "mean_c"),
    Column("Lowest °C", lambda w: _quantity(w["min_c"]), "min_c"),
    Column("Highest °C", lambda w: _quantity(w["max_c"]), "max_c"),
)
#: A calendar's rows: its named periods, then the public holidays of the years they cover.
CALENDAR_COLUMNS = (
    Column("Name", lambda d: d["name"]),
    Column("Kind", lambda d: d["kind"]),
    Column("First day", lambda d: d["first_day"]),
    Column("Last day", lambda d: d["last_day"]),
)
FINDING_HEADERS = ("Meter", "What", "How many", "In words", "Rows in the file")
WIDEST_COLUMN = 360


def _summary(report: dict) -> str:
    name = escape(Path(report["file"]).name)
    lines = [f"<b>{name}</b> — read as {KIND_WORDS[report['kind']]}."]
    if report["kind"] == "meters":
        stamps = report["timestamps"]
        sheet = f"sheet '{escape(report['sheet'])}', " if report["sheet"] else ""
        header = f"header on row {report['header_row']}" if report["header_row"] else "no header"
        layout = (
            "one meter per column" if report["layout"] == "wide" else "one row per meter and time"
        )
        place = f"{sheet}{header}"
        lines.append(f"{place[:1].upper()}{place[1:]}; {layout}.")
        lines.append(f"Stamps: {escape(stamps['format'])}; {escape(stamps['note'])}.")
        lines.append(f"Rows left out: {report['excluded_rows']}.")
    if report["kind"] == "calendar":
        lines.append(_calendar_words(report))
    nothing = "Nothing is stored until you create a project or add the files to one."
    return "<br>".join([*lines, f"<i>{nothing}</i>"])


def _calendar_words(report: dict) -> str:
    """How many periods and public holidays, and whose holidays they are."""
    periods, holidays = len(report["periods"]), len(report["public_holidays"])
    words = f"{counted(periods, 'campus period')}"
    if report["country"] is None:
        return f"{words}; no public holidays (choose the country above to add them)."
    place = "-".join(filter(None, (report["country"], report["subdivision"])))
    return f"{words}; {holidays} public holidays of {escape(place)} in the years they cover."


def calendar_rows(report: dict) -> list[dict]:
    """The periods of a calendar report, then its public holidays as one-day rows."""
    holidays = [
        {"name": day["name"], "kind": "public holiday", "first_day": day["date"],
         "last_day": day["date"]}
        for day in report["public_holidays"]
    ]  # fmt: skip
    return [*report["periods"], *holidays]


def _rows_words(rows: list[int]) -> str:
    shown = ", ".join(str(row) for row in rows[:ROWS_SHOWN])
    more = len(rows) - ROWS_SHOWN
    return f"{shown} … and {more} more" if more > 0 else shown


class UnderstoodView(QWidget):
    """Shows one file's report, or why it could not be read."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.summary = QLabel()
        self.summary.setWordWrap(True)
        self.summary.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.table = QTableWidget()
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.verticalHeader().hide()
        self.table.setWordWrap(False)
        self.findings = QTreeWidget()
        self.findings.setHeaderLabels(FINDING_HEADERS)
        self.findings.setRootIsDecorated(False)
        self.findings.setWordWrap(True)
        self.findings_title = QLabel("<b>Findings</b>")
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.summary)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.findings_title)
        layout.addWidget(self.findings, 1)
        self.show_nothing("Add files to see what the importer understands of them.")

    def show_nothing(self, words: str) -> None:
        self.summary.setText(words)
        self._fill_table((), [])
        self.findings.clear()

    def show_problem(self, file: str, problem: str, read_as: str | None, told: bool) -> None:
        """A file that could not be read: what it was read as (``told``: the user said so,
        else its contents suggested it), the engine's message, and what to do."""
        if read_as is None:
            taken = "could not be read as any kind of file the tool knows:"
        elif told:
            taken = f"could not be read as {KIND_WORDS[read_as]}, as you said it is."
        else:
            taken = f"looks like {KIND_WORDS[read_as]} but could not be read as such."
        self.summary.setText(
            f"<b>{escape(file)}</b> {taken}<br>"
            f"<span style='color:#9b3b16'>{escape(problem)}</span><br>"
            "What is this file? Choose its kind under 'What it is' in the list above, or "
            "correct the reading settings on the left and read it again, or remove the file."
        )
        self._fill_table((), [])
        self.findings.clear()

    def show_report(self, report: dict) -> None:
        self.summary.setText(_summary(report))
        kind = report["kind"]
        if kind == "meters":
            self._fill_table(METER_COLUMNS, report["meters"])
        elif kind == "calendar":
            self._fill_table(CALENDAR_COLUMNS, calendar_rows(report))
        else:
            self._fill_table(BILL_COLUMNS if kind == "bills" else WEATHER_COLUMNS, [report])
        self._fill_findings(report)

    def _fill_table(self, columns: tuple[Column, ...], rows: list[dict]) -> None:
        self.table.clear()
        self.table.setColumnCount(len(columns))
        self.table.setRowCount(len(rows))
        self.table.setHorizontalHeaderLabels([column.header for column in columns])
        for r, row in enumerate(rows):
            for c, column in enumerate(columns):
                item = QTableWidgetItem(column.words(row))
                if column.number is not None:
                    item.setData(NUMBER_ROLE, row[column.number])
                    item.setTextAlignment(
                        Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter
                    )
                if column.note is not None:
                    item.setToolTip(row[column.note])
                self.table.setItem(r, c, item)
        self.table.resizeColumnsToContents()
        for column in range(len(columns)):
            width = self.table.columnWidth(column)
            self.table.setColumnWidth(column, min(width, WIDEST_COLUMN))

    def _fill_findings(self, report: dict) -> None:
        self.findings.clear()
        pairs = [(finding, None) for finding in report["findings"]]
        for meter in report.get("meters", []):
            pairs += [(finding, meter["name"]) for finding in meter["findings"]]
        for finding, meter in pairs:
            item = QTreeWidgetItem(
                [
                    finding["meter"] or meter or "whole file",
                    finding["kind"].replace("_", " "),
                    str(finding["count"]),
                    finding["message"],
                    _rows_words(finding["rows"]),
                ]
            )
            item.setToolTip(3, finding["message"])
            self.findings.addTopLevelItem(item)
        if not pairs:
            self.findings.addTopLevelItem(QTreeWidgetItem(["", "nothing noticed", "", "", ""]))
        for column in range(len(FINDING_HEADERS)):
            self.findings.resizeColumnToContents(column)
            width = self.findings.columnWidth(column)
            self.findings.setColumnWidth(column, min(width, WIDEST_COLUMN))
        self.findings_title.setText(f"<b>Findings</b> ({len(pairs)})")
