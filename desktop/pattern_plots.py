"""The Patterns screen's plots. Each keeps its plot items and updates them with ``setData``.

All x values are float64: hours of the day, months, shares of time, °C, or Unix seconds for
dates (local dates drawn as if they were UTC, so that the date axis prints them unshifted).
"""

from __future__ import annotations

import calendar
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyqtgraph as pg
from PySide6.QtCore import QRectF
from PySide6.QtWidgets import (
    QWidget,
)

from desktop.palette import FIT_LINE, INK, SERIES_CYCLE, heat_colour_map, series_colour
from desktop.plot_panel import PlotPanel
from engine.profiles import TemperatureResponse, quantile_column
from engine.units import from_celsius, per_degree_in

_EPOCH = pd.Timestamp("1970-01-01")
_SECOND = pd.Timedelta(seconds=1)


def _pen(colour: str, width: float = 2.0) -> pg.mkPen:
    return pg.mkPen(colour, width=width)


def _brush(colour: str, alpha: int) -> pg.mkBrush:
    brush = pg.mkBrush(colour)
    shade = brush.color()
    shade.setAlpha(alpha)
    return pg.mkBrush(shade)


def _hour_ticks(step: int) -> list[list[tuple[float, str]]]:
    return [[(float(hour), f"{hour:02d}:00") for hour in range(0, 25, step)]]


@dataclass
class _Band:
    """One group's mean line and its P10–P90 band."""

    colour: str
    mean: pg.PlotDataItem
    low: pg.PlotCurveItem
    high: pg.PlotCurveItem
    fill: pg.FillBetweenItem


class TypicalDayPanel(PlotPanel):
    """Mean demand through the local day per group of days, with the P10–P90 band."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Typical day", "local time of day", "demand (kW)", parent=parent)
        self.plot.getAxis("bottom").setTicks(_hour_ticks(3))
        self.bands: dict[str, _Band] = {}

    def _band(self, group: str, position: int) -> _Band:
        if group not in self.bands:
            colour = series_colour(group, position)
            mean = pg.PlotDataItem(pen=_pen(colour), antialias=True)
            low, high = pg.PlotCurveItem(), pg.PlotCurveItem()
            fill = pg.FillBetweenItem(low, high, brush=_brush(colour, 50))
            self.plot.addItem(fill)
            self.plot.addItem(mean)
            self.bands[group] = _Band(colour, mean, low, high, fill)
        return self.bands[group]

    def show_table(self, table: pd.DataFrame) -> None:
        """Draw :func:`engine.profiles.typical_day`'s table."""
        low_column, high_column = quantile_column(0.1), quantile_column(0.9)
        groups = list(dict.fromkeys(table["group"]))
        key = []
        for position, group in enumerate(groups):
            rows = table[table["group"] == group]
            hours = rows["hour"].to_numpy(dtype=np.float64)
            band = self._band(group, position)
            band.mean.setData(hours, rows["mean kW"].to_numpy(dtype=np.float64))
            band.low.setData(hours, rows[low_column].to_numpy(dtype=np.float64))
            band.high.setData(hours, rows[high_column].to_numpy(dtype=np.float64))
            key.append(("━", f"{group} ({int(rows['days'].max())} days)", band.colour))
        self.set_key(key)
        for group, band in self.bands.items():
            band.mean.setVisible(group in groups)
            band.fill.setVisible(group in groups)
        self.plot.setXRange(0, 24, padding=0.01)
        self.plot.enableAutoRange(axis="y")
        self._show_plot("Lines: mean demand. Shaded: P10 to P90 of the days in each group.")


