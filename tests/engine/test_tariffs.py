"""Rate cards and monthly cost: worked bills by hand, windows, blocks, taxes, DST, many paths."""

from __future__ import annotations

import calendar
import json
import tomllib
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from engine.errors import InputError
from engine.tariffs import (
    COST_PARTS,
    billing_months,
    cost,
    cost_paths,
    effective_rate,
    read_tariff,
    tariff_from_dict,
)

ZONE = "America/Chicago"
HOUR = pd.Timedelta(hours=1)
QUARTER = pd.Timedelta(minutes=15)
SAMPLE = Path(__file__).resolve().parents[2] / "sample"

# An illustrative tariff, invented with invented numbers, whose structure follows a typical
# published commercial time-of-use tariff (common practice): a customer charge; summer and
# winter on-peak energy windows on weekdays with holidays off-peak; a facilities demand charge
# on the month's highest demand at any hour plus a summer on-peak demand charge; taxes in
# percent of the charges.
TIME_OF_USE = """
ratecard_format = 1
name = "Fernhollow large general service, time of use"
currency = "USD"

[holidays]
country = "US"

[[version]]
effective_from = 2030-01-01
fixed_per_month = 250.00

[[version.time_of_use]]
name = "summer on-peak"
per_kwh = 0.18
months = [6, 7, 8, 9]
days = "weekdays"
start = "12:00"
end = "18:00"
except_holidays = true

[[version.time_of_use]]
name = "winter on-peak"
per_kwh = 0.11
months = [1, 2, 3, 4, 5, 10, 11, 12]
days = ["mon", "tue", "wed", "thu", "fri"]
start = "07:00"
end = "11:00"
except_holidays = true

[[version.time_of_use]]
name = "off-peak"
per_kwh = 0.06

[[version.demand]]
name = "facilities"
per_kw = 8.00

[[version.demand]]
name = "summer on-peak demand"
per_kw = 15.00
months = [6, 7, 8, 9]
days = "weekdays"
start = "12:00"
end = "18:00"
except_holidays = true

[[version.tax]]
name = "utility tax"
percent = 4.0

[[version.tax]]
name = "regulatory fee"
percent = 1.5
"""


def write_card(folder: Path, text: str, name: str = "fernhollow.ratecard.toml") -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def month_starts(first: str, after: str, step: pd.Timedelta) -> pd.DatetimeIndex:
    """UTC interval starts of the local months from ``first`` up to ``after``."""
    start, stop = pd.Timestamp(first, tz=ZONE), pd.Timestamp(after, tz=ZONE)
    freq = "D" if step == pd.Timedelta(days=1) else step  # "D" steps local calendar days
    return pd.date_range(start, stop, freq=freq, inclusive="left").tz_convert("UTC")


def flat_card(rate: float, extra: str = "", fixed: float = 0.0) -> str:
    return f"""
ratecard_format = 1
name = "flat"
currency = "EUR"
[[version]]
effective_from = 2030-01-01
fixed_per_month = {fixed}
energy_per_kwh = {rate}
{extra}
"""


@pytest.fixture
def time_of_use(tmp_path: Path):
    return read_tariff(write_card(tmp_path, TIME_OF_USE))


# --- worked bills -----------------------------------------------------------------------------


