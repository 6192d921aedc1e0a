"""The Cleaning screen on real project files: findings, previews, fixes, the log, failures.

Invented scenario: Mesa Commons, a dining hall on the Saguaro Flats campus (a site with no
daylight-saving time), metered hourly. Its export has a communications gap whose missed energy
arrives in the first reading after it, and a meter multiplier halved part-way through. The same
export holds the Palo Verde Library, with one reading recorded at nine times its true value.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from desktop_support import LAPTOP, SAMPLE, save_screen, wait_until_idle
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QInputDialog, QMessageBox

from desktop.cleaning_screen import CleaningScreen
from desktop.findings_table import HEADERS
from desktop.main_window import MainWindow
from desktop.session import Session
from engine.project import Project
from engine.reading import ReadOptions, read_file
from engine.steps.importing import ImportedFiles, store_files

ZONE = "America/Phoenix"
METER = "Mesa Commons"
LIBRARY = "Palo Verde Library"
HOUR = pd.Timedelta(hours=1)
WEEKS = 26
GAP_DAY, GAP_FIRST_HOUR, GAP_HOURS = 30, 9, 6
HALVED_FROM_WEEK = 14
SPIKE_HOUR = 60 * 24 + 11


@dataclass
class Commons:
    """The written export and what was injected into it (the ground truth)."""

    project: Path
    values: np.ndarray  # as written, NaN for blank cells
    gap_start: pd.Timestamp  # UTC start of the first blank interval
    catch_up_end: pd.Timestamp  # UTC end of the interval holding the catch-up
    catch_up_kwh: float
    spike_at: pd.Timestamp  # UTC start of the library's spiked interval


def _write_commons(folder: Path) -> Commons:
    stamps = pd.date_range("2025-01-06", periods=WEEKS * 168, freq="h")
    noise = np.random.default_rng(11).normal(0.0, 2.0, stamps.size)
    weekday, hour = stamps.day_of_week, stamps.hour
    open_hours = (weekday < 5) & (hour >= 7) & (hour < 19)
    weekend_hours = (weekday >= 5) & (hour >= 9) & (hour < 17)
    values = np.round(40.0 + 60.0 * open_hours + 15.0 * weekend_hours + noise, 3)
    first = GAP_DAY * 24 + GAP_FIRST_HOUR
    gap = slice(first, first + GAP_HOURS)
    values[first + GAP_HOURS] += values[gap].sum()  # the missed energy, delivered late
    values[gap] = np.nan
    values[HALVED_FROM_WEEK * 168 :] *= 0.5
    values = np.round(values, 3)
    library = np.round(20.0 + 30.0 * open_hours + noise[::-1] / 2.0, 3)
    library[SPIKE_HOUR] *= 9.0
    lines = [f"Timestamp,{METER} (kWh),{LIBRARY} (kWh)"] + [
        f"{t:%Y-%m-%d %H:%M},{'' if np.isnan(v) else f'{v:.3f}'},{w:.3f}"
        for t, v, w in zip(stamps, values, library, strict=True)
    ]
    export = folder / "mesa-commons.csv"
    export.write_text("\n".join(lines) + "\n", encoding="utf-8")
    options = ReadOptions(timezone=ZONE)
    path = folder / f"saguaro-flats{Project.EXTENSION}"
    with Project.create(path, timezone=ZONE) as project:
        store_files(project, ImportedFiles([read_file(export, options)], [], [], options))
    local = stamps.tz_localize(ZONE).tz_convert("UTC")
    return Commons(
        project=path,
        values=values,
        gap_start=local[first],
        catch_up_end=local[first + GAP_HOURS] + HOUR,
        catch_up_kwh=float(values[first + GAP_HOURS]),
        spike_at=local[SPIKE_HOUR],
    )


@pytest.fixture
def commons(tmp_path) -> Commons:
    return _write_commons(tmp_path)


def _open(qtbot, path: Path) -> CleaningScreen:
    session = Session()
    screen = CleaningScreen(session)
    qtbot.addWidget(screen)
    screen.resize(1400, 860)
    screen.show()
    session.open(Project.open(path))
    wait_until_idle(qtbot, screen)
    return screen


@pytest.fixture
def screen(qtbot, commons):
    shown = _open(qtbot, commons.project)
    yield shown
    shown.session.close()


def _finding(screen: CleaningScreen, kind: str):
    (found,) = [f for f in screen.findings.findings if f.kind == kind]
    return found


def _row_words(screen: CleaningScreen, finding, header: str) -> str:
    row = screen.findings.findings.index(finding)
    return screen.findings.table.item(row, HEADERS.index(header)).text()


def _click(qtbot, button) -> None:
    assert button.isEnabled(), button.text()
    qtbot.mouseClick(button, Qt.MouseButton.LeftButton)


def _stored_steps(path: Path, meter: str = METER) -> list[dict]:
    """A meter's log as a fresh connection to the project file reads it."""
    with Project.open(path) as project:
        return project.cleaning_steps(meter, active_only=False)


