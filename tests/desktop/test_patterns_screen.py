"""The Patterns screen draws a real project's meter; the curves are checked against pandas."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from desktop_support import SITE_ZONE, save_screen, wait_until_idle

from desktop.pattern_jobs import PatternRequest
from desktop.patterns_screen import PatternsScreen
from desktop.session import Session
from desktop.understood_view import NUMBER_ROLE
from engine.importing import ImportedFiles, store_files
from engine.project import Project
from engine.reading import ReadOptions, read_file

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
    assert screen.patterns.request == PatternRequest("Library", "weather-station", None)
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

    # Monthly totals of 2024 in MWh, and the load-duration curve's ends.
    bars = screen.monthly.bars["2024"].opts
    by_month = readings[readings["year"] == 2024].groupby("month")["kwh"].sum() / 1000.0
    np.testing.assert_allclose(bars["height"], by_month.to_numpy(), rtol=1e-9)
    _, demand = screen.duration.curve.getData()
    assert demand[0] == pytest.approx(readings["kw"].max())
    assert demand[-1] == pytest.approx(readings["kw"].min())

    # Key figures: peak, total and the night-time P5 base load (common practice, see engine).
    figures = screen.figures.table
    values = {
        figures.item(r, 0).text(): figures.item(r, 1).data(NUMBER_ROLE)
        for r in range(figures.rowCount())
    }
    assert values["peak demand"] == pytest.approx(readings["kw"].max())
    assert values["total energy"] == pytest.approx(readings["kwh"].sum())
    night = readings.loc[readings["hour"] < 5, "kw"]
    assert values["base load"] == pytest.approx(np.quantile(night, 0.05))

    # Energy against temperature: one point per whole day with weather, and the fitted line.
    daily = screen.patterns.temperature.daily
    drawn = sum(len(points.getData()[0]) for points in screen.temperature.points.values())
    assert drawn == len(daily) > 1000
    line_x, _ = screen.temperature.line.getData()
    assert line_x.min() == pytest.approx(daily["mean temperature °C"].min())
    assert "change-point fit" in screen.temperature.caption.text()
    save_screen(screen, "patterns")


def test_holidays_and_seasons_regroup_the_typical_day(qtbot, library):
    screen = library
    screen.holidays.set_value("US")
    screen.holidays.activated.emit(screen.holidays.currentIndex())
    wait_until_idle(qtbot, screen)
    assert screen.patterns.request.holidays == "US"
    assert screen.typical.bands["holiday"].mean.isVisible()
    screen.grouping.set_value("season")
    screen.grouping.activated.emit(screen.grouping.currentIndex())
    shown = [name for name, band in screen.typical.bands.items() if band.mean.isVisible()]
    assert shown == ["winter", "spring", "summer", "autumn"]


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
        for panel in (screen.typical, screen.heat, screen.figures):
            assert "interval data" in panel.note.text()
        assert "No weather station" in screen.temperature.note.text()
        assert screen.monthly.showing_plot and screen.duration.showing_plot
        january = screen.monthly.bars["2025"].opts["height"][0]
        assert january * 1000.0 == pytest.approx(therms[:31].round(2).sum() * KWH_PER_THERM)
        save_screen(screen, "patterns-daily-meter")
    finally:
        screen.session.close()
