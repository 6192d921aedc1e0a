"""The Patterns screen draws a real project's cleaned meter; checked against pandas and others."""

from __future__ import annotations

import shutil
from itertools import pairwise

import holidays
import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from desktop_support import (
    SAMPLE,
    SITE_ZONE,
    save_screen,
    wait_until_idle,
    write_hourly_meter,
    write_hourly_weather,
)

from desktop.pattern_jobs import PatternRequest
from desktop.patterns_screen import PatternsScreen
from desktop.session import Session
from engine.project import Project
from engine.reading import ReadOptions, read_calendar, read_file
from engine.steps.importing import ImportedFiles, store_files
from engine.steps.profiling import profile_project_meter

#: NIST SP 811 (2008), Appendix B.8: 1 therm (EC) = 1.055 06 E+08 J; 1 kWh = 3.6 E+06 J.
KWH_PER_THERM = 1.05506e8 / 3.6e6


def _open(qtbot, path) -> PatternsScreen:
    session = Session()
    screen = PatternsScreen(session)
    qtbot.addWidget(screen)
    screen.resize(1400, 860)
    screen.show()
    session.open(Project.open(path))
    wait_until_idle(qtbot, screen)
    return screen


@pytest.fixture
def library(qtbot, sample_project):
    screen = _open(qtbot, sample_project)
    yield screen
    screen.session.close()


def _readings(project: Project, name: str) -> pd.DataFrame:
    """The meter's readings on the local clock, worked out here with pandas alone."""
    meter = project.load_meter(name)
    values = meter.values.dropna()
    local = values.index.tz_convert(SITE_ZONE)
    hours = meter.interval / pd.Timedelta(hours=1)
    return pd.DataFrame(
        {
            "kwh": values.to_numpy(),
            "kw": values.to_numpy() / hours,
            "date": local.tz_localize(None).normalize(),
            "hour": local.hour,
            "month": local.month,
            "year": local.year,
            "weekday": local.day_of_week,
        }
    )


def test_the_library_meter_is_drawn_as_pandas_works_it_out(library):
    screen = library
    assert screen.patterns.request == PatternRequest("Library")
    assert "Readings as recorded" in screen.basis.text()
    assert "No campus calendar" in screen.basis.text()
    assert all(panel.showing_plot for panel in screen.panels[:5])
    readings = _readings(screen.session.project, "Library")

    # Typical weekday: mean over weekdays of each day's mean demand in the hour, and its P10.
    weekdays = readings[readings["weekday"] < 5]
    per_day = weekdays.groupby(["date", "hour"])["kw"].mean()
    band = screen.typical.bands["weekday"]
    hours, mean = band.mean.getData()
    np.testing.assert_allclose(hours, np.arange(24.0))
    np.testing.assert_allclose(mean, per_day.groupby(level="hour").mean().to_numpy(), rtol=1e-9)
    low = per_day.groupby(level="hour").quantile(0.1).to_numpy()
    np.testing.assert_allclose(band.low.getData()[1], low, rtol=1e-9)
    assert "weekday" in screen.typical.key.text() and not screen.typical.bands.get("holiday")

    # Heat map: the energy of every local hour that holds all four quarter-hours.
    cells = readings.groupby(["date", "hour"])["kwh"].agg(["sum", "size"])
    whole = cells[cells["size"] == 4]["sum"].unstack()
    image = screen.heat.image.image
    dates = pd.date_range(readings["date"].min(), readings["date"].max(), freq="D")
    assert image.shape == (len(dates), 24)
    expected = whole.reindex(index=dates, columns=range(24)).to_numpy()
    known = np.isfinite(expected)
    np.testing.assert_allclose(image[known], expected[known], rtol=1e-9)
    short = cells[cells["size"] < 4].index  # partly read hours stay blank
    rows = dates.get_indexer(short.get_level_values("date"))
    assert np.isnan(image[rows, short.get_level_values("hour")]).all()

    # Monthly totals of 2024 in kWh (as the tables), and the load-duration curve's ends.
    bars = screen.monthly.bars["2024"].opts
    by_month = readings[readings["year"] == 2024].groupby("month")["kwh"].sum()
    np.testing.assert_allclose(bars["height"], by_month.to_numpy(), rtol=1e-9)
    _, demand = screen.duration.curve.getData()
    assert demand[0] == pytest.approx(readings["kw"].max())
    assert demand[-1] == pytest.approx(readings["kw"].min())

    # Key figures: peak, total and the night-time P5 base load (common practice, see engine).
    values = screen.figures.values()
    assert values["peak demand"] == pytest.approx(readings["kw"].max())
    assert values["total energy"] == pytest.approx(readings["kwh"].sum())
    night = readings.loc[readings["hour"] < 5, "kw"]
    assert values["base load"] == pytest.approx(np.quantile(night, 0.05))

    # Energy against temperature: one point per whole day with weather, and the fitted line.
    daily = screen.patterns.temperature.daily
    drawn = sum(len(points.getData()[0]) for points in screen.temperature.points.values())
    assert drawn == len(daily) > 1000
    line_x, _ = screen.temperature.line.getData()
    # drawn in °F, as the sample's weather came (NIST SP 811 (2008), B.8: t/°F = 1.8 t/°C + 32)
    assert line_x.min() == pytest.approx(1.8 * daily["mean temperature °C"].min() + 32)
    assert "change-point fit" in screen.temperature.caption.text()
    save_screen(screen, "patterns")


