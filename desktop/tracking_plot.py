"""The Track step's chart: one tracked thing's actual month by month against the adopted range.

Each month's adopted range is a floating bar from the lowest to the highest P-level (P10 to
P90 by default) with its P50 a dot on a line; the actual of each complete month is a square on
a line (ringed where it fell outside the range); the month under way shows its actual to date
as a hollow square beside a bar at the P50 to date; and the year-end outlook's P50 of the
months not yet complete (a fresh forecast from the as-of date) is a dashed line."""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QWidget

from desktop.budget_plot import MEDIAN_COLOUR, marked_line, month_ticks, range_bars
from desktop.palette import FIT_LINE, SERIES_CYCLE
from desktop.plot_panel import PlotPanel
from desktop.tracking_jobs import Tracked
from engine.steps.tracking import COMPLETE, UNDER_WAY

ACTUAL_COLOUR = SERIES_CYCLE[1]
OUTLOOK_COLOUR = SERIES_CYCLE[2]
OUTSIDE_COLOUR = FIT_LINE


def _hollow(symbol: str, size: int, colour: str, width: int = 2) -> pg.ScatterPlotItem:
    """Marks drawn as outlines only."""
    return pg.ScatterPlotItem(
        symbol=symbol, size=size, brush=None, pen=pg.mkPen(colour, width=width)
    )


class TrackingPanel(PlotPanel):
    """Adopted P50 and range, the actuals, and the outlook of the months still to come."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(
            "Actual against the adopted range", "budget month", "energy (kWh)", parent=parent
        )
        self.ranges = range_bars()
        self.median = marked_line(MEDIAN_COLOUR, "o", 7)
        self.actual = marked_line(ACTUAL_COLOUR, "s", 9)
        self.to_date = _hollow("s", 10, ACTUAL_COLOUR)
        self.budget_to_date = _hollow("_", 26, MEDIAN_COLOUR, width=3)
        self.outside = _hollow("o", 20, OUTSIDE_COLOUR)
        self.outlook = marked_line(OUTLOOK_COLOUR, "t", 8, Qt.PenStyle.DashLine)
        for item in (self.ranges, self.median, self.outlook, self.actual, self.budget_to_date):
            self.plot.addItem(item)
        self.plot.addItem(self.to_date)
        self.plot.addItem(self.outside)

    def show_item(self, item: Tracked, levels: list[str]) -> None:
        """Draw ``item``'s months against the adopted ``levels`` (lowest, ..., highest)."""
        months = item.months
        low, high = levels[0], levels[-1]
        x = np.arange(len(months), dtype=np.float64)
        quantile = {
            level: np.array([m["budget"]["quantiles"][level] for m in months])
            for level in (low, "50", high)
        }
        self.ranges.setOpts(x=x, y0=quantile[low], height=quantile[high] - quantile[low])
        self.median.setData(x, quantile["50"])
        status = np.array([m["status"] for m in months])
        actual = np.array([np.nan if m["actual"] is None else m["actual"] for m in months])
        done = status == COMPLETE
        self.actual.setData(x[done], actual[done])
        under_way = status == UNDER_WAY
        self.to_date.setData(x[under_way], actual[under_way])
        to_date = np.array(
            [np.nan if m["budget_to_date"] is None else m["budget_to_date"] for m in months]
        )
        self.budget_to_date.setData(x[under_way], to_date[under_way])
        outside = np.array([bool(m["outside_range"]) for m in months])
        self.outside.setData(x[outside], actual[outside])
        self._draw_outlook(item, status != COMPLETE)
        self.plot.getAxis("bottom").setTicks(month_ticks([m["month"] for m in months]))
        self.plot.setXRange(-0.5, len(x) - 0.5, padding=0.02)
        self.plot.enableAutoRange(axis="y")
        self.set_key(self._key(low, high, under_way.any(), outside.any()))
        caption = (
            f"Energy per month in kWh. The bar is the range adopted for the month (P{low} to "
            f"P{high}), the dot its P50"
        )
        if under_way.any():
            caption += "; the month under way shows its actual and P50 to date"
        self._show_plot(caption + ".")

    def _draw_outlook(self, item: Tracked, ahead: np.ndarray) -> None:
        """The outlook's P50 of the months not yet complete (the month under way whole)."""
        outlook = {m["month"]: m["quantiles"]["50"] for m in item.group.get("outlook_months", [])}
        y = np.array([outlook.get(m["month"], np.nan) for m in item.months])
        keep = ahead & np.isfinite(y)
        self.outlook.setData(np.flatnonzero(keep).astype(np.float64), y[keep])

    def _key(self, low: str, high: str, under_way: bool, outside: bool) -> list:
        key = [
            ("●", "adopted P50", MEDIAN_COLOUR),
            ("▯", f"adopted P{low} to P{high}", MEDIAN_COLOUR),
            ("■", "actual", ACTUAL_COLOUR),
        ]
        if under_way:
            key.append(("□", "actual to date (incomplete)", ACTUAL_COLOUR))
            key.append(("▬", "adopted P50 to date", MEDIAN_COLOUR))
        if outside:
            key.append(("○", f"outside P{low}–P{high}", OUTSIDE_COLOUR))
        drawn = self.outlook.getData()[0]
        if drawn is not None and len(drawn):
            key.append(("▼", "outlook P50 (fresh forecast)", OUTLOOK_COLOUR))
        return key

    def drawn_actual(self) -> np.ndarray:
        """The actuals of complete months drawn, in kWh."""
        return self.actual.getData()[1]