def test_worked_summer_bill_by_hand(time_of_use) -> None:
    index = month_starts("2031-07-01", "2031-08-01", HOUR)
    local = index.tz_convert(ZONE)
    weekday = local.day_of_week.to_numpy() < 5
    afternoon = (local.hour.to_numpy() >= 12) & (local.hour.to_numpy() < 18)
    kwh = np.full(len(index), 200.0) + 100.0 * (weekday & afternoon)
    extra = {
        "2031-07-04 14:00": 150.0,  # Independence Day (a Friday): on-peak hours, but a holiday
        "2031-07-12 03:00": 300.0,  # a Saturday night: the month's highest demand
        "2031-07-16 17:00": 40.0,  # a Wednesday, last on-peak hour: the on-peak peak
        "2031-07-16 18:00": 200.0,  # same day, first hour after the window
    }
    for stamp, amount in extra.items():
        kwh[local == pd.Timestamp(stamp, tz=ZONE)] += amount
    bill = cost(pd.Series(kwh, index), ZONE, time_of_use, HOUR).loc[pd.Period("2031-07", "M")]

    # July 2031: 31 days, 744 hours, no clock change. 1 July 2031 is a Tuesday, so the month
    # is 4 whole weeks (20 weekdays) plus Tue 29, Wed 30, Thu 31: 23 weekdays, of which Fri 4
    # July is a federal holiday (5 U.S.C. 6103, from memory): 22 on-peak days.
    assert calendar.weekday(2031, 7, 1) == calendar.TUESDAY  # Python's calendar module
    assert sum(calendar.weekday(2031, 7, d) < 5 for d in range(1, 32)) == 23
    # kWh: base 744 × 200 = 148 800; afternoons 23 × 6 × 100 = 13 800;
    #      extras 150 + 300 + 40 + 200 = 690; total 163 290.
    # on-peak kWh: 22 days × 6 h × 300 = 39 600, plus the 40 at 17:00 on the 16th = 39 640.
    # off-peak kWh: 163 290 − 39 640 = 123 650.
    # energy: 39 640 × 0.18 = 7 135.20; 123 650 × 0.06 = 7 419.00; together 14 554.20.
    # demand: highest hour 200 + 300 = 500 kW × 8.00 = 4 000.00; highest on-peak hour
    #         300 + 40 = 340 kW × 15.00 = 5 100.00 (the holiday's 450 kW and the 18:00 400 kW
    #         are outside the window); together 9 100.00.
    # charges: 250.00 + 14 554.20 + 9 100.00 = 23 904.20; taxes 5.5 % = 1 314.731;
    # total 25 218.931.
    assert bill["kwh"] == pytest.approx(163_290.0)
    assert bill["peak_kw"] == pytest.approx(500.0)
    assert bill["fixed"] == pytest.approx(250.0)
    assert bill["energy"] == pytest.approx(14_554.20)
    assert bill["demand"] == pytest.approx(9_100.0)
    assert bill["taxes"] == pytest.approx(1_314.731)
    assert bill["total"] == pytest.approx(25_218.931)


def test_worked_winter_bill_by_hand(time_of_use) -> None:
    index = month_starts("2032-01-01", "2032-02-01", HOUR)
    frame = cost(pd.Series(100.0, index), ZONE, time_of_use, HOUR)
    bill = frame.iloc[0]
    # January 2032: 744 hours at 100 kWh = 74 400 kWh. 1 January 2032 is a Thursday: 4 whole
    # weeks (20 weekdays) plus Thu 29 and Fri 30 = 22 weekdays; New Year's Day (Thu 1) and
    # Martin Luther King Jr. Day (third Monday, the 19th; 5 U.S.C. 6103, from memory) are
    # holidays: 20 on-peak days × 4 h (07-11) × 100 = 8 000 kWh × 0.11 = 880.00.
    # off-peak 66 400 × 0.06 = 3 984.00; energy 4 864.00.
    # demand: 100 kW × 8.00 = 800.00; no summer on-peak demand in January.
    # charges 250 + 4 864 + 800 = 5 914.00; taxes 5.5 % = 325.27; total 6 239.27.
    assert sum(calendar.weekday(2032, 1, d) < 5 for d in range(1, 32)) == 22
    assert calendar.weekday(2032, 1, 19) == calendar.MONDAY
    assert list(frame.index) == [pd.Period("2032-01", "M")]
    assert frame.attrs["currency"] == "USD"
    assert bill["energy"] == pytest.approx(4_864.0)
    assert bill["demand"] == pytest.approx(800.0)
    assert bill["taxes"] == pytest.approx(325.27)
    assert bill["total"] == pytest.approx(6_239.27)