def test_the_campus_calendar_labels_holidays_and_seasons_regroup(qtbot, tmp_path, sample_project):
    path = tmp_path / sample_project.name
    shutil.copyfile(sample_project, path)
    options = ReadOptions(timezone=SITE_ZONE, holidays="US")
    calendar = read_calendar(SAMPLE / "campus-calendar.csv", options)
    with Project.open(path) as project:
        store_files(project, ImportedFiles([], [], [], options, calendar=calendar))
    screen = _open(qtbot, path)
    try:
        periods = len(pd.read_csv(SAMPLE / "campus-calendar.csv"))
        assert f"US public holidays, {periods} periods" in screen.basis.text()
        band = screen.typical.bands["holiday"]
        assert band.mean.isVisible()
        # Holiday days: US public holidays (observed dates too) by the holidays package, on the
        # local dates that hold readings.
        readings = _readings(screen.session.project, "Library")
        dates = pd.DatetimeIndex(readings["date"].unique())
        us = holidays.country_holidays("US", years=range(dates.year.min(), dates.year.max() + 1))
        expected = sum(date.date() in us for date in dates)
        table = screen.patterns.typical_days["day_type"]
        assert table.loc[table["group"] == "holiday", "days"].max() == expected > 10
        screen.grouping.set_value("season")
        screen.grouping.activated.emit(screen.grouping.currentIndex())
        shown = [name for name, band in screen.typical.bands.items() if band.mean.isVisible()]
        assert shown == ["winter", "spring", "summer", "autumn"]
        save_screen(screen, "patterns-with-calendar")
    finally:
        screen.session.close()


def test_a_daily_meter_shows_what_it_can_and_says_why_not_the_rest(qtbot, tmp_path):
    stamps = pd.date_range("2025-01-01", periods=90, freq="D")
    therms = 40.0 + 10.0 * np.cos(np.arange(90) / 9.0)
    path = tmp_path / "boilerhouse.csv"
    path.write_text(
        "Date,Boiler gas (therm)\n"
        + "".join(f"{t:%Y-%m-%d},{v:.2f}\n" for t, v in zip(stamps, therms, strict=True)),
        encoding="utf-8",
    )
    options = ReadOptions(timezone=SITE_ZONE)
    project_path = tmp_path / f"gas{Project.EXTENSION}"
    with Project.create(project_path, timezone=SITE_ZONE) as project:
        store_files(project, ImportedFiles([read_file(path, options)], [], [], options))
    screen = _open(qtbot, project_path)
    try:
        for panel in (screen.typical, screen.heat):
            assert "a day apart" in panel.note.text() and "interval data" in panel.note.text()
        assert "No weather in the project" in screen.temperature.note.text()
        assert screen.monthly.showing_plot and screen.duration.showing_plot
        january = screen.monthly.bars["2025"].opts["height"][0]
        assert january == pytest.approx(therms[:31].round(2).sum() * KWH_PER_THERM)
        shown = screen.figures.values()
        assert shown["total energy"] == pytest.approx(therms.round(2).sum() * KWH_PER_THERM)
        assert "no weather in the project" in screen.figures.table.item(2, 0).text()
        save_screen(screen, "patterns-daily-meter")
    finally:
        screen.session.close()


