"""The Models screen fits and compares models on a real project and shows the engine's choice;
its scores are checked against ASHRAE Guideline 14's formulas worked out here with numpy.

The project holds the sample campus's Library meter from June 2025 on (a short span keeps the
fit quick) with the sample's weather station and campus calendar.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from desktop_support import SITE_ZONE, save_screen, short_sample_project, wait_until_idle

from desktop.model_tables import MODEL_ROLE, RANK_HEADERS
from desktop.models_screen import ModelsScreen
from desktop.session import Session
from engine.project import Project
from engine.wizard import DEFAULT_FAMILIES

FAMILIES = ("calendar_regression", "seasonal_naive")
ORIGINS = 3


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> Path:
    return short_sample_project(tmp_path_factory.mktemp("models") / f"library{Project.EXTENSION}")


def _open(qtbot, path: Path) -> ModelsScreen:
    session = Session()
    screen = ModelsScreen(session)
    qtbot.addWidget(screen)
    screen.resize(1400, 900)
    screen.show()
    session.open(Project.open(path))
    wait_until_idle(qtbot, screen)
    return screen


def _lead_one(report, frame: pd.DataFrame, condition: str) -> pd.DataFrame:
    rows = frame[
        (frame["model"] == report.chosen) & (frame["weather"] == condition) & (frame["lead"] == 1)
    ]
    return rows.dropna(subset=["actual kWh", "predicted kWh"])


def test_fitting_shows_the_ranking_the_project_keeps(qtbot, library):
    screen = _open(qtbot, library)
    try:
        assert screen.report is None and "no fitted model yet" in screen.ranking.note.text()
        assert screen.families.ticked() == DEFAULT_FAMILIES  # hourly meter: the wizard's own
        screen.families.tick(FAMILIES)
        screen.origins.setValue(ORIGINS)
        screen.fit()
        wait_until_idle(qtbot, screen)
        assert screen.notice.tone == "done", screen.notice.text.text()
        report = screen.report
        with Project.open(library) as reopened:
            (stored,) = reopened.results("model", "Library")
            choice = stored["body"]["choice"]
            stored_family = stored["body"]["model"]["family"]
        assert screen.ranking.recommended() == choice["chosen"] == stored_family
        assert screen.ranking.table.rowCount() == len(FAMILIES)
        assert screen.ranking.table.horizontalHeaderItem(2).text() == RANK_HEADERS[2]

        # The recommended row's scores, worked out here from the backtest's one-month-ahead
        # forecasts of every origin pooled. ASHRAE Guideline 14 (2014), from memory:
        # CV(RMSE) = 100 · sqrt(Σ(y − ŷ)² / (n − p)) / ȳ and NMBE = 100 · Σ(y − ŷ) / ((n − p) ȳ),
        # with p = 0 for forecasts of data the model never saw.
        forecasts = report.backtest.forecasts
        pairs = _lead_one(report, forecasts, report.condition)
        y, y_hat = pairs["actual kWh"].to_numpy(), pairs["predicted kWh"].to_numpy()
        row = screen.ranking.row_of(report.chosen)
        cv = 100.0 * np.sqrt(np.sum((y - y_hat) ** 2) / len(y)) / y.mean()
        bias = 100.0 * np.sum(y - y_hat) / (len(y) * y.mean())
        assert row["CV(RMSE) %"] == pytest.approx(cv, rel=1e-9)
        assert row["NMBE %"] == pytest.approx(bias, rel=1e-9)
        # Month-total error: mean |forecast / actual − 1| of the local calendar months.
        month = pd.DatetimeIndex(pairs["start"]).tz_convert(SITE_ZONE).strftime("%Y-%m")
        totals = pairs.groupby(month)[["actual kWh", "predicted kWh"]].sum()
        mape = 100.0 * np.mean(np.abs(totals["predicted kWh"] / totals["actual kWh"] - 1.0))
        assert row["Month-total error %"] == pytest.approx(mape, rel=1e-9)
        assert row["Guideline 14"] in ("met", "not met")

        # Residuals by local hour: 100 · Σ(actual − predicted) / Σ actual, worked out by pandas.
        pairs = _lead_one(report, forecasts, report.residual_condition)
        hour = pd.DatetimeIndex(pairs["start"]).tz_convert(SITE_ZONE).hour
        sums = pairs.groupby(hour)[["actual kWh", "predicted kWh"]].sum()
        expected = 100.0 * (sums["actual kWh"] - sums["predicted kWh"]) / sums["actual kWh"]
        screen.residuals.grouping.set_value("hour")
        screen.residuals.grouping.activated.emit(0)
        heights = screen.residuals.bars.opts["height"]
        np.testing.assert_allclose(heights, expected.to_numpy(), rtol=1e-9)
        screen.residuals.grouping.set_value("weekday")
        screen.residuals.grouping.activated.emit(1)
        assert len(screen.residuals.bars.opts["height"]) == 7

        # The backtest plot draws the metered and predicted hours of those forecasts, on the
        # local clock.
        assert screen.backtest.showing_plot and report.trace.resolution == "hour"
        x, metered = screen.backtest.actual.getOriginalDataset()
        _, predicted = screen.backtest.predicted.getOriginalDataset()
        both = np.isfinite(metered) & np.isfinite(predicted)
        assert metered[both].sum() == pytest.approx(pairs["actual kWh"].sum(), rel=1e-12)
        assert predicted[both].sum() == pytest.approx(pairs["predicted kWh"].sum(), rel=1e-12)
        first = pd.Timestamp(pairs["start"].min()).tz_convert(SITE_ZONE).tz_localize(None)
        assert pd.Timestamp(x[both][0], unit="s") == first

        # Reasons and warnings in words; the chosen model's effects when it states them.
        assert report.reasons and report.reasons[0] in screen.why.toPlainText()
        # Every family says what it learned: effects in kWh, or (benchmarks) how it forecasts.
        shown = screen.coefficients.table
        assert shown.rowCount() == len(report.coefficients) > 0
        words = " ".join(shown.item(r, c).text() for r in range(shown.rowCount()) for c in (2, 3))
        assert "kWh" in words if report.chosen == "calendar_regression" else "repeats" in words
        save_screen(screen, "models")
    finally:
        screen.session.close()

    # Opened again, the screen shows the kept model without fitting anything.
    screen = _open(qtbot, library)
    try:
        again = screen.report
        assert again is not None and again.kept.startswith("Fitted")
        with Project.open(library) as reopened:
            assert len(reopened.results("model", "Library")) == 1  # nothing refitted
        assert screen.ranking.recommended() == choice["chosen"]
        assert screen.ranking.row_of(report.chosen) == row
        # The project keeps the backtest's month totals, so those are drawn: one per origin.
        assert again.trace.resolution == "month" and screen.backtest.showing_plot
        assert len(again.trace.x) == ORIGINS
        months = totals.loc[sorted(totals.index)]
        np.testing.assert_allclose(again.trace.actual, months["actual kWh"], rtol=1e-9)
        assert screen.residuals.showing_plot
    finally:
        screen.session.close()


def test_fitting_with_no_family_ticked_asks_for_one(qtbot, library):
    screen = _open(qtbot, library)
    try:
        screen.families.tick(())
        screen.fit()
        assert not screen.runner.busy and screen.notice.tone == "problem"
        assert "Tick at least one" in screen.notice.text.text()
    finally:
        screen.session.close()


def test_another_ranked_model_is_used_without_a_new_backtest(qtbot, library, tmp_path):
    path = Path(shutil.copyfile(library, tmp_path / library.name))
    screen = _open(qtbot, path)
    try:
        screen.families.tick(FAMILIES)
        screen.origins.setValue(ORIGINS)
        screen.fit()
        wait_until_idle(qtbot, screen)
        recommended = screen.report.chosen
        assert not screen.use_button.isEnabled()  # nothing selected yet
        other_row = next(
            r
            for r in range(screen.ranking.table.rowCount())
            if screen.ranking.table.item(r, 1).data(MODEL_ROLE) != recommended
        )
        with Project.open(path) as before:
            backtests = len(before.results("backtest", "Library"))
        screen.ranking.table.selectRow(other_row)
        other = screen.ranking.selected()
        assert other != recommended and screen.use_button.isEnabled()
        screen.use_button.click()
        wait_until_idle(qtbot, screen)
        assert screen.notice.tone == "done" and "Now used" in screen.notice.text.text()
        assert screen.report.chosen == other == screen.ranking.recommended()
        assert "chosen by hand" in screen.why.toPlainText()
        with Project.open(path) as reopened:
            assert len(reopened.results("backtest", "Library")) == backtests  # none run again
            assert reopened.results("model", "Library")[-1]["body"]["model"]["family"] == other
    finally:
        screen.session.close()
