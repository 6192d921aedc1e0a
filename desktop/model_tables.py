"""The Models screen's tables: the engine's ranking of the backtested models, and the chosen
model's effects in physical units."""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd
from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.number_cells import number_cell
from desktop.palette import TONES
from desktop.understood_view import NUMBER_ROLE
from engine.scoring import GUIDELINE14_LIMITS

#: Data role holding a ranking row's model identifier (on its model cell).
MODEL_ROLE = Qt.ItemDataRole.UserRole + 1
RECOMMENDED_TINT = TONES["done"][0]
#: Put before the recommended model's rank.
RECOMMENDED_MARK = "✔"


@dataclass(frozen=True)
class RankColumn:
    """A ranking column: its header, the engine's column behind it and how to write a value."""

    header: str
    source: str
    digits: int | None = None  # None: not a number


RANK_COLUMNS = (
    RankColumn("Rank", "rank"),
    RankColumn("Model", "name"),
    RankColumn("Month-total\nerror %", "month-total MAPE %", 1),
    RankColumn("CV(RMSE)\n%", "CV(RMSE) %", 1),
    RankColumn("NMBE\n%", "NMBE %", 1),
    RankColumn("Guideline\n14", "meets Guideline 14"),
    RankColumn("Failed\norigins", "origins failed"),
)
RANK_HEADERS = tuple(column.header for column in RANK_COLUMNS)
COEFFICIENT_HEADERS = ("Effect", "Value", "Unit", "What it means")


def guideline_words() -> str:
    """Guideline 14's limits in words, from the engine's own table of them."""
    hourly, monthly = GUIDELINE14_LIMITS["hourly"], GUIDELINE14_LIMITS["monthly"]
    return (
        f"ASHRAE Guideline 14: CV(RMSE) ≤ {hourly[0]:g} % and NMBE within ±{hourly[1]:g} % per "
        f"interval, ≤ {monthly[0]:g} % and ±{monthly[1]:g} % on month totals, held in the "
        "actual-weather backtest."
    )


def _table(headers: tuple[str, ...], stretch: int) -> QTableWidget:
    table = QTableWidget(0, len(headers))
    table.setHorizontalHeaderLabels(headers)
    table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
    table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    table.verticalHeader().hide()
    table.setWordWrap(False)
    header = table.horizontalHeader()
    header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
    header.setSectionResizeMode(stretch, QHeaderView.ResizeMode.Stretch)
    return table


def _text_cell(column: RankColumn, value: object) -> QTableWidgetItem:
    if column.source == "meets Guideline 14":
        return QTableWidgetItem("met" if value else "not met")
    return QTableWidgetItem(str(value))


class TitledTable(QWidget):
    """A bold title over a table, or over a note saying why there is no table."""

    def __init__(self, title: str, table: QTableWidget, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.title = QLabel(f"<b>{title}</b>")
        self.table = table
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setStyleSheet("color: #5a5f66;")
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.title)
        layout.addWidget(self.note)
        layout.addWidget(self.table, 1)

    def show_note(self, words: str) -> None:
        """Say ``words`` above the table (nothing when empty); the table is emptied."""
        self.table.setRowCount(0)
        self.set_note(words)

    def set_note(self, words: str) -> None:
        self.note.setText(words)
        self.note.setVisible(bool(words))


class RankingTable(TitledTable):
    """The engine's ranking, best first, with the recommended model's row marked."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Backtest ranking", _table(RANK_HEADERS, 1), parent)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)

    def show_ranking(self, ranking: pd.DataFrame, chosen: str | None, condition: str) -> None:
        """One row per model; the row of ``chosen`` is tinted, bold and says so."""
        self.set_note(
            f"{RECOMMENDED_MARK} marks the recommended model. Ranked on one-month-ahead month "
            f"totals in the {condition} backtest. " + guideline_words()
        )
        self.table.setRowCount(len(ranking))
        for r, row in enumerate(ranking.to_dict(orient="records")):
            recommended = row["model"] == chosen
            for c, column in enumerate(RANK_COLUMNS):
                value = row[column.source]
                if column.digits is not None:
                    cell = number_cell(value, column.digits)
                else:
                    cell = _text_cell(column, value)
                if column.source == "name":
                    cell.setData(MODEL_ROLE, row["model"])
                if column.source == "rank" and recommended:
                    cell.setText(f"{RECOMMENDED_MARK} {value}")
                cell.setToolTip(str(row.get("reason", "")))
                if recommended:
                    font = QFont(cell.font())
                    font.setBold(True)
                    cell.setFont(font)
                    cell.setBackground(QBrush(QColor(RECOMMENDED_TINT)))
                self.table.setItem(r, c, cell)

    def selected(self) -> str | None:
        """The model identifier of the selected row, if any."""
        rows = self.table.selectionModel().selectedRows()
        if not rows:
            return None
        return self.table.item(rows[0].row(), RANK_HEADERS.index("Model")).data(MODEL_ROLE)

    def recommended(self) -> str | None:
        """The model identifier of the marked row, if any."""
        rank, model = RANK_HEADERS.index("Rank"), RANK_HEADERS.index("Model")
        for r in range(self.table.rowCount()):
            if self.table.item(r, rank).text().startswith(RECOMMENDED_MARK):
                return self.table.item(r, model).data(MODEL_ROLE)
        return None

    def row_of(self, model: str) -> dict[str, object]:
        """Header (on one line) → the number, or for a column of words the text, in ``model``'s
        row."""
        column = RANK_HEADERS.index("Model")
        for r in range(self.table.rowCount()):
            if self.table.item(r, column).data(MODEL_ROLE) != model:
                continue
            cells = [self.table.item(r, c) for c in range(len(RANK_COLUMNS))]
            return {
                spec.header.replace("\n", " "): cell.text()
                if spec.digits is None
                else cell.data(NUMBER_ROLE)
                for spec, cell in zip(RANK_COLUMNS, cells, strict=True)
            }
        raise KeyError(model)


class CoefficientsTable(TitledTable):
    """The chosen model's effects: what each term adds, in physical units and plain words."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("What the chosen model says", _table(COEFFICIENT_HEADERS, 3), parent)
        self.table.setWordWrap(True)

    def show_statements(self, statements: pd.DataFrame) -> None:
        """Draw a model's ``coefficients_table()`` (term, value, unit, meaning)."""
        self.set_note("")
        self.table.setRowCount(len(statements))
        for r, row in enumerate(statements.itertuples(index=False)):
            cells = (
                QTableWidgetItem(row.term),
                number_cell(row.value, 2),
                QTableWidgetItem(row.unit),
                QTableWidgetItem(row.meaning),
            )
            for c, cell in enumerate(cells):
                cell.setToolTip(row.meaning)
                self.table.setItem(r, c, cell)
        self.table.resizeRowsToContents()