def test_a_gap_with_catch_up_is_found_previewed_fixed_and_undone(qtbot, screen, commons):
    intervals = commons.values.size
    recorded = np.nansum(commons.values)
    coverage_before = (intervals - GAP_HOURS) / intervals  # by construction of the export

    catch_up = _finding(screen, "catch_up")
    assert (catch_up.start, catch_up.end) == (commons.gap_start, commons.catch_up_end)
    assert _row_words(screen, catch_up, "Site time") == "Wed 2025-02-05 09:00 to 16:00"
    assert _row_words(screen, catch_up, "Fix").endswith("recommended")
    assert screen.quality.value("coverage_before") == pytest.approx(coverage_before)
    assert screen.quality.value("coverage_after") == pytest.approx(coverage_before)
    assert screen.quality.value("energy_before_kwh") == pytest.approx(recorded)
    assert screen.log.steps == [] and not screen.apply_fix_button.isEnabled()

    # The preview: the export as written, and the same hours with the catch-up shared out.
    assert screen.findings.select(catch_up.id)
    preview = screen.preview
    assert preview is not None and preview.finding == catch_up
    plot = screen.plot
    assert plot.curves == (plot.before, plot.after)
    before_x, before_y = plot.before.xData, plot.before.yData  # as given, not as thinned to draw
    after_x, after_y = plot.after.xData, plot.after.yData
    assert len(before_x) == len(after_x) > 2 * 24
    np.testing.assert_array_equal(before_x, after_x)
    written = pd.Series(commons.values, index=_utc_hours(commons))
    shown_before = written.reindex(preview.before.index).to_numpy()
    np.testing.assert_array_equal(before_y, shown_before)
    inside = (preview.before.index >= catch_up.start) & (preview.before.index < catch_up.end)
    estimated = preview.after.estimated.to_numpy()
    np.testing.assert_array_equal(estimated, inside)  # only the gap and its catch-up change
    dashed = plot.estimated.yData
    assert np.isfinite(dashed[inside]).all()
    # Sharing out keeps the energy the meter recorded over the stretch (the engine's promise).
    assert preview.after.values[inside].sum() == pytest.approx(commons.catch_up_kwh)
    assert np.isnan(after_y[inside]).all()  # estimates are drawn dashed, not solid
    np.testing.assert_array_equal(after_y[~inside], shown_before[~inside])
    save_screen(screen, "cleaning")

    _click(qtbot, screen.apply_fix_button)
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done" and commons.project.name in screen.notice.text.text()
    ((stored,),) = [_stored_steps(commons.project)]
    assert stored["kind"] == "spread" and stored["active"]
    assert pd.Timestamp(stored["params"]["start"]) == commons.gap_start
    assert pd.Timestamp(stored["params"]["end"]) == commons.catch_up_end
    assert "catch_up" not in {f.kind for f in screen.findings.findings}
    assert screen.quality.value("coverage_after") == pytest.approx(1.0)
    assert screen.quality.value("estimated_intervals") == GAP_HOURS + 1
    assert screen.quality.value("energy_after_kwh") == pytest.approx(recorded)
    assert screen.quality.value("estimated_kwh") == pytest.approx(commons.catch_up_kwh)
    assert [b.text() for b in screen.log.toggles] == ["Undo"]

    _click(qtbot, screen.log.toggles[0])
    wait_until_idle(qtbot, screen)
    ((stored,),) = [_stored_steps(commons.project)]
    assert not stored["active"]
    assert screen.quality.value("coverage_after") == pytest.approx(coverage_before)
    assert screen.quality.value("estimated_intervals") == 0
    assert _finding(screen, "catch_up").id == catch_up.id
    assert [b.text() for b in screen.log.toggles] == ["Redo"]
    assert "(undone)" in screen.log.table.item(0, 1).text()
    save_screen(screen, "cleaning-undone")


