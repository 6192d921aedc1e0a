"""Data-quality figures and the steps "apply recommended" takes without asking."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from engine.cleaning import (
    CleaningStep,
    Finding,
    apply_steps,
    likely_factor,
    quality_summary,
    recommended_steps,
    rescaled_step,
)

METER = "Alder Court boiler house gas"  # invented
HOUR = pd.Timedelta(hours=1)


def test_summary_matches_a_count_done_another_way():
    index = pd.date_range("2024-02-05", periods=240, freq="h", tz="UTC")
    raw = pd.Series(np.linspace(10.0, 20.0, index.size), index=index, name=METER)
    raw.iloc[50:60] = np.nan
    raw = raw.drop(index[[120, 121]])
    raw.iloc[200] = 400.0
    steps = [
        CleaningStep(
            "interpolate", METER, {"start": index[50].isoformat(), "end": index[60].isoformat()}
        ),
        CleaningStep(
            "cap",
            METER,
            {"start": index[0].isoformat(), "end": index[-1].isoformat(), "high": 30.0},
        ),
        CleaningStep(
            "exclude", METER, {"start": index[0].isoformat(), "end": index[24].isoformat()}
        ),
    ]
    cleaned = apply_steps(raw, steps, interval=HOUR)
    summary = quality_summary(raw, cleaned)
    assert json.loads(json.dumps(summary)) == summary

    # The same figures from pandas, written out by hand.
    on_grid = raw.reindex(index)
    after = cleaned.values
    assert summary["intervals"] == 240
    assert summary["coverage_before"] == pytest.approx(on_grid.notna().mean())
    assert summary["coverage_after"] == pytest.approx(after.notna().mean())
    assert summary["coverage_after"] == pytest.approx(238 / 240)
    assert summary["estimated_intervals"] == 11
    assert summary["estimated_share"] == pytest.approx(11 / 238)
    assert summary["estimated_kwh"] == pytest.approx(after.iloc[50:60].sum() + 30.0)
    assert summary["excluded_share"] == pytest.approx(24 / 240)
    assert summary["energy_before_kwh"] == pytest.approx(on_grid.sum())
    assert summary["energy_after_kwh"] == pytest.approx(after.sum())
    assert summary["energy_added_kwh"] == pytest.approx(after.iloc[50:60].sum())
    assert summary["energy_removed_kwh"] == pytest.approx(370.0)
    assert summary["energy_after_kwh"] == pytest.approx(
        summary["energy_before_kwh"] + summary["energy_added_kwh"] - summary["energy_removed_kwh"]
    )


def finding(kind: str, day: int, severity: str = "warning") -> Finding:
    start = pd.Timestamp("2024-01-01", tz="UTC") + pd.Timedelta(days=day)
    end = start + HOUR
    fix = CleaningStep("exclude", METER, {"start": start.isoformat(), "end": end.isoformat()}, kind)
    return Finding(METER, kind, start, end, severity, "text", fix, 1, 0.0, 0.0)


def test_recommended_steps_are_gaps_catch_ups_and_serious_spikes_and_flat_lines_in_time_order():
    findings = [
        finding("spike", 5, "serious"),
        finding("level_shift", 1),
        finding("gap", 4, "info"),
        finding("spike", 2, "warning"),
        finding("flat_line", 3),
        finding("flat_line", 9, "serious"),
        finding("catch_up", 0),
        finding("zero_run", 6),
        finding("dip", 7),
        finding("negative", 8, "serious"),
    ]
    notes = [step.note for step in recommended_steps(findings)]
    assert notes == ["catch_up", "gap", "spike", "flat_line"]


def test_a_finding_without_a_fix_is_skipped():
    start = pd.Timestamp("2024-01-01", tz="UTC")
    hole = Finding(METER, "gap", start, start + HOUR, "info", "text", None, 1, 0.0, 0.0)
    assert recommended_steps([hole]) == []


def _shift(ratio: float, start: pd.Timestamp) -> Finding:
    return Finding("Hall", "level_shift", start, start + pd.Timedelta(days=60), "warning",
                   "a level shift", None, 1, 0.0, 0.0, {"ratio": ratio})  # fmt: skip


@pytest.mark.parametrize(
    ("ratio", "offered"),
    [(0.518, 2.0), (1.93, 0.5), (0.00102, 1000.0), (9.7, 0.1), (0.7, 1.4), (1.6, 0.62)],
)
def test_the_factor_offered_undoes_the_shift_and_prefers_a_usual_one(ratio, offered):
    """A multiplier that halved or a Wh/kWh slip gives back the usual factor; anything else
    the shift's own inverse, rounded (the person confirms it from the meter's records)."""
    assert likely_factor(_shift(ratio, pd.Timestamp("2025-01-06", tz="UTC"))) == offered


def test_a_rescale_starts_at_the_interval_the_multiplier_changed():
    """Found day by day, the shift starts at midnight; the multiplier halved at 10:00 that
    day, and the step starts there, running to the last reading."""
    hours = pd.date_range("2025-01-06", periods=24 * 21, freq="h", tz="UTC")
    rng = np.random.default_rng(3)
    load = 50 + 40 * ((hours.hour >= 8) & (hours.hour < 18)) + rng.normal(0, 1, len(hours))
    changed = pd.Timestamp("2025-01-20 10:00", tz="UTC")
    recorded = pd.Series(np.where(hours >= changed, load * 0.5, load), index=hours)
    cleaned = apply_steps(recorded.rename("Hall"), [])
    step = rescaled_step(_shift(0.5, pd.Timestamp("2025-01-20", tz="UTC")), cleaned, 2.0)
    assert pd.Timestamp(step.params["start"]) == changed
    assert pd.Timestamp(step.params["end"]) == hours[-1] + pd.Timedelta(hours=1)
    fixed = apply_steps(recorded.rename("Hall"), [step]).values
    np.testing.assert_allclose(fixed.to_numpy(), load)
    spike = Finding("Hall", "spike", changed, changed + pd.Timedelta(hours=1), "warning",
                    "a spike", None, 1, 0.0, 0.0)  # fmt: skip
    with pytest.raises(ValueError):
        rescaled_step(spike, cleaned, 2.0)