def test_the_weather_response_is_the_degree_day_regression_statsmodels_fits_and_the_plot_draws_it(
    qtbot, tmp_path
):
    # Invented: Ocotillo Hall on the Saguaro Flats campus (no daylight-saving time), heated
    # below a 15 °C balance point at 45 kWh per °C-day over a 600 kWh/day base, read hourly.
    zone, days = "America/Phoenix", 150
    noise = np.random.default_rng(5).normal(0.0, 1.5, days)
    day_mean = np.round(14.0 + 9.0 * np.sin(2 * np.pi * np.arange(days) / 61.0) + noise, 2)
    daily_kwh = 600.0 + 45.0 * np.maximum(15.0 - day_mean, 0.0)
    hourly_kwh = np.round(np.repeat(daily_kwh / 24.0, 24), 3)
    meter_csv, weather_csv = tmp_path / "ocotillo.csv", tmp_path / "station.csv"
    stamps = write_hourly_meter(meter_csv, "Ocotillo Hall (kWh)", hourly_kwh, "2025-01-06")
    write_hourly_weather(weather_csv, np.repeat(day_mean, 24), "2025-01-06")
    options = ReadOptions(timezone=zone)
    path = tmp_path / f"ocotillo{Project.EXTENSION}"
    with Project.create(path, timezone=zone) as project:
        files = [read_file(meter_csv, options)], [], [read_file(weather_csv, options)], options
        store_files(project, ImportedFiles(*files))
    screen = _open(qtbot, path)
    try:
        shown = screen.figures.values()
        # The engine fits ordinary working days (weekdays here: no calendar, every day whole).
        day = pd.DatetimeIndex(stamps[::24])
        weekday = day.day_of_week < 5
        energy = hourly_kwh.reshape(days, 24).sum(axis=1)[weekday]
        temps = day_mean[weekday]
        assert shown["days fitted"] == weekday.sum()
        terms = {}
        if "heating balance point" in shown:
            terms["heating"] = np.maximum(shown["heating balance point"] - temps, 0.0)
        if "cooling balance point" in shown:
            terms["cooling"] = np.maximum(temps - shown["cooling balance point"], 0.0)
        # Degree-days by the daily mean-temperature method, HDD = max(base - mean, 0) (CIBSE
        # TM41:2006, from memory), regressed by ordinary least squares in statsmodels at the
        # balance points shown.
        fit = sm.OLS(energy, sm.add_constant(np.column_stack(list(terms.values())))).fit()
        assert shown["weather-independent use"] == pytest.approx(fit.params[0], rel=1e-6)
        for position, side in enumerate(terms, start=1):
            assert shown[f"{side} slope"] == pytest.approx(fit.params[position], rel=1e-6)
        assert shown["R²"] == pytest.approx(fit.rsquared, abs=1e-9)
        # ASHRAE Guideline 14 CV(RMSE): RMSE with n - p degrees of freedom over the mean, in %,
        # p counting each balance point as a parameter (a "3P" model has three: ASHRAE RP-1050's
        # naming of change-point models, from memory).
        rmse = np.sqrt(fit.ssr / (len(energy) - len(fit.params) - len(terms)))
        assert shown["CV(RMSE)"] == pytest.approx(100.0 * rmse / energy.mean(), rel=1e-6)
        # And the ground truth the data were made from.
        assert shown["heating balance point"] == pytest.approx(15.0, abs=0.25)
        assert shown["heating slope"] == pytest.approx(45.0, rel=0.02)
        assert shown["weather-independent use"] == pytest.approx(600.0, rel=0.02)
        # One fit, one set of numbers: the plot draws and states the fit the table lists.
        caption = screen.temperature.caption.text()
        assert f"on {weekday.sum():,} ordinary working days" in caption
        assert f"heating {shown['heating slope']:,.1f} kWh/day per °C" in caption
        line = screen.temperature.line.getData()
        corner = np.flatnonzero(np.isclose(line[0], shown["heating balance point"]))
        assert line[1][corner] == pytest.approx(shown["weather-independent use"])
        save_screen(screen, "patterns-weather-response")
    finally:
        screen.session.close()


def test_a_site_whose_weather_came_in_fahrenheit_sees_fahrenheit(library):
    # The sample station reads "Dry Bulb (°F)": the project shows °F; the engine keeps °C.
    project = library.session.project
    assert library.patterns.temperature_unit == "°F"
    response = profile_project_meter(project, "Library").key_figures()["weather response"]
    shown = library.figures.values()
    # NIST SP 811 (2008), B.8: t/°F = 1.8 t/°C + 32, and a °F interval is 5/9 of a kelvin
    for side in ("heating", "cooling"):
        if response.get(f"{side} balance point °C") is not None:
            celsius = response[f"{side} balance point °C"]
            assert shown[f"{side} balance point"] == pytest.approx(1.8 * celsius + 32)
            per_c = response[f"{side} slope kWh per °C-day"]
            assert shown[f"{side} slope"] == pytest.approx(per_c / 1.8)
    assert library.temperature.plot.getAxis("bottom").labelText.endswith("(°F)")
    assert "°C" not in library.temperature.caption.text()


def test_month_names_under_the_monthly_bars_keep_apart_on_a_laptop(qtbot):
    """At the width the Monthly panel gets on a 1,280-pixel screen (a third of the step), the
    month names pyqtgraph draws leave a clear gap between them (they ran together as
    "AprMayJun"), and every other month is named whatever the width."""
    from PySide6.QtGui import QImage, QPainter

    from desktop.pattern_plots import MonthlyPanel

    panel = MonthlyPanel()
    qtbot.addWidget(panel)
    panel.resize(355, 300)
    panel.show()
    panel.plot.setXRange(0.5, 12.5, padding=0)
    qtbot.wait(20)
    axis = panel.plot.getAxis("bottom")
    canvas = QImage(int(axis.width()), 60, QImage.Format.Format_ARGB32)
    painter = QPainter(canvas)
    drawn = sorted(
        (rect.left(), rect.right(), text) for rect, _, text in axis.generateDrawSpecs(painter)[2]
    )
    painter.end()
    names = [text for _, _, text in drawn]
    assert {"Jan", "Mar", "May", "Jul", "Sep", "Nov"} <= set(names)
    gaps = [after[0] - before[1] for before, after in pairwise(drawn)]
    assert min(gaps) >= 8.0, list(zip(names, gaps, strict=False))  # 8 px: common practice
