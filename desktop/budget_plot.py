"""The Budget screen's plot: one budgeted thing's monthly P50 with its low–high range.

Pick the campus, a utility roll-up or a meter. Each month's range is a floating bar from the
run's lowest to its highest P-level (P10 to P90 by default), its P50 a dot on a line through
the months, and the energy metered to date (in a month under way) a diamond.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QHBoxLayout, QLabel, QWidget

from desktop.budget_table import item_title
from desktop.choices import ChoiceBox
from desktop.palette import SERIES_CYCLE
from desktop.plot_panel import PlotPanel
from engine.budget.result import BudgetRun
from engine.export.finance_tables import Budgeted, budgeted
from engine.meter_labels import Labels

MEDIAN_COLOUR = SERIES_CYCLE[0]
TO_DATE_COLOUR = SERIES_CYCLE[1]
#: Alpha of the range bars' fill, as the last two hex digits of pyqtgraph's #RRGGBBAA.
RANGE_ALPHA = "55"
RANGE_WIDTH = 0.5
#: Every this many months a label is always written; those between only where they fit.
LABEL_EVERY = 3


def range_bars() -> pg.BarGraphItem:
    """Floating bars, one per month, from its lowest to its highest P-level (set with
    ``setOpts(x=, y0=, height=)``)."""
    return pg.BarGraphItem(
        x=[],
        y0=[],
        height=[],
        width=RANGE_WIDTH,
        brush=pg.mkBrush(MEDIAN_COLOUR + RANGE_ALPHA),
        pen=pg.mkPen(MEDIAN_COLOUR, width=1),
    )


def marked_line(
    colour: str, symbol: str, size: int, style: Qt.PenStyle = Qt.PenStyle.SolidLine
) -> pg.PlotDataItem:
    """A line through the months with a filled ``symbol`` at each."""
    return pg.PlotDataItem(
        pen=pg.mkPen(colour, width=2, style=style),
        symbol=symbol,
        symbolSize=size,
        symbolBrush=colour,
        symbolPen=None,
    )


def month_ticks(months: list[str]) -> list[list[tuple[float, str]]]:
    """Month labels for a bottom axis at 0, 1, 2, ...: those always written, then those
    written where they fit (pyqtgraph writes the first level always and the next only where it
    leaves room, so a fiscal year on a laptop screen shows every third month, not a smudge)."""
    ticks = [(float(i), month) for i, month in enumerate(months)]
    always = ticks[::LABEL_EVERY]
    return [always, [tick for tick in ticks if tick not in always]]


class BudgetRangePanel(PlotPanel):
    """Monthly P50, the P-low–P-high band and the actual to date of the thing picked."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Monthly range", "budget month", "energy (kWh)", parent=parent)
        self.pick = ChoiceBox(())
        self.pick.setMinimumContentsLength(28)
        self.pick.activated.connect(self._draw)
        row = QHBoxLayout()
        row.addWidget(QLabel("Show"))
        row.addWidget(self.pick, 1)  # the panel's width: "Campus, … (8 meters and 1 bill account)"
        self.layout().insertLayout(1, row)
        self.ranges = range_bars()
        self.median = marked_line(MEDIAN_COLOUR, "o", 8)
        self.to_date = pg.ScatterPlotItem(
            symbol="d", size=11, brush=pg.mkBrush(TO_DATE_COLOUR), pen=None
        )
        for item in (self.ranges, self.median, self.to_date):
            self.plot.addItem(item)
        self.run: BudgetRun | None = None
        self.items: dict[str, Budgeted] = {}
        #: The month labels asked of the axis: those always written, then those that may be.
        self.month_labels: list[list[tuple[float, str]]] = [[], []]

    def show_run(self, run: BudgetRun, labels: Labels | None = None) -> None:
        """Offer every budgeted thing of ``run`` (the campus first; meters named by
        ``labels``) and draw the one picked before, else the first."""
        picked = self.items.get(self.pick.value())
        self.run = run
        self.items = {item_title(item): item for item in budgeted(run, labels)}
        self.pick.clear()
        for title in self.items:
            self.pick.addItem(title, title)
        if picked is not None:
            same = (
                t for t, i in self.items.items() if (i.scope, i.name) == (picked.scope, picked.name)
            )
            self.pick.set_value(next(same, None))
        self._draw()

    def _draw(self) -> None:
        run = self.run
        item = self.items.get(self.pick.value())
        if run is None or item is None:
            return
        low, high = f"{min(run.levels)}", f"{max(run.levels)}"
        x = np.arange(len(item.months), dtype=np.float64)
        quantile = {
            level: np.array([m.energy.quantiles[level] for m in item.months])
            for level in (low, "50", high)
        }
        self.ranges.setOpts(x=x, y0=quantile[low], height=quantile[high] - quantile[low])
        self.median.setData(x, quantile["50"])
        actual = np.array([m.actual_to_date for m in item.months])
        under_way = actual > 0
        self.to_date.setData(x[under_way], actual[under_way])
        self.month_labels = month_ticks([m.period for m in item.months])
        self.plot.getAxis("bottom").setTicks(self.month_labels)
        self.plot.setXRange(-0.5, len(x) - 0.5, padding=0.02)
        self.plot.enableAutoRange(axis="y")
        key = [("●", "P50", MEDIAN_COLOUR), ("▯", f"P{low} to P{high}", MEDIAN_COLOUR)]
        if under_way.any():
            key.append(("◆", "metered to date", TO_DATE_COLOUR))
        self.set_key(key)
        self._show_plot(
            f"Energy per month in kWh: half of the simulated futures lie below P50; P{low} to "
            f"P{high} holds {int(high) - int(low)} % of them."
        )

    def drawn_median(self) -> np.ndarray:
        """The P50 values drawn, in kWh."""
        return self.median.getData()[1]
