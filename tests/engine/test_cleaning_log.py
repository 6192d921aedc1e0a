"""The cleaning log: steps stored as plain dicts, replayed in order, undone by replaying without."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engine.cleaning import CleaningStep, apply_steps
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.fixes import FIXES
from engine.errors import InputError

QUARTER_HOUR = pd.Timedelta(minutes=15)
ZONE = "Australia/Hobart"  # invented site: the Saltmarsh Depot, a southern-hemisphere campus
METER = "Saltmarsh Depot gas"


def depot_readings() -> pd.Series:
    """Three weeks of invented 15-minute kWh with a few readings missing (absent)."""
    generator = np.random.default_rng(23)
    index = pd.date_range("2024-03-25", periods=21 * 96, freq="15min", tz="UTC")
    hour = index.tz_convert(ZONE).hour.to_numpy()
    values = 12.0 + 6.0 * ((hour >= 6) & (hour < 20)) + generator.normal(0, 0.5, index.size)
    readings = pd.Series(values, index=index, name=METER)
    return readings.drop(readings.index[[100, 101, 102, 700, 1500]])


def step(kind: str, first: int, stop: int, **extra) -> CleaningStep:
    grid = pd.date_range("2024-03-25", periods=21 * 96 + 1, freq="15min", tz="UTC")
    params = {"start": grid[first].isoformat(), "end": grid[stop].isoformat(), **extra}
    return CleaningStep(kind, METER, params, note=f"{kind} {first}-{stop}")


def assert_same(one: CleanedSeries, other: CleanedSeries) -> None:
    assert one.values.index.equals(other.values.index)
    assert np.array_equal(one.values.to_numpy(), other.values.to_numpy(), equal_nan=True)
    assert np.array_equal(one.estimated.to_numpy(), other.estimated.to_numpy())
    assert np.array_equal(one.excluded.to_numpy(), other.excluded.to_numpy())


def test_steps_round_trip_through_json():
    original = step("profile_fill", 10, 40, timezone=ZONE, weeks=2)
    stored = json.loads(json.dumps(original.to_dict()))
    assert stored == {
        "kind": "profile_fill",
        "meter": METER,
        "params": {
            "start": "2024-03-25T02:30:00+00:00",
            "end": "2024-03-25T10:00:00+00:00",
            "timezone": ZONE,
            "weeks": 2,
        },
        "note": "profile_fill 10-40",
    }
    assert CleaningStep.from_dict({**stored, "active": True}) == original


def test_bad_steps_are_refused():
    with pytest.raises(InputError, match="unknown cleaning step 'smooth'"):
        CleaningStep("smooth", METER, {})
    with pytest.raises(InputError, match="cannot be stored"):
        CleaningStep("remove", METER, {"start": pd.Timestamp("2024-01-01", tz="UTC")})
    with pytest.raises(InputError, match="cannot be stored"):
        CleaningStep("cap", METER, {"high": float("nan")})
    with pytest.raises(InputError, match="lacks params"):
        CleaningStep.from_dict({"kind": "remove", "meter": METER})
    with pytest.raises(InputError, match="not a mapping"):
        CleaningStep.from_dict({"kind": "remove", "meter": METER, "params": [1]})


def test_replay_puts_absent_readings_on_the_grid_and_leaves_raw_alone():
    raw = depot_readings()
    before = raw.copy(deep=True)
    steps = [step("interpolate", 100, 103), step("profile_fill", 600, 800, timezone=ZONE)]
    cleaned = apply_steps(raw, steps)  # the interval is inferred: 15 minutes
    assert cleaned.interval == QUARTER_HOUR
    assert len(cleaned.values) == 21 * 96
    assert cleaned.values.iloc[[700, 1500]].isna().tolist() == [False, True]
    assert cleaned.estimated.sum() == 3 + 200
    pd.testing.assert_series_equal(raw, before)


def test_undo_of_the_last_step_is_bit_for_bit():
    raw = depot_readings()
    steps = [
        step("spread", 95, 104, timezone=ZONE),
        step("profile_fill", 690, 720, timezone=ZONE),
        step("cap", 0, 2016, high=18.5),
        step("exclude", 1400, 1600),
        step("interpolate", 1490, 1510),
    ]
    for count in range(len(steps)):
        undone = apply_steps(raw, steps[:count], interval=QUARTER_HOUR)
        applied = apply_steps(raw, steps[: count + 1], interval=QUARTER_HOUR)
        redone = apply_steps(raw, steps[:count], interval=QUARTER_HOUR)
        assert_same(undone, redone)
        assert not np.array_equal(
            np.c_[undone.values, undone.estimated, undone.excluded],
            np.c_[applied.values, applied.estimated, applied.excluded],
            equal_nan=True,
        )


def test_undoing_a_step_in_the_middle_replays_the_others():
    raw = depot_readings()
    gap_fill, cap_step, exclusion = (
        step("interpolate", 100, 103),
        step("cap", 1000, 1100, high=17.0),
        step("exclude", 0, 96),
    )
    without_middle = apply_steps(raw, [gap_fill, exclusion], interval=QUARTER_HOUR)
    assert_same(without_middle, apply_steps(raw, [exclusion, gap_fill], interval=QUARTER_HOUR))
    everything = apply_steps(raw, [gap_fill, cap_step, exclusion], interval=QUARTER_HOUR)
    outside = np.r_[0:1000, 1100:2016]
    assert np.array_equal(
        everything.values.to_numpy()[outside],
        without_middle.values.to_numpy()[outside],
        equal_nan=True,
    )


def test_a_step_that_cannot_apply_is_named_by_its_place_in_the_log():
    raw = depot_readings()
    steps = [step("exclude", 0, 10), step("interpolate", 0, 5)]
    with pytest.raises(InputError, match=r"cleaning step 2 \('interpolate'.*reading on each side"):
        apply_steps(raw, steps)


def test_duplicated_raw_stamps_are_refused_with_a_pointer_to_the_clock_check():
    raw = depot_readings()
    with pytest.raises(InputError, match="appears more than once"):
        apply_steps(pd.concat([raw, raw.iloc[:1]]).sort_index(), [])


RANGES = st.tuples(st.integers(0, 2015), st.integers(1, 200)).map(
    lambda pair: (pair[0], min(2016, pair[0] + pair[1]))
)
STEPS = st.one_of(
    RANGES.map(lambda r: step("interpolate", *r)),
    RANGES.map(lambda r: step("profile_fill", *r, timezone=ZONE, weeks=1)),
    RANGES.map(lambda r: step("spread", *r, timezone=ZONE)),
    RANGES.map(lambda r: step("remove", *r)),
    RANGES.map(lambda r: step("cap", *r, low=11.0, high=17.5)),
    RANGES.map(lambda r: step("exclude", *r)),
)


@settings(max_examples=40, deadline=None)
@given(st.lists(STEPS, min_size=1, max_size=5))
def test_replay_is_a_fold_of_pure_fixes_and_undo_returns_the_state_before(steps):
    raw = depot_readings()
    before = raw.copy(deep=True)
    try:
        replayed = apply_steps(raw, steps, interval=QUARTER_HOUR)
    except InputError:
        return  # e.g. a straight line with no reading on one side: refused, not guessed
    states = [apply_steps(raw, [], interval=QUARTER_HOUR)]
    for each in steps:
        snapshot = tuple(array.copy() for array in states[-1].arrays())
        states.append(FIXES[each.kind](states[-1], each.params))
        for now, then in zip(states[-2].arrays(), snapshot, strict=True):
            assert np.array_equal(now, then, equal_nan=True)  # the fix left its input alone
    assert_same(replayed, states[-1])
    assert_same(apply_steps(raw, steps[:-1], interval=QUARTER_HOUR), states[-2])
    pd.testing.assert_series_equal(raw, before)