def test_dst_months_count_clock_hours(tmp_path: Path) -> None:
    night = """
[[version.time_of_use]]
name = "small hours"
per_kwh = 1.0
start = "01:00"
end = "03:00"
[[version.time_of_use]]
name = "rest"
per_kwh = 0.0
"""
    card = flat_card(0.0, night).replace("energy_per_kwh = 0.0\n", "")
    tariff = read_tariff(write_card(tmp_path, card))
    index = month_starts("2031-03-01", "2031-12-01", QUARTER)
    frame = cost(pd.Series(1.0, index), ZONE, tariff, QUARTER)
    # US daylight saving time (Energy Policy Act of 2005, from memory) starts at 02:00 on the
    # second Sunday of March (9 March 2031) and ends at 02:00 on the first Sunday of November
    # (2 November 2031); both 1 March and 1 November 2031 are Saturdays.
    assert calendar.weekday(2031, 3, 1) == calendar.weekday(2031, 11, 1) == calendar.SATURDAY
    # March: 31 × 24 − 1 = 743 h × 4 kWh = 2 972 kWh; 01:00-03:00 exists 31 × 2 − 1 = 61 h.
    # April: 720 h × 4 = 2 880 kWh. November: 30 × 24 + 1 = 721 h × 4 = 2 884 kWh, and the
    # repeated 01:00 hour makes 30 × 2 + 1 = 61 h in the window. Demand 1 kWh / 0.25 h = 4 kW.
    assert frame.loc["2031-03", "kwh"] == pytest.approx(2_972.0)
    assert frame.loc["2031-04", "kwh"] == pytest.approx(2_880.0)
    assert frame.loc["2031-11", "kwh"] == pytest.approx(2_884.0)
    assert frame.loc["2031-03", "energy"] == pytest.approx(61 * 4.0)
    assert frame.loc["2031-04", "energy"] == pytest.approx(60 * 4.0)
    assert frame.loc["2031-11", "energy"] == pytest.approx(61 * 4.0)
    assert (frame["peak_kw"] == 4.0).all()
    assert len(frame) == 9


def test_blocks_are_priced_per_month(tmp_path: Path) -> None:
    tiers = """
[[version.block]]
up_to_kwh = 1000
per_kwh = 0.12
[[version.block]]
up_to_kwh = 5000
per_kwh = 0.10
[[version.block]]
per_kwh = 0.08
"""
    card = flat_card(0.0, tiers).replace("energy_per_kwh = 0.0\n", "")
    tariff = read_tariff(write_card(tmp_path, card))
    index = month_starts("2031-04-01", "2031-06-01", HOUR)
    kwh = np.where(index < pd.Timestamp("2031-05-01", tz=ZONE), 10.0, 1.0)
    frame = cost(pd.Series(kwh, index), ZONE, tariff, HOUR)
    # April: 720 h × 10 = 7 200 kWh → 1 000 × 0.12 + 4 000 × 0.10 + 2 200 × 0.08
    #        = 120 + 400 + 176 = 696.00.
    # May: 744 h × 1 = 744 kWh, all in the first block again → 744 × 0.12 = 89.28.
    assert frame["kwh"].tolist() == pytest.approx([7_200.0, 744.0])
    assert frame["energy"].tolist() == pytest.approx([696.0, 89.28])


def test_taxes_are_percent_of_all_charges(tmp_path: Path) -> None:
    extra = """
[[version.demand]]
name = "demand"
per_kw = 10.0
[[version.tax]]
name = "value added tax"
percent = 20.0
[[version.tax]]
name = "levy"
percent = 2.5
"""
    tariff = read_tariff(write_card(tmp_path, flat_card(0.25, extra, fixed=30.0)))
    index = month_starts("2031-02-01", "2031-03-01", HOUR)
    bill = cost(pd.Series(2.0, index), ZONE, tariff, HOUR).iloc[0]
    # February 2031: 672 h × 2 kWh = 1 344 kWh × 0.25 = 336.00; demand 2 kW × 10 = 20.00;
    # fixed 30.00 → 386.00; taxes (20 + 2.5) % = 86.85 (not compounded); total 472.85.
    assert bill["energy"] == pytest.approx(336.0)
    assert bill["taxes"] == pytest.approx(86.85)
    assert bill["total"] == pytest.approx(472.85)


