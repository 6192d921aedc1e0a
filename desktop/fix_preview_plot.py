"""The Cleaning screen's before/after plot of one finding and its fix.

x values are true UTC instants in Unix seconds, so readings around a clock change stay in
order; the axis writes them on the site's clock.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor
from PySide6.QtWidgets import QWidget

from desktop.cleaning_jobs import FixPreview
from desktop.cleaning_words import finding_name, step_name
from desktop.palette import FIT_LINE, INK, SERIES_CYCLE
from desktop.plot_panel import PlotPanel
from engine.cleaning import CleanedSeries
from engine.words import counted

_EPOCH = pd.Timestamp("1970-01-01", tz="UTC")
_SECOND = pd.Timedelta(seconds=1)

BEFORE_COLOUR = INK
AFTER_COLOUR = SERIES_CYCLE[0]
ESTIMATED_COLOUR = SERIES_CYCLE[1]


def _unix_seconds(index: pd.DatetimeIndex) -> np.ndarray:
    return ((index - _EPOCH) / _SECOND).to_numpy(dtype=np.float64)


def _faded(colour: str, alpha: int) -> QColor:
    shade = pg.mkColor(colour)
    shade.setAlpha(alpha)
    return shade


class SiteTimeAxis(pg.DateAxisItem):
    """A date axis over UTC seconds whose labels read the site's clock, clock changes included.

    Ticks are placed for the site's offset at the start of the view; each label is then the
    true local time of its tick, so a label after a clock change says so rather than lie.
    """

    def __init__(self) -> None:
        super().__init__(orientation="bottom", utcOffset=0)
        self.zone = "UTC"

    def set_zone(self, zone: str, around: pd.Timestamp) -> None:
        self.zone = zone
        offset = around.tz_convert(zone).utcoffset() or pd.Timedelta(0)
        self.utcOffset = -int(offset.total_seconds())
        self.picture = None
        self.update()

    def tickStrings(self, values, scale, spacing):
        spec = next((s for s in self.zoomLevel.tickSpecs if s.spacing == spacing), None)
        if spec is None or spacing < 1 or not len(values):
            return super().tickStrings(values, scale, spacing)
        stamps = pd.to_datetime(np.asarray(values, dtype=np.float64), unit="s", utc=True)
        return [stamp.strftime(spec.format) for stamp in stamps.tz_convert(self.zone)]


class FixPreviewPlot(PlotPanel):
    """The readings as recorded around a finding, and the same stretch with its fix applied.

    Estimated values (filled or changed by a step) are drawn dashed in their own colour; the
    finding's range is shaded.
    """

    def __init__(self, parent: QWidget | None = None) -> None:
        axis = SiteTimeAxis()
        super().__init__(
            "Before and after",
            "site time",
            "energy per interval (kWh)",
            axis_items={"bottom": axis},
            parent=parent,
        )
        self.axis = axis
        item = self.plot.getPlotItem()
        item.setDownsampling(auto=True, mode="peak")
        item.setClipToView(True)
        self.span = pg.LinearRegionItem(
            movable=False,
            brush=pg.mkBrush(_faded(FIT_LINE, 28)),
            pen=pg.mkPen(_faded(FIT_LINE, 90)),
        )
        steps = {"connect": "finite", "stepMode": "right"}
        self.before = pg.PlotDataItem(pen=pg.mkPen(_faded(BEFORE_COLOUR, 70), width=5), **steps)
        self.after = pg.PlotDataItem(pen=pg.mkPen(AFTER_COLOUR, width=1.5), **steps)
        self.estimated = pg.PlotDataItem(
            pen=pg.mkPen(ESTIMATED_COLOUR, width=2, style=Qt.PenStyle.DashLine), **steps
        )
        for shown in (self.span, self.before, self.after, self.estimated):
            self.plot.addItem(shown)
        self.curves = (self.before, self.after)
        self.show_note("Select a finding to see its readings before and after its fix.")

    def show_preview(self, preview: FixPreview) -> None:
        """Draw ``preview``: the recorded readings, and with the fix when there is one."""
        finding = preview.finding
        before = preview.before
        if not before.notna().any():
            self.show_note("There are no readings around this finding to draw.")
            return
        self.axis.set_zone(preview.timezone, before.index[0])
        x = _unix_seconds(before.index)
        self.before.setData(x, before.to_numpy(dtype=np.float64))
        self.span.setRegion(_unix_seconds(pd.DatetimeIndex([finding.start, finding.end])))
        key = [("━", "as recorded", _faded(BEFORE_COLOUR, 110).name(QColor.NameFormat.HexArgb))]
        after = preview.after
        if after is None:
            for curve in (self.after, self.estimated):
                curve.setData([], [])
            caption = f"This {finding_name(finding.kind)} has no fix: nothing would change."
        else:
            values = after.values.to_numpy(dtype=np.float64)
            estimated = after.estimated.to_numpy(dtype=bool)
            self.after.setData(x, np.where(estimated, np.nan, values))
            self._draw_estimated(x, values, estimated)
            key += [("━", "after the fix", AFTER_COLOUR), ("╍", "estimated", ESTIMATED_COLOUR)]
            caption = self._caption(preview, after, estimated)
        self.set_key([*key, ("■", "the finding", FIT_LINE)])
        self.plot.setXRange(x[0], x[-1], padding=0.01)
        self.plot.enableAutoRange(axis="y")
        self._show_plot(caption)

    def _draw_estimated(self, x: np.ndarray, values: np.ndarray, estimated: np.ndarray) -> None:
        """Estimated values as dashed steps (nothing when none is in view)."""
        if not (estimated & np.isfinite(values)).any():
            self.estimated.setData([], [])
            return
        self.estimated.setData(x, np.where(estimated, values, np.nan))

    @staticmethod
    def _caption(preview: FixPreview, after: CleanedSeries, estimated: np.ndarray) -> str:
        fix = preview.finding.fix
        logged = preview.logged_steps
        basis = f"the {counted(logged, 'logged step')} and " if logged else ""
        excluded = int(after.excluded.sum())
        left_out = (
            f" {counted(excluded, 'interval')} in view left out of fitting." if excluded else ""
        )
        return (
            f"After: {basis}the step “{step_name(fix.kind)}”, replayed on a copy (nothing is "
            f"saved). {counted(int(estimated.sum()), 'estimated value')} in view.{left_out}"
        )