class HeatMapPanel(PlotPanel):
    """Energy of each local hour (up) on each local date (across), on our own colour scale."""

    def __init__(self, parent: QWidget | None = None) -> None:
        dates = pg.DateAxisItem(orientation="bottom", utcOffset=0)
        super().__init__(
            "Hour × date", "local date", "local hour", axis_items={"bottom": dates}, parent=parent
        )
        self.plot.getAxis("left").setTicks(_hour_ticks(6))
        self.image = pg.ImageItem(axisOrder="col-major")
        self.colours = heat_colour_map()
        self.image.setColorMap(self.colours)
        self.plot.addItem(self.image)
        self.scale = pg.ColorBarItem(
            colorMap=self.colours, label="kWh in the hour", interactive=False, width=14
        )
        self.scale.setImageItem(self.image, insert_in=self.plot.getPlotItem())
        self.scale.getAxis("right").setTextPen(INK)

    def show_matrix(self, matrix: pd.DataFrame) -> None:
        """Draw :func:`engine.profiles.heat_map`'s matrix (rows local dates, columns hours)."""
        values = matrix.to_numpy(dtype=np.float64)
        present = values[np.isfinite(values)]
        if present.size == 0:
            self.show_note("No local hour has all of its readings, so there is nothing to map.")
            return
        low, high = np.percentile(present, [1.0, 99.0])
        high = high if high > low else low + 1.0
        first = (matrix.index[0] - _EPOCH) / _SECOND
        self.image.setImage(values, autoLevels=False, levels=(low, high))
        self.image.setRect(QRectF(first, 0.0, len(matrix) * 86400.0, 24.0))
        self.scale.setLevels((low, high))
        self.plot.setXRange(first, first + len(matrix) * 86400.0, padding=0)
        self.plot.setYRange(0, 24, padding=0)
        self._show_plot(
            "Colour scale spans the 1st to 99th percentile of the hours; blank hours lack readings."
        )


class MonthlyPanel(PlotPanel):
    """Energy per local calendar month, one bar per year; pale bars are partly covered months."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("Monthly totals by year", "month", "energy (kWh)", parent=parent)
        ticks = [(float(month), calendar.month_abbr[month]) for month in range(1, 13)]
        # every other month always, the rest where they fit: twelve names do not fit a third
        # of a laptop screen (pyqtgraph writes a second tick level only where it has room)
        self.month_labels = [ticks[::2], ticks[1::2]]
        self.plot.getAxis("bottom").setTicks(self.month_labels)
        self.bars: dict[str, pg.BarGraphItem] = {}

    def _bars_for(self, year: str, position: int) -> pg.BarGraphItem:
        if year not in self.bars:
            colour = series_colour(year, position)
            bars = pg.BarGraphItem(x=[], height=[], width=0.1, brush=colour, pen=None)
            self.plot.addItem(bars)
            self.bars[year] = bars
        return self.bars[year]

    def show_table(self, monthly: pd.DataFrame) -> None:
        """Draw :func:`engine.profiles.monthly_totals_by_year`'s table."""
        years = [
            column.removesuffix(" kWh") for column in monthly.columns if column.endswith("kWh")
        ]
        months = monthly.index.to_numpy(dtype=np.float64)
        width = 0.84 / max(len(years), 1)
        key = []
        for position, year in enumerate(years):
            kwh = monthly[f"{year} kWh"].to_numpy(dtype=np.float64)
            coverage = monthly[f"{year} coverage %"].to_numpy(dtype=np.float64)
            present = np.isfinite(kwh)
            colour = series_colour(year, position)
            full, pale = _brush(colour, 255), _brush(colour, 80)
            bars = self._bars_for(year, position)
            bars.setOpts(
                x=months[present] + (position - (len(years) - 1) / 2) * width,
                height=kwh[present],
                width=width * 0.92,
                brush=full,
                brushes=[full if c >= 99.5 else pale for c in coverage[present]],
            )
            key.append(("■", year, colour))
        self.set_key(key)
        for year, bars in self.bars.items():
            bars.setVisible(year in years)
        self.plot.setXRange(0.4, 12.6, padding=0)
        self.plot.enableAutoRange(axis="y")
        self._show_plot("Pale bars: months with readings missing (the total covers fewer days).")