def test_demand_window_holds_only_its_months_days_and_hours(time_of_use) -> None:
    index = month_starts("2031-05-01", "2031-07-01", HOUR)
    local = index.tz_convert(ZONE)
    kwh = np.full(len(index), 100.0)
    spikes = {
        "2031-05-14 13:00": 900.0,  # a May weekday afternoon: not a summer month
        "2031-06-14 13:00": 800.0,  # a June Saturday
        "2031-06-16 11:00": 700.0,  # a June Monday before the window
        "2031-06-19 13:00": 600.0,  # Juneteenth (a Thursday holiday)
        "2031-06-20 12:00": 250.0,  # a June Friday inside the window: the on-peak peak
    }
    for stamp, amount in spikes.items():
        kwh[local == pd.Timestamp(stamp, tz=ZONE)] = amount
    frame = cost(pd.Series(kwh, index), ZONE, time_of_use, HOUR)
    # Python's calendar module: 14 May is a Wednesday, 14 June a Saturday, 16 June a Monday,
    # 19 June a Thursday (Juneteenth, a federal holiday: 5 U.S.C. 6103, from memory), 20 June
    # a Friday.
    weekdays = [calendar.weekday(2031, m, d) for m, d in ((5, 14), (6, 14), (6, 16), (6, 19))]
    assert weekdays == [calendar.WEDNESDAY, calendar.SATURDAY, calendar.MONDAY, calendar.THURSDAY]
    assert calendar.weekday(2031, 6, 20) == calendar.FRIDAY
    # May: facilities 900 × 8 = 7 200; no on-peak demand outside June-September.
    # June: facilities 800 × 8 = 6 400; on-peak 250 × 15 = 3 750; together 10 150.
    assert frame["demand"].tolist() == pytest.approx([7_200.0, 10_150.0])
    assert frame["peak_kw"].tolist() == pytest.approx([900.0, 800.0])


def test_version_in_effect_on_a_months_last_day_prices_it(tmp_path: Path) -> None:
    card = (
        flat_card(0.10)
        + """
[[version]]
effective_from = 2031-03-15
fixed_per_month = 0
energy_per_kwh = 0.20
"""
    )
    tariff = read_tariff(write_card(tmp_path, card))
    index = month_starts("2031-02-01", "2031-04-01", HOUR)
    frame = cost(pd.Series(1.0, index), ZONE, tariff, HOUR)
    # February (672 h) at 0.10 = 67.20; March (743 h) ends after 15 March: 0.20 → 148.60.
    assert frame["energy"].tolist() == pytest.approx([67.2, 148.6])


def test_daily_energy_costs_under_a_flat_tariff(tmp_path: Path) -> None:
    tariff = read_tariff(write_card(tmp_path, flat_card(0.5, fixed=10.0)))
    index = month_starts("2031-03-01", "2031-05-01", pd.Timedelta(days=1))
    frame = cost(pd.Series(3.0, index), ZONE, tariff, pd.Timedelta(days=1))
    # 31 and 30 local days × 3 kWh × 0.5, plus 10 per month.
    assert frame["total"].tolist() == pytest.approx([56.5, 55.0])


def test_explicit_holiday_dates_without_a_country(tmp_path: Path) -> None:
    text = TIME_OF_USE.replace('country = "US"', "dates = [2032-01-06]")
    tariff = read_tariff(write_card(tmp_path, text))
    index = month_starts("2032-01-01", "2032-02-01", HOUR)
    bill = cost(pd.Series(100.0, index), ZONE, tariff, HOUR).iloc[0]
    # Only Tue 6 January is a holiday now: 21 on-peak days × 400 kWh = 8 400 × 0.11 = 924.00;
    # off-peak 66 000 × 0.06 = 3 960.00; energy 4 884.00.
    assert bill["energy"] == pytest.approx(4_884.0)