def _utc_hours(commons: Commons) -> pd.DatetimeIndex:
    stamps = pd.date_range("2025-01-06", periods=commons.values.size, freq="h")
    return stamps.tz_localize(ZONE).tz_convert("UTC")


def test_all_recommended_leaves_the_level_change_to_the_user(qtbot, screen, commons):
    shift = _finding(screen, "level_shift")
    assert _row_words(screen, shift, "Fix").endswith("for you to decide")
    halved = _utc_hours(commons)[HALVED_FROM_WEEK * 168]
    assert shift.start == halved  # the day the multiplier changed, at local midnight

    _click(qtbot, screen.apply_all_button)
    wait_until_idle(qtbot, screen)
    assert [s["kind"] for s in _stored_steps(commons.project)] == ["spread"]
    assert _finding(screen, "level_shift").id == shift.id
    assert not screen.apply_all_button.isEnabled()  # nothing recommended is left
    reason = screen.apply_all_reason.text()  # ... and the screen says why it is greyed
    assert reason.startswith("Nothing recommended") and "level change" in reason.lower()
    assert reason.endswith("(lasting level change) is for you to decide.")  # one finding
    # ... without widening the window beyond a laptop screen (the step list takes 170 px)
    assert screen.minimumSizeHint().width() <= LAPTOP[0] - 170

    # The user may still decide to leave the readings before the change out of fitting.
    assert screen.findings.select(shift.id)
    assert screen.preview.after is not None
    _click(qtbot, screen.apply_fix_button)
    wait_until_idle(qtbot, screen)
    assert [s["kind"] for s in _stored_steps(commons.project)] == ["spread", "exclude"]
    before_change = (_utc_hours(commons) < halved).sum()
    assert screen.quality.value("excluded_share") == pytest.approx(
        before_change / commons.values.size
    )


def test_a_halved_multiplier_is_corrected_by_the_factor_from_the_meters_records(
    qtbot, screen, commons, monkeypatch
):
    """The level change here is the meter's: its multiplier halved. Corrected by a factor of
    2 from the change on, the readings are those written before halving again, and the level
    change is gone; the dialog offers 2, the factor that undoes ×0.5."""
    shift = _finding(screen, "level_shift")
    assert not screen.rescale_button.isVisible()  # offered for level changes only
    assert screen.findings.select(shift.id)
    assert screen.rescale_button.isVisible() and screen.rescale_button.isEnabled()
    save_screen(screen, "cleaning-level-change")
    asked = []

    def answer(*args):
        asked.append(args)
        return args[3], True  # the offered factor, as a person pressing OK

    monkeypatch.setattr(QInputDialog, "getDouble", answer)
    _click(qtbot, screen.rescale_button)
    wait_until_idle(qtbot, screen)
    assert asked[0][3] == 2.0 and "×0.499" in asked[0][2]  # measured on noisy days
    (step,) = _stored_steps(commons.project)
    assert step["kind"] == "rescale" and step["params"]["factor"] == 2.0
    assert "level_shift" not in {f.kind for f in screen.findings.findings}
    first = HALVED_FROM_WEEK * 168
    cleaned = screen.review.cleaned.values.to_numpy()
    np.testing.assert_array_equal(cleaned[first:], commons.values[first:] * 2.0)
    np.testing.assert_array_equal(cleaned[:first], commons.values[:first])  # NaN gap as is
    assert "multiplied by 2" in screen.notice.text.text()


