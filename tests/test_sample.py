"""The bundled sample: reproducible, within its size budget, and true to its documented truth.

The byte-for-byte check regenerates every file in a temporary folder (about 6 s, most of it
writing the workbook) and compares sha256 digests with the committed ``sample/data``.
"""

from __future__ import annotations

import calendar
import hashlib
import json
import sys
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from statsmodels.tsa.stattools import acf

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # ``sample`` is a top-level package beside ``engine``
    sys.path.insert(0, str(ROOT))

from sample import (  # noqa: E402
    campus_periods,
    day_types,
    heating_degree_days_f,
    lognormal_multiplier,
    simulate_campus,
    unit_ar1,
    write_sample,
)
from sample.campus import campus_holidays  # noqa: E402

DATA = ROOT / "sample" / "data"
ZONE = ZoneInfo("America/Chicago")
FILES = {
    "electricity": "electricity-15min.xlsx",
    "gas": "gas-boilerhouse-daily.csv",
    "chilled_water": "chilled-water-plant.csv",
    "bills": "electric-bills.csv",
    "weather": "weather-station.csv",
    "calendar": "campus-calendar.csv",
    "truth": "truth.json",
    "faults": "faults.json",
}
FIRST_DAY, LAST_DAY = date(2023, 7, 1), date(2026, 10, 31)
BUILDINGS = [
    "Library (kWh)",
    "Science Labs (kWh)",
    "Residence Hall (kWh)",
    "Athletics Center (kWh)",
    "Administration (kWh)",
]
#: Each cell is rounded to 3 decimals, so a sum of n cells is within n * 0.0005 of the truth.
CELL_ROUNDING = 0.0005


def _local_start(day: date) -> datetime:
    """Local midnight starting ``day``, as a UTC datetime (so that differences are durations;
    Python subtracts datetimes sharing one tzinfo on the wall clock)."""
    return datetime(day.year, day.month, day.day, tzinfo=ZONE).astimezone(UTC)


def _months(start: pd.Timestamp, end: pd.Timestamp) -> set[str]:
    """Local calendar months touched by the half-open range [start, end)."""
    first = start.tz_localize(None)
    last = end.tz_localize(None) - pd.Timedelta(microseconds=1)
    return {f"{p.year}-{p.month:02d}" for p in pd.period_range(first, last, freq="M")}


@pytest.fixture(scope="module")
def campus():
    return simulate_campus()


@pytest.fixture(scope="module")
def regenerated(campus, tmp_path_factory) -> Path:
    directory = tmp_path_factory.mktemp("sample")
    write_sample(directory, campus)
    return directory