# --- many paths -------------------------------------------------------------------------------


def test_cost_paths_equals_cost_of_each_path(tmp_path: Path) -> None:
    blocks_from_april = """
[[version]]
effective_from = 2031-04-01
fixed_per_month = 300.0
[[version.block]]
up_to_kwh = 150000
per_kwh = 0.09
[[version.block]]
per_kwh = 0.07
[[version.demand]]
name = "weekday demand"
per_kw = 11.0
days = "weekdays"
[[version.tax]]
name = "tax"
percent = 3.0
"""
    tariff = read_tariff(write_card(tmp_path, TIME_OF_USE + blocks_from_april))
    index = month_starts("2031-02-01", "2031-07-01", QUARTER)
    generator = np.random.default_rng(61)
    paths = 60.0 + 15.0 * generator.standard_normal((6, len(index)))
    many = cost_paths(paths, index, ZONE, tariff)
    assert many.shape == (6, 5, len(COST_PARTS))
    for path, one in zip(paths, many, strict=True):
        single = cost(pd.Series(path, index), ZONE, tariff, QUARTER)
        np.testing.assert_allclose(one, single.to_numpy(), rtol=1e-12)
    months = billing_months(index, ZONE)
    assert months.astype(str).tolist() == ["2031-02", "2031-03", "2031-04", "2031-05", "2031-06"]


def test_each_path_pays_for_its_own_peak(time_of_use) -> None:
    index = month_starts("2031-07-01", "2031-08-01", HOUR)
    paths = np.full((3, len(index)), 100.0)
    paths[1, 50] = 400.0  # 3 July 02:00 local: off-peak, raises only the facilities charge
    many = cost_paths(paths, index, ZONE, time_of_use)
    demand = many[:, 0, COST_PARTS.index("demand")]
    # base: 100 kW × (8 + 15) = 2 300; the spiked path: 400 × 8 + 100 × 15 = 4 700.
    assert demand.tolist() == pytest.approx([2_300.0, 4_700.0, 2_300.0])


# --- the bundled sample -----------------------------------------------------------------------


def test_sample_ratecard_reproduces_the_sample_bills() -> None:
    tariff = read_tariff(SAMPLE / "tariffs" / "orrinvale-main-electric.ratecard.toml")
    bills = pd.read_csv(SAMPLE / "data" / "electric-bills.csv")
    # sample/README.md: charges = customer + energy rate × billed kWh + demand rate × max
    # demand, with the version in effect on the last day of service, rounded to the cent.
    for row in bills.itertuples(index=False):
        version = tariff.version_on(date.fromisoformat(row[1]))
        charges = (
            version.fixed_per_month
            + version.flat_rate * row[2]
            + sum(charge.per_kw for charge in version.demand) * row[3]
        )
        assert round(charges, 2) == pytest.approx(row[4], abs=0.005)


def test_sample_time_of_use_option_reads_and_costs() -> None:
    tariff = read_tariff(SAMPLE / "tariffs" / "orrinvale-main-electric-tou-option.ratecard.toml")
    index = month_starts("2026-01-01", "2027-01-01", HOUR)
    frame = cost(pd.Series(700.0, index), ZONE, tariff, HOUR)
    assert len(frame) == 12
    assert (frame["energy"] / frame["kwh"]).between(0.0538, 0.1185).all()


def test_the_format_example_in_the_readme_reads() -> None:
    text = (SAMPLE / "tariffs" / "README.md").read_text(encoding="utf-8")
    example = text.split("```toml\n", 1)[1].split("```", 1)[0]
    tariff = tariff_from_dict(tomllib.loads(example), source="README.md")
    assert [p.name for p in tariff.versions[0].time_of_use] == ["summer on-peak", "off-peak"]


def test_tariff_survives_a_json_round_trip(time_of_use) -> None:
    stored = json.loads(json.dumps(time_of_use.to_dict()))
    assert tariff_from_dict(stored) == time_of_use