class DurationPanel(PlotPanel):
    """Load-duration curve: demand against the share of time it is met or exceeded."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(
            "Load duration", "share of time at or above (%)", "demand (kW)", parent=parent
        )
        colour = SERIES_CYCLE[0]
        self.curve = pg.PlotDataItem(
            pen=_pen(colour), fillLevel=0.0, brush=_brush(colour, 45), antialias=True
        )
        self.plot.addItem(self.curve)

    def show_table(self, duration: pd.DataFrame) -> None:
        """Draw :func:`engine.profiles.load_duration`'s table."""
        share = duration["% of time"].to_numpy(dtype=np.float64)
        demand = duration["kW"].to_numpy(dtype=np.float64)
        self.curve.setData(share, demand)
        self.plot.setXRange(0, 100, padding=0.01)
        self.plot.enableAutoRange(axis="y")
        self._show_plot(f"Highest {demand[0]:,.1f} kW, lowest {demand[-1]:,.1f} kW.")


class TemperaturePanel(PlotPanel):
    """Daily energy against daily mean outdoor temperature with the fitted change-point line."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(
            "Energy against temperature",
            "daily mean outdoor temperature (°C)",
            "energy per day (kWh)",
            parent=parent,
        )
        self.points: dict[str, pg.ScatterPlotItem] = {}
        self.line = pg.PlotDataItem(pen=_pen(FIT_LINE, 2.5), antialias=True)
        self.plot.addItem(self.line)

    def _points_for(self, day_type: str, position: int) -> pg.ScatterPlotItem:
        if day_type not in self.points:
            colour = series_colour(day_type, position)
            points = pg.ScatterPlotItem(size=5, pen=None, brush=_brush(colour, 170))
            self.plot.addItem(points)
            self.line.setZValue(1)
            self.points[day_type] = points
        return self.points[day_type]

    def show_response(self, response: TemperatureResponse, unit: str = "°C") -> None:
        """Draw :func:`engine.profiles.energy_vs_temperature`'s points and line, temperatures
        in ``unit`` (°C or °F)."""
        self.plot.getAxis("bottom").setLabel(f"daily mean outdoor temperature ({unit})", color=INK)
        daily = response.daily
        day_types = list(dict.fromkeys(daily["day type"]))
        key = []
        for position, day_type in enumerate(day_types):
            rows = daily[daily["day type"] == day_type]
            points = self._points_for(day_type, position)
            points.setData(
                from_celsius(rows["mean temperature °C"].to_numpy(dtype=np.float64), unit),
                rows["energy kWh"].to_numpy(dtype=np.float64),
            )
            key.append(("●", day_type, series_colour(day_type, position)))
        for day_type, points in self.points.items():
            points.setVisible(day_type in day_types)
        line = response.line
        self.line.setData(
            from_celsius(line["temperature °C"].to_numpy(dtype=np.float64), unit),
            line["fitted kWh"].to_numpy(dtype=np.float64),
        )
        self.set_key([*key, ("━", "fitted", FIT_LINE)])
        self.plot.enableAutoRange()
        self._show_plot(_model_words(response, unit))


def _model_words(response: TemperatureResponse, unit: str) -> str:
    model = response.model
    parts = [f"{model.kind} change-point fit on {response.basis or f'{model.n_points_} days'}"]
    if model.change_points_:
        points = (from_celsius(c, unit) for c in model.change_points_)
        parts.append("change point " + ", ".join(f"{c:.1f} {unit}" for c in points))
    for side, slope in (("heating", model.heating_slope_), ("cooling", model.cooling_slope_)):
        if slope > 0:
            parts.append(f"{side} {per_degree_in(slope, unit):,.1f} kWh/day per {unit}")
    parts.append(f"R² {model.r2_:.2f}, CV(RMSE) {model.cv_rmse_:.1f} %")
    return "; ".join(parts) + "."