@pytest.fixture(scope="module")
def truth() -> dict:
    return json.loads((DATA / FILES["truth"]).read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def faults() -> list[dict]:
    return json.loads((DATA / FILES["faults"]).read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def workbook() -> pd.DataFrame:
    # Read with calamine, a reader independent of the openpyxl writer.
    return pd.read_excel(DATA / FILES["electricity"], engine="calamine", header=3)


def _electricity_faults(faults: list[dict], kind: str | None = None) -> list[dict]:
    return [
        f
        for f in faults
        if f["file"] == FILES["electricity"] and (kind is None or f["kind"] == kind)
    ]


def _month_sums(workbook: pd.DataFrame) -> tuple[pd.DataFrame, pd.Series]:
    """Per local month: the sum of each column and the number of rows."""
    month = workbook["Timestamp"].dt.strftime("%Y-%m")
    return workbook[BUILDINGS].groupby(month).sum(), month.value_counts()


# -- the files themselves ---------------------------------------------------------------------


def test_generator_rewrites_the_committed_files_byte_for_byte(regenerated):
    assert sorted(p.name for p in regenerated.iterdir()) == sorted(FILES.values())
    for name in FILES.values():
        fresh = hashlib.sha256((regenerated / name).read_bytes()).hexdigest()
        committed = hashlib.sha256((DATA / name).read_bytes()).hexdigest()
        assert fresh == committed, f"{name} differs; rerun python sample/generate.py"


def test_sample_files_exist_and_fit_the_size_budget():
    sizes = {name: (DATA / name).stat().st_size for name in FILES.values()}
    assert all(size > 0 for size in sizes.values())
    assert sum(sizes.values()) <= 15_000_000


def test_workbook_layout_matches_the_readme():
    path = DATA / FILES["electricity"]
    with pd.ExcelFile(path, engine="calamine") as book:
        assert book.sheet_names == ["Interval export"]
    top = pd.read_excel(path, sheet_name="Interval export", engine="calamine", header=None, nrows=5)
    assert top.iloc[0, 0] == "Orrinvale Campus Meter Gateway"
    assert top.iloc[1, 0] == "Exported 2026-11-02 06:00"
    assert top.iloc[2].isna().all()
    assert top.iloc[3].tolist() == ["Timestamp", *BUILDINGS]
    assert isinstance(top.iloc[4, 0], datetime)


def test_workbook_clock_is_naive_central_time_with_its_dst_quirks(workbook, faults):
    stamps = workbook["Timestamp"]
    # US DST since 2007 (Energy Policy Act of 2005, from memory): starts the second Sunday of
    # March at 02:00, ends the first Sunday of November at 02:00.
    for year in (2024, 2025, 2026):
        sundays = [d for d in calendar.Calendar().itermonthdates(year, 3) if d.month == 3]
        spring = [d for d in sundays if d.weekday() == calendar.SUNDAY][1]
        on_spring = stamps[stamps.dt.date == spring]
        assert len(on_spring) == 92 and not (on_spring.dt.hour == 2).any()
    for year in (2023, 2024, 2025):
        november = [d for d in calendar.Calendar().itermonthdates(year, 11) if d.month == 11]
        autumn = next(d for d in november if d.weekday() == calendar.SUNDAY)
        on_autumn = stamps[stamps.dt.date == autumn]
        assert len(on_autumn) == 100 and (on_autumn.dt.hour == 1).sum() == 8
    # Independently of pandas' time zones: every UTC quarter hour, shown on the local clock by
    # the standard library's zoneinfo, minus the documented missing rows.
    (gap,) = _electricity_faults(faults, "missing_rows")
    gap_start, gap_end = datetime.fromisoformat(gap["start"]), datetime.fromisoformat(gap["end"])
    first = _local_start(FIRST_DAY)
    last = _local_start(LAST_DAY + timedelta(days=1))
    expected = []
    instant = first
    while instant < last:
        if not gap_start <= instant < gap_end:
            expected.append(instant.astimezone(ZONE).replace(tzinfo=None))
        instant += timedelta(minutes=15)
    assert stamps.dt.to_pydatetime().tolist() == expected


def test_faults_fall_inside_the_data_range_and_name_real_meters(faults, workbook):
    first = _local_start(FIRST_DAY)
    last = _local_start(LAST_DAY + timedelta(days=1))
    chilled = pd.read_csv(DATA / FILES["chilled_water"])
    meters_in = {
        FILES["electricity"]: set(BUILDINGS),
        FILES["gas"]: {"Meter Reading (CCF)"},
        FILES["chilled_water"]: set(chilled["Meter ID"]),
        FILES["weather"]: {"Dry Bulb (°F)"},
    }
    assert set(workbook.columns) == {"Timestamp", *BUILDINGS}
    kinds = set()
    for fault in faults:
        start = datetime.fromisoformat(fault["start"])
        end = datetime.fromisoformat(fault["end"])
        assert first <= start < end <= last, fault
        assert fault["meters"] and set(fault["meters"]) <= meters_in[fault["file"]], fault
        kinds.add(fault["kind"])
    assert kinds == {
        "comms_gap_with_catch_up",
        "stuck_value",
        "zero_run",
        "spike",
        "multiplier_change",
        "missing_rows",
        "duplicate_rows",
        "register_rollover",
        "meter_replacement",
    }


def test_interval_faults_show_in_the_workbook(workbook, faults):
    stamps = workbook["Timestamp"]
    for fault in _electricity_faults(faults):
        start = pd.Timestamp(fault["start"]).tz_localize(None)
        end = pd.Timestamp(fault["end"]).tz_localize(None)
        inside = (stamps >= start) & (stamps < end)
        cells = workbook.loc[inside, fault["meters"]]
        kind = fault["kind"]
        if kind == "missing_rows":
            assert cells.empty
        elif kind == "zero_run":
            assert len(cells) == 20 and (cells == 0.0).all().all()
        elif kind == "stuck_value":
            (meter,) = fault["meters"]
            assert len(cells) == 192 and (cells[meter] == fault["repeated_value"][meter]).all()
            assert (
                workbook.loc[stamps == start - pd.Timedelta(minutes=15), meter].item()
                == (fault["repeated_value"][meter])
            )
        elif kind == "spike":
            (meter,) = fault["meters"]
            same_day = workbook.loc[stamps.dt.date == start.date(), meter]
            assert cells[meter].item() > 0.6 * fault["factor"] * same_day.median()


# -- ground truth -----------------------------------------------------------------------------


def test_truth_monthly_totals_equal_the_clean_simulation(campus, truth):
    # Recomputed another way than the generator: calendar (year, month) groups after
    # converting to local time, compared to truth.json's rounded values.
    local = campus.electricity.tz_convert("America/Chicago")
    sums = local.groupby([local.index.year, local.index.month]).sum()
    for column in BUILDINGS:
        documented = truth["electricity"]["buildings"][column]["monthly_kwh"]
        assert len(documented) == len(sums) == 40
        for (year, month), value in sums[column].items():
            assert documented[f"{year}-{month:02d}"] == pytest.approx(value, abs=0.0006)
    chilled = campus.chilled_water.tz_convert("America/Chicago")
    tons = chilled.groupby([chilled.index.year, chilled.index.month]).sum()
    for meter, months in truth["chilled_water"]["meters"].items():
        for (year, month), value in tons[meter].items():
            assert months["monthly_ton_hours"][f"{year}-{month:02d}"] == pytest.approx(
                value, abs=0.0006
            )


def test_unfaulted_workbook_months_sum_to_truth(workbook, truth, faults):
    sums, rows = _month_sums(workbook)
    touched = {column: set() for column in BUILDINGS}
    for fault in _electricity_faults(faults):
        if fault["kind"] == "comms_gap_with_catch_up":
            continue  # the catch-up reading keeps the month's energy; checked below
        months = _months(pd.Timestamp(fault["start"]), pd.Timestamp(fault["end"]))
        for meter in fault["meters"]:
            touched[meter] |= months
    for column in BUILDINGS:
        documented = truth["electricity"]["buildings"][column]["monthly_kwh"]
        clean = sorted(set(documented) - touched[column])
        assert len(clean) >= 24
        for month in clean:
            bound = rows[month] * CELL_ROUNDING + 1e-6
            assert sums.at[month, column] == pytest.approx(documented[month], abs=bound), month


def test_catch_up_reading_holds_the_missed_energy(workbook, truth, faults):
    (gap,) = _electricity_faults(faults, "comms_gap_with_catch_up")
    (meter,) = gap["meters"]
    start = pd.Timestamp(gap["start"]).tz_localize(None)
    end = pd.Timestamp(gap["end"]).tz_localize(None)
    stamps = workbook["Timestamp"]
    blank = workbook.loc[(stamps >= start) & (stamps < end), meter]
    assert len(blank) == 24 and blank.isna().all()
    sums, rows = _month_sums(workbook)
    month = f"{start:%Y-%m}"
    documented = truth["electricity"]["buildings"][meter]["monthly_kwh"][month]
    assert sums.at[month, meter] == pytest.approx(documented, abs=rows[month] * CELL_ROUNDING)


def test_multiplier_change_scales_the_months_after_it(workbook, truth, faults):
    (shift,) = _electricity_faults(faults, "multiplier_change")
    (meter,) = shift["meters"]
    sums, rows = _month_sums(workbook)
    documented = truth["electricity"]["buildings"][meter]["monthly_kwh"]
    first_full = pd.Timestamp(shift["start"]).tz_localize(None) + pd.offsets.MonthBegin(1)
    gap_month = "2026-01"  # four days of rows are missing there
    later = [m for m in documented if m >= f"{first_full:%Y-%m}" and m != gap_month]
    assert len(later) == 12
    for month in later:
        expected = shift["factor"] * documented[month]
        assert sums.at[month, meter] == pytest.approx(expected, abs=rows[month] * CELL_ROUNDING)


# -- the other files --------------------------------------------------------------------------


def test_gas_reads_unwrap_to_documented_use_and_degree_day_slope(truth, faults):
    gas = pd.read_csv(DATA / FILES["gas"])
    assert list(gas.columns) == ["Read Date", "Meter Reading (CCF)"]
    days = pd.to_datetime(gas["Read Date"], format="%m/%d/%Y")
    assert days.iloc[0] == pd.Timestamp(FIRST_DAY) and days.iloc[-1] == pd.Timestamp(LAST_DAY)
    assert (days.diff().dropna() == pd.Timedelta(days=1)).all()
    reads = gas["Meter Reading (CCF)"].to_numpy()
    assert reads.max() <= 99_999
    documented = truth["gas"]
    use = np.diff(reads, prepend=np.floor(documented["first_reading"])).astype(float)
    drops = days[use < 0].dt.date.tolist()
    by_kind = {f["kind"]: f for f in faults if f["file"] == FILES["gas"]}
    rollover = datetime.fromisoformat(by_kind["register_rollover"]["start"]).date()
    replaced = datetime.fromisoformat(by_kind["meter_replacement"]["start"]).date()
    assert drops == sorted([rollover, replaced])
    use[(days.dt.date == rollover).to_numpy()] += 10 ** documented["register_digits"]
    on_replacement = (days.dt.date == replaced).to_numpy()
    use[on_replacement] = reads[on_replacement] - documented["new_meter_reading"]
    # Whole-unit reads of a running total: each month is within 1 ccf of the true total
    # (2 where the replacement restarts the count).
    monthly = pd.Series(use).groupby(days.dt.strftime("%Y-%m").to_numpy()).sum()
    for month, value in monthly.items():
        assert value == pytest.approx(documented["monthly_ccf"][month], abs=2.0), month

    # Heating degree-days (ASHRAE Handbook—Fundamentals, degree-day method, from memory):
    # HDD = max(0, base − daily mean temperature), here base 60 °F from the station file.
    weather = pd.read_csv(DATA / FILES["weather"])
    stamps = pd.to_datetime(weather["Observation Time (local)"], format="%Y-%m-%d %H:%M")
    daily_mean_f = weather["Dry Bulb (°F)"].groupby(stamps.dt.normalize()).mean()
    hdd = (60.0 - daily_mean_f).clip(lower=0.0).reindex(days).to_numpy()
    keep = ~on_replacement & ~np.isnan(hdd)
    keep[0] = False  # the first day's use needs the read before the file starts
    fit = sm.OLS(use[keep], sm.add_constant(hdd[keep])).fit()
    intercept, slope = fit.params
    assert slope == pytest.approx(documented["ccf_per_heating_degree_day_f"], rel=0.03)
    assert intercept == pytest.approx(documented["hot_water_ccf_per_day"], abs=2.0)


def test_chilled_water_stamps_are_interval_ends_with_the_right_offsets(truth, faults):
    table = pd.read_csv(DATA / FILES["chilled_water"])
    assert list(table.columns) == ["Meter ID", "Reading Time (UTC offset)", "Ton-Hours"]
    stamps = [datetime.fromisoformat(text) for text in table["Reading Time (UTC offset)"]]
    # The offset printed must be the one the IANA zone gives that instant (stdlib zoneinfo).
    assert all(s.utcoffset() == s.astimezone(ZONE).utcoffset() for s in stamps)
    assert stamps[0] == _local_start(FIRST_DAY) + timedelta(hours=1)
    assert stamps[-1] == _local_start(LAST_DAY + timedelta(days=1))
    duplicated = table[table.duplicated(keep="first")]
    (fault,) = [f for f in faults if f["file"] == FILES["chilled_water"]]
    assert fault["kind"] == "duplicate_rows"
    assert sorted(duplicated["Meter ID"]) == sorted(fault["meters"])
    assert set(duplicated["Reading Time (UTC offset)"]) == set(fault["stamps_in_file"])
    unique = table.drop_duplicates()
    ends = pd.to_datetime(unique["Reading Time (UTC offset)"], utc=True)
    months = (ends - pd.Timedelta(hours=1)).dt.tz_convert("America/Chicago").dt.strftime("%Y-%m")
    sums = unique["Ton-Hours"].groupby([unique["Meter ID"], months]).sum()
    counts = unique.groupby([unique["Meter ID"], months]).size()
    for (meter, month), value in sums.items():
        documented = truth["chilled_water"]["meters"][meter]["monthly_ton_hours"][month]
        assert value == pytest.approx(documented, abs=counts[(meter, month)] * 0.005)


def test_bills_follow_drifting_periods_and_the_interval_data(truth, workbook, faults):
    bills = pd.read_csv(DATA / FILES["bills"], parse_dates=["Service From", "Service To"])
    starts, ends = bills["Service From"], bills["Service To"]
    assert (starts.iloc[1:].to_numpy() == (ends.iloc[:-1] + pd.Timedelta(days=1)).to_numpy()).all()
    assert starts.dt.day.between(3, 9).all()
    assert ((ends - starts).dt.days + 1).between(28, 33).all()

    for _, bill in bills.iterrows():
        tariff = [
            t
            for t in truth["tariff"]
            if bill["Service To"] >= pd.Timestamp(t["applies_to_bills_ending_on_or_after"])
        ][-1]
        charges = (
            tariff["customer_charge_usd"]
            + tariff["energy_usd_per_kwh"] * bill["Billed kWh"]
            + tariff["demand_usd_per_kw"] * bill["Max Demand kW"]
        )
        assert bill["Total Charges ($)"] == pytest.approx(charges, abs=0.006)

    faulted = [
        (pd.Timestamp(f["start"]).tz_localize(None), pd.Timestamp(f["end"]).tz_localize(None))
        for f in _electricity_faults(faults)
    ]
    unmetered_kw = truth["electricity"]["unmetered_kw"]
    stamps = workbook["Timestamp"]
    checked = 0
    for _, bill in bills.iterrows():
        first, after = bill["Service From"], bill["Service To"] + pd.Timedelta(days=1)
        if any(start < after and first < end for start, end in faulted):
            continue
        rows = workbook.loc[(stamps >= first) & (stamps < after), BUILDINGS]
        # A billing period of local days holds exactly its UTC duration in quarter hours,
        # one more or fewer hour across a DST change (zoneinfo, independent of pandas).
        hours = (_local_start(after.date()) - _local_start(first.date())) / timedelta(hours=1)
        assert len(rows) == hours * 4
        expected_kwh = rows.to_numpy().sum() + unmetered_kw * hours
        assert bill["Billed kWh"] == pytest.approx(expected_kwh, abs=0.5 + rows.size * 0.0005)
        expected_kw = rows.sum(axis=1).max() * 4 + unmetered_kw
        assert bill["Max Demand kW"] == pytest.approx(expected_kw, abs=0.05 + 5 * 4 * 0.0005)
        checked += 1
    assert checked >= 20


def test_weather_file_matches_the_documented_climate(truth, faults):
    weather = pd.read_csv(DATA / FILES["weather"])
    assert list(weather.columns) == ["Observation Time (local)", "Dry Bulb (°F)"]
    stamps = pd.to_datetime(weather["Observation Time (local)"], format="%Y-%m-%d %H:%M")
    # NIST SP 811 (2008), B.9: t/°C = (t/°F − 32) / 1.8.
    celsius = (weather["Dry Bulb (°F)"] - 32.0) / 1.8
    missing = [f for f in faults if f["file"] == FILES["weather"]]
    # Every UTC hour on the local clock (stdlib zoneinfo), less the documented missing ones.
    expected, instant = [], _local_start(FIRST_DAY)
    gaps = [(datetime.fromisoformat(f["start"]), datetime.fromisoformat(f["end"])) for f in missing]
    while instant < _local_start(LAST_DAY + timedelta(days=1)):
        if not any(start <= instant < end for start, end in gaps):
            expected.append(instant.astimezone(ZONE).replace(tzinfo=None))
        instant += timedelta(hours=1)
    assert stamps.dt.to_pydatetime().tolist() == expected
    assert sum((end - start) / timedelta(hours=1) for start, end in gaps) == 18
    assert stamps.duplicated().sum() == 3  # the repeated autumn 01:00, once a year
    # Three whole years, so the annual cycle averages out: the mean is the stated normal,
    # give or take the slow weather swings (a few tenths of a degree).
    three_years = celsius[stamps < pd.Timestamp("2026-07-01")]
    assert three_years.mean() == pytest.approx(truth["climate"]["mean_c"], abs=1.0)
    months = stamps.dt.strftime("%Y-%m")
    gap_months = set().union(
        *(_months(pd.Timestamp(f["start"]), pd.Timestamp(f["end"])) for f in missing)
    )
    means = celsius.groupby(months).mean()
    for month, documented in truth["climate"]["monthly_mean_c"].items():
        if month not in gap_months:
            # 0.05 °F rounding is 0.028 °C; truth.json keeps 3 decimals.
            assert means[month] == pytest.approx(documented, abs=0.03), month
    normals = truth["climate"]["normal_month_mean_c"]
    assert normals["1"] < 0.0 and normals["7"] > 20.0  # cold winters, warm summers


def test_calendar_covers_every_day_once_with_known_kinds():
    table = pd.read_csv(DATA / FILES["calendar"], parse_dates=["First Day", "Last Day"])
    assert list(table.columns) == ["Period", "First Day", "Last Day", "Kind"]
    assert set(table["Kind"]) == {"term", "break", "closure", "summer session"}
    assert table["Period"].is_unique
    following = table["First Day"].iloc[1:].to_numpy()
    assert (following == (table["Last Day"].iloc[:-1] + pd.Timedelta(days=1)).to_numpy()).all()
    assert table["First Day"].iloc[0] <= pd.Timestamp(FIRST_DAY)
    assert table["Last Day"].iloc[-1] >= pd.Timestamp(LAST_DAY)
    closures = table[table["Kind"] == "closure"]
    for year in range(2023, 2027):
        christmas = pd.Timestamp(year, 12, 25)
        assert ((closures["First Day"] <= christmas) & (christmas <= closures["Last Day"])).any()


# -- the building blocks ----------------------------------------------------------------------


def test_ar1_noise_has_the_stated_correlation_and_moments():
    rng = np.random.default_rng(7)
    path = unit_ar1(200_000, 0.8, rng)
    # statsmodels' sample autocorrelation as the reference estimator.
    assert acf(path, nlags=2, fft=True)[1:] == pytest.approx([0.8, 0.64], abs=0.01)
    assert path.std() == pytest.approx(1.0, abs=0.02)
    multiplier = lognormal_multiplier(200_000, 0.06, 0.7, rng)
    assert multiplier.mean() == pytest.approx(1.0, abs=0.002)
    assert multiplier.std() / multiplier.mean() == pytest.approx(0.06, rel=0.03)


def test_day_types_follow_the_precedence_and_federal_holidays():
    periods = campus_periods(FIRST_DAY, LAST_DAY)
    # 5 U.S.C. 6103(a) (from memory): Thanksgiving is the fourth Thursday in November,
    # Independence Day July 4, Christmas Day December 25.
    november = [d for d in calendar.Calendar().itermonthdates(2024, 11) if d.month == 11]
    thanksgiving = [d for d in november if d.weekday() == calendar.THURSDAY][3]
    days = {
        date(2024, 12, 25): "closure",  # a federal holiday inside the campus closure
        thanksgiving: "holiday",
        date(2024, 7, 4): "holiday",  # during the summer session
        date(2024, 3, 11): "break",  # Monday of spring break
        date(2024, 10, 5): "weekend",  # a Saturday in the fall term
        date(2024, 6, 12): "summer",  # a Wednesday in the summer session
        date(2024, 10, 9): "weekday",  # a Wednesday in the fall term
    }
    found = day_types(list(days), periods, campus_holidays())
    assert dict(zip(days, found, strict=True)) == days


def test_heating_degree_days_on_a_worked_example():
    # A day held at 0 °C is 32 °F (NIST SP 811, B.9), so base-60 °F HDD = 60 − 32 = 28;
    # a day at 20 °C (68 °F) has none.
    hours = pd.date_range("2024-01-10", periods=48, freq="h", tz="America/Chicago")
    weather = pd.Series([0.0] * 24 + [20.0] * 24, index=hours.tz_convert("UTC"))
    hdd = heating_degree_days_f(weather, "America/Chicago", 60.0)
    assert hdd.tolist() == pytest.approx([28.0, 0.0])