# --- effective rate from bills ----------------------------------------------------------------


def test_effective_rate_weights_the_newest_year_by_quantity() -> None:
    ends = pd.date_range("2030-01-31", periods=15, freq="ME")
    bills = pd.DataFrame(
        {
            "period_start": ends - pd.offsets.MonthBegin(1),
            "period_end": ends,
            "quantity_kwh": [9_999.0] * 3 + [1_000.0] * 6 + [3_000.0] * 5 + [np.nan],
            "cost": [1.0] * 3 + [150.0] * 6 + [300.0] * 5 + [500.0],
        }
    )
    # Newest bill ends 2031-03-31; bills ending after 2030-03-31 count: April 2030 on (12
    # bills), the last with no quantity and so left out. Σ cost = 6 × 150 + 5 × 300 = 2 400;
    # Σ kWh = 6 × 1 000 + 5 × 3 000 = 21 000; rate 2 400 / 21 000 = 0.114 285 7...
    assert effective_rate(bills) == pytest.approx(2_400 / 21_000)


def test_effective_rate_of_the_sample_bills_matches_a_weighted_mean() -> None:
    raw = pd.read_csv(SAMPLE / "data" / "electric-bills.csv")
    bills = pd.DataFrame(
        {
            "period_end": pd.to_datetime(raw["Service To"]),
            "quantity_kwh": raw["Billed kWh"],
            "cost": raw["Total Charges ($)"],
        }
    )
    # The twelve newest bills are those ending within a year of the newest bill's end.
    a_year_before = bills["period_end"].iloc[-1] - pd.DateOffset(years=1)
    assert bills["period_end"].iloc[-13] <= a_year_before < bills["period_end"].iloc[-12]
    last_year = bills.tail(12)
    # numpy's weighted mean of each bill's own price per kWh, weighted by kWh.
    price = last_year["cost"] / last_year["quantity_kwh"]
    expected = np.average(price, weights=last_year["quantity_kwh"])
    assert effective_rate(bills) == pytest.approx(expected, rel=1e-12)


def test_effective_rate_needs_its_columns() -> None:
    with pytest.raises(InputError, match="'cost'"):
        effective_rate(pd.DataFrame({"period_end": [], "quantity_kwh": []}))


# --- refusals ---------------------------------------------------------------------------------

CARD_MISTAKES = [
    ("percent = 4.0", "percent = 400.0", "'percent' (version 1, tax 1)"),
    ("per_kwh = 0.06", 'per_kwh = "cheap"', "'per_kwh' (version 1, time_of_use 3)"),
    ("fixed_per_month = 250.00", "fixed_per_month = 250.00\nfixed_per_mnth = 1", "fixed_per_mnth"),
    ('name = "off-peak"', 'name = "off-peak"\nmonths = [1]', "time_of_use 3"),
    ('start = "12:00"', 'start = "12:75"', "'start' (version 1, time_of_use 1)"),
    ('end = "11:00"', "", "'end' (version 1, time_of_use 2)"),
    ('days = "weekdays"', 'days = ["mon", "funday"]', "'days'"),
    ("months = [6, 7, 8, 9]", "months = [6, 13]", "'months'"),
    ('[holidays]\ncountry = "US"', "", "'holidays'"),
    ('country = "US"', 'country = "XX"', "'country' (holidays)"),
    ("ratecard_format = 1", "ratecard_format = 2", "'ratecard_format'"),
    ('currency = "USD"', 'currency = "dollars"', "'currency'"),
    ("fixed_per_month = 250.00", "fixed_per_month = 250.00\nenergy_per_kwh = 0.1", "2 ways"),
    ("effective_from = 2030-01-01", "", "'effective_from'"),
    ('name = "Fernhollow', 'name = "Fernhollow\n', "not valid TOML"),
    # numbers and nesting no rate card has: Python refuses to convert integers over 4300
    # digits, a 4000-digit one overflows a float, and tomllib recurses once per nested list
    ("fixed_per_month = 250.00", "fixed_per_month = " + "9" * 4000, "'fixed_per_month'"),
    ("ratecard_format = 1", "ratecard_format = " + "9" * 5000, "too long to read"),
    ("ratecard_format = 1", "ratecard_format = 1\nx = " + "[" * 5000 + "]" * 5000, "too deeply"),
]