def test_each_meter_has_its_own_findings_and_log(qtbot, screen, commons):
    _click(qtbot, screen.apply_all_button)
    wait_until_idle(qtbot, screen)
    assert len(screen.log.steps) == 1
    assert [screen.meter.itemText(i) for i in range(screen.meter.count())] == [METER, LIBRARY]
    for index in (1, 0, 1):  # changing one's mind before the review ends: the last choice wins
        screen.meter.setCurrentIndex(index)
        screen.meter.activated.emit(index)
    wait_until_idle(qtbot, screen)
    assert screen.review.meter.name == LIBRARY and screen.log.steps == []
    spike = _finding(screen, "spike")
    assert (spike.start, spike.severity) == (commons.spike_at, "serious")
    assert _row_words(screen, spike, "Fix") == "cap readings — recommended"
    assert screen.findings.select(spike.id)
    _click(qtbot, screen.apply_fix_button)
    wait_until_idle(qtbot, screen)
    assert [s["kind"] for s in _stored_steps(commons.project, LIBRARY)] == ["cap"]
    assert [s["kind"] for s in _stored_steps(commons.project)] == ["spread"]
    assert screen.quality.value("estimated_intervals") == 1


def test_severity_filters_hide_and_show_rows(screen):
    shown = screen.findings.shown()
    assert {f.severity for f in shown} == {"warning"}
    screen.findings.filters["warning"].setChecked(False)
    assert screen.findings.shown() == []
    assert screen.findings.filters["warning"].text() == "warning (2)"
    screen.findings.filters["warning"].setChecked(True)
    assert screen.findings.shown() == shown


def test_a_damaged_step_gives_a_message_and_can_be_removed(qtbot, commons, monkeypatch):
    with Project.open(commons.project) as project:
        project.add_cleaning_step(
            {"kind": "interpolate", "meter": METER, "params": {"start": "soon", "end": "later"}}
        )
    screen = _open(qtbot, commons.project)
    try:
        assert screen.notice.tone == "problem" and screen.notice.isVisible()
        words = screen.notice.text.text()
        assert "cleaning step 1" in words and "Traceback" not in words
        assert not screen.notice.details_button.isVisible()
        assert screen.findings.findings == [] and screen.review is None
        assert [s["kind"] for s in screen.log.steps] == ["interpolate"]

        asked = []
        monkeypatch.setattr(
            QMessageBox,
            "question",
            lambda *args: asked.append(args[1]) or QMessageBox.StandardButton.Yes,
        )
        _click(qtbot, screen.log.removers[0])
        wait_until_idle(qtbot, screen)
        assert asked == ["Remove a cleaning step"]
        assert _stored_steps(commons.project) == []
        assert screen.notice.tone == "done"
        assert {f.kind for f in screen.findings.findings} == {"catch_up", "level_shift"}
        save_screen(screen, "cleaning-after-removing-a-damaged-step")
    finally:
        screen.session.close()


def test_the_gap_injected_in_the_sample_campus_is_found(qtbot, sample_project):
    faults = json.loads((SAMPLE / "faults.json").read_text(encoding="utf-8"))
    (injected,) = [
        f
        for f in faults
        if f["kind"] == "comms_gap_with_catch_up" and "Library (kWh)" in f["meters"]
    ]
    screen = _open(qtbot, sample_project)
    try:
        # The sample's record of what it injected: blank from 09:00, the catch-up at 15:00.
        catch_up = _finding(screen, "catch_up")
        gap_start = pd.Timestamp(injected["start"]).tz_convert("UTC")
        catch_up_start = pd.Timestamp(injected["end"]).tz_convert("UTC")
        assert catch_up.start == gap_start
        assert catch_up.end == catch_up_start + pd.Timedelta(minutes=15)
        assert _row_words(screen, catch_up, "Site time") == "Tue 2024-02-13 09:00 to 15:15"
        assert screen.findings.select(catch_up.id)
        np.testing.assert_array_equal(
            screen.preview.after.estimated.to_numpy(),
            (screen.preview.before.index >= gap_start)
            & (screen.preview.before.index <= catch_up_start),
        )
        save_screen(screen, "cleaning-sample-campus")

        low_day = next(f for f in screen.findings.findings if f.kind == "low_day")
        assert screen.findings.select(low_day.id)
        assert screen.preview.after is None and not screen.apply_fix_button.isEnabled()
        assert screen.plot.after.xData is None or len(screen.plot.after.xData) == 0
        assert "has no fix" in screen.plot.caption.text()
    finally:
        screen.session.close()


