"""The Models screen's plots: actual against predicted over the backtest, and residual bars.

Both keep their plot items and update them with ``setData``/``setOpts``; x values are float64.
"""

from __future__ import annotations

import calendar

import numpy as np
import pandas as pd
import pyqtgraph as pg
from PySide6.QtWidgets import QHBoxLayout, QLabel, QWidget

from desktop.choices import ChoiceBox
from desktop.model_jobs import RESIDUAL_GROUPINGS, BacktestTrace
from desktop.palette import FIT_LINE, SERIES_CYCLE
from desktop.plot_panel import PlotPanel

ACTUAL_COLOUR = SERIES_CYCLE[0]
PREDICTED_COLOUR = FIT_LINE
#: Residual bars: the model predicted too little (positive) or too much (negative).
UNDER_COLOUR, OVER_COLOUR = SERIES_CYCLE[1], SERIES_CYCLE[3]
_RESOLUTION_WORDS = {"hour": "per hour", "day": "per day", "month": "per month"}


class BacktestPanel(PlotPanel):
    """Metered energy and the chosen model's one-month-ahead forecasts of it."""

    def __init__(self, parent: QWidget | None = None) -> None:
        dates = pg.DateAxisItem(orientation="bottom", utcOffset=0)
        super().__init__(
            "Backtest: actual and predicted",
            "local date",
            "energy (kWh)",
            axis_items={"bottom": dates},
            parent=parent,
        )
        self.actual = pg.PlotDataItem(pen=pg.mkPen(ACTUAL_COLOUR, width=1.5), connect="finite")
        self.predicted = pg.PlotDataItem(
            pen=pg.mkPen(PREDICTED_COLOUR, width=1.5), connect="finite"
        )
        for curve in (self.actual, self.predicted):
            curve.setClipToView(True)
            curve.setDownsampling(auto=True, method="peak")
            self.plot.addItem(curve)

    def show_trace(self, trace: BacktestTrace) -> None:
        """Draw the trace; a monthly trace gets markers, since it has few points."""
        marks = {"symbol": "o", "symbolSize": 6} if trace.resolution == "month" else {}
        for curve, values, colour in (
            (self.actual, trace.actual, ACTUAL_COLOUR),
            (self.predicted, trace.predicted, PREDICTED_COLOUR),
        ):
            curve.setData(
                trace.x,
                values,
                symbol=marks.get("symbol"),
                symbolSize=marks.get("symbolSize", 6),
                symbolBrush=colour,
                symbolPen=None,
            )
        unit = _RESOLUTION_WORDS[trace.resolution]
        self.plot.getAxis("left").setLabel(f"energy {unit} (kWh)")
        self.set_key([("━", "metered", ACTUAL_COLOUR), ("━", "predicted", PREDICTED_COLOUR)])
        self.plot.enableAutoRange()
        caption = (
            f"Each month forecast from the start of that month ({trace.condition}), energy {unit}."
        )
        if trace.resolution == "month":
            caption += " The project keeps month totals only: fit again to see every hour."
        self._show_plot(caption)


class ResidualPanel(PlotPanel):
    """Residual % of the chosen model by hour of day, weekday or month (pick one)."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Residuals", "", "residual (% of actual)", parent=parent)
        self.grouping = ChoiceBox(tuple((words, key) for key, words in RESIDUAL_GROUPINGS.items()))
        self.grouping.activated.connect(self._draw)
        pick = QHBoxLayout()
        pick.addWidget(QLabel("by"))
        pick.addWidget(self.grouping)
        pick.addStretch(1)
        self.layout().insertLayout(1, pick)
        self.bars = pg.BarGraphItem(x=[], height=[], width=0.7, pen=None)
        self.plot.addItem(self.bars)
        self.plot.addLine(y=0.0, pen=pg.mkPen("#5a5f66", width=1))
        self.residuals: dict[str, pd.Series] = {}
        self.condition = ""

    def show_residuals(self, residuals: dict[str, pd.Series], condition: str) -> None:
        """Keep the engine's residual tables and draw the grouping picked."""
        self.residuals = residuals
        self.condition = condition
        self._draw()

    def shown(self) -> pd.Series:
        """Residual % per group of the grouping on show, as drawn."""
        return self.residuals.get(self.grouping.value(), pd.Series(dtype=np.float64))

    def _draw(self) -> None:
        table = self.shown()
        if table.empty:
            self.show_note("No residuals to show for this grouping.")
            return
        x = np.arange(len(table), dtype=np.float64)
        height = table.to_numpy(dtype=np.float64)
        brushes = [UNDER_COLOUR if value >= 0 else OVER_COLOUR for value in height]
        self.bars.setOpts(x=x, height=height, brushes=brushes)
        self.plot.getAxis("bottom").setTicks([_ticks(self.grouping.value(), table.index)])
        self.plot.getAxis("bottom").setLabel(self.grouping.currentText())
        self.plot.setXRange(-0.6, len(table) - 0.4, padding=0)
        self.plot.enableAutoRange(axis="y")
        self.set_key([("■", "predicts too little", UNDER_COLOUR), ("■", "too much", OVER_COLOUR)])
        self._show_plot(
            f"100 × (actual − predicted) / actual per group, one-month-ahead forecasts "
            f"({self.condition})."
        )


def _ticks(grouping: str, labels: pd.Index) -> list[tuple[float, str]]:
    """Tick words: every third hour, weekdays and months abbreviated."""
    if grouping == "hour":
        return [(float(i), f"{int(h):02d}") for i, h in enumerate(labels) if int(h) % 3 == 0]
    if grouping == "month":
        abbreviations = {calendar.month_name[m]: calendar.month_abbr[m] for m in range(1, 13)}
        return [(float(i), abbreviations.get(str(m), str(m))) for i, m in enumerate(labels)]
    return [(float(i), str(day)[:3]) for i, day in enumerate(labels)]