@pytest.mark.parametrize(("old", "new", "named"), CARD_MISTAKES)
def test_rate_card_mistakes_name_the_file_and_key(
    tmp_path: Path, old: str, new: str, named: str
) -> None:
    assert old in TIME_OF_USE
    path = write_card(tmp_path, TIME_OF_USE.replace(old, new, 1))
    with pytest.raises(InputError) as caught:
        read_tariff(path)
    assert caught.value.place.file == str(path)
    assert "fernhollow.ratecard.toml" in caught.value.message
    assert named in caught.value.message
    assert len(caught.value.message) < 400 and "\n" not in caught.value.message


def test_blocks_must_rise_and_end_open(tmp_path: Path) -> None:
    falling = flat_card(
        0.0,
        "[[version.block]]\nup_to_kwh = 500\nper_kwh = 0.1\n"
        "[[version.block]]\nup_to_kwh = 400\nper_kwh = 0.1\n"
        "[[version.block]]\nper_kwh = 0.1\n",
    ).replace("energy_per_kwh = 0.0\n", "")
    with pytest.raises(InputError, match="block 2"):
        read_tariff(write_card(tmp_path, falling))
    capped = flat_card(0.0, "[[version.block]]\nup_to_kwh = 500\nper_kwh = 0.1\n")
    with pytest.raises(InputError, match="last block"):
        read_tariff(write_card(tmp_path, capped.replace("energy_per_kwh = 0.0\n", "")))


def test_missing_file_is_an_input_error(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="cannot be read"):
        read_tariff(tmp_path / "absent.ratecard.toml")


def test_incomplete_months_and_gaps_are_refused(time_of_use) -> None:
    index = month_starts("2031-07-01", "2031-08-01", HOUR)
    with pytest.raises(InputError, match="missing, the first at 2031-07-01 00:00 CDT"):
        cost(pd.Series(1.0, index[5:]), ZONE, time_of_use, HOUR)
    with pytest.raises(InputError, match="1 interval"):
        cost(pd.Series(1.0, index.delete(100)), ZONE, time_of_use, HOUR)
    with pytest.raises(InputError, match="not on the 60-minute steps"):
        cost(pd.Series(1.0, index + pd.Timedelta(minutes=5)), ZONE, time_of_use, HOUR)
    values = pd.Series(1.0, index)
    values.iloc[30] = np.nan
    with pytest.raises(InputError, match="no value at 2031-07-02 06:00 CDT"):
        cost(values, ZONE, time_of_use, HOUR)


def test_interval_must_suit_the_tariff(tmp_path: Path, time_of_use) -> None:
    days = month_starts("2031-07-01", "2031-08-01", pd.Timedelta(days=1))
    with pytest.raises(InputError, match="daily energy cannot show"):
        cost(pd.Series(1.0, days), ZONE, time_of_use, pd.Timedelta(days=1))
    half_past = read_tariff(write_card(tmp_path, TIME_OF_USE.replace('"12:00"', '"12:30"')))
    hours = month_starts("2031-07-01", "2031-08-01", HOUR)
    with pytest.raises(InputError, match="edge at 12:30"):
        cost(pd.Series(1.0, hours), ZONE, half_past, HOUR)
    quarters = month_starts("2031-07-01", "2031-08-01", QUARTER)
    assert len(cost(pd.Series(1.0, quarters), ZONE, half_past, QUARTER)) == 1


def test_months_before_the_first_version_are_refused(time_of_use) -> None:
    index = month_starts("2029-12-01", "2030-01-01", HOUR)
    with pytest.raises(InputError, match="no version in effect on 2029-12-31"):
        cost(pd.Series(1.0, index), ZONE, time_of_use, HOUR)