def test_the_patterns_step_follows_a_fix_logged_on_the_cleaning_step(qtbot, commons):
    window = MainWindow()
    qtbot.addWidget(window)
    window.show()
    cleaning, patterns = window.cleaning_screen, window.patterns_screen
    try:
        assert window.open_project(commons.project)
        window.show_step("Cleaning")
        assert window.screens.currentWidget() is cleaning
        wait_until_idle(qtbot, cleaning)
        wait_until_idle(qtbot, patterns)
        written = pd.Series(commons.values, index=_utc_hours(commons))
        # Hourly readings: kWh in the hour is the mean demand in kW.
        assert patterns.figures.values()["peak demand"] == pytest.approx(commons.catch_up_kwh)
        assert "no cleaning steps" in patterns.basis.text()

        assert cleaning.findings.select(_finding(cleaning, "catch_up").id)
        _click(qtbot, cleaning.apply_fix_button)
        wait_until_idle(qtbot, cleaning)
        wait_until_idle(qtbot, patterns)
        assert "1 logged step" in patterns.basis.text()
        outside = written[
            (written.index < commons.gap_start) | (written.index >= commons.catch_up_end)
        ]
        assert patterns.figures.values()["peak demand"] == pytest.approx(outside.max())
        assert patterns.figures.values()["total energy"] == pytest.approx(written.sum())
        save_screen(window, "main-window-cleaning")
    finally:
        window.close()


def test_every_meters_recommended_fixes_are_logged_in_one_go(qtbot, screen, commons):
    # The hall's gap with its catch-up and the library's serious spike are both recommended
    # fixes; one press logs each meter's, and the patterns of both are told to refresh.
    changed = []
    screen.log_changed.connect(changed.append)
    _click(qtbot, screen.apply_everywhere_button)
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    with Project.open(commons.project) as project:
        kinds = {
            name: [s["kind"] for s in project.cleaning_steps(name)] for name in (METER, LIBRARY)
        }
    assert kinds[METER] == ["spread"] and kinds[LIBRARY]  # the spike's fix
    assert sorted(changed) == sorted([METER, LIBRARY])


def test_a_finding_accepted_as_expected_stays_accepted_until_undone(qtbot, screen, commons):
    shift = _finding(screen, "level_shift")
    assert screen.findings.select(shift.id)
    assert screen.accept_button.isEnabled()
    _click(qtbot, screen.accept_button)
    wait_until_idle(qtbot, screen)
    assert screen.notice.tone == "done", screen.notice.text.text()
    assert all(f.id != shift.id for f in screen.findings.findings)  # no longer shown
    (step,) = _stored_steps(commons.project)
    assert step["kind"] == "accept" and step["params"]["finding"] == shift.id
    # The readings are unchanged: nothing estimated, nothing left out.
    assert screen.quality.value("excluded_share") == 0
    # Reviewed afresh (a new window), it stays accepted; undone, it is back.
    again = _open(qtbot, commons.project)
    try:
        assert all(f.id != shift.id for f in again.findings.findings)
    finally:
        again.session.close()
    with Project.open(commons.project) as project:
        project.set_step_active(step["id"], False)
    undone = _open(qtbot, commons.project)
    try:
        assert any(f.id == shift.id for f in undone.findings.findings)
    finally:
        undone.session.close()


def test_a_long_explanation_scrolls_instead_of_being_cut_off(qtbot, screen):
    """In the room a 1,280 × 720 window leaves the step, the level change's explanation (the
    longest, ending with what to do) is laid out whole in a scrolling area of five lines,
    leaving the preview chart its height."""
    screen.resize(1050, 560)
    assert screen.findings.select(_finding(screen, "level_shift").id)
    qtbot.wait(50)
    label, area = screen.explanation, screen.explanation_area
    assert label.text().endswith(".") and len(label.text()) > 400
    assert label.height() >= label.heightForWidth(label.width())  # no line cut off
    lines = screen.fontMetrics().lineSpacing()
    assert area.height() <= 5 * lines and area.verticalScrollBar().maximum() > 0
    assert screen.plot.height() > 8 * lines
    save_screen(screen, "cleaning-long-explanation")
