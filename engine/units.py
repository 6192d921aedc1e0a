"""Recognise units in header text and convert readings to kWh (or temperatures to °C).

Every utility is stored as energy in kWh (see :mod:`engine.meters`). Meter files arrive in
many units: electrical energy and demand, gas volumes and heat units, chilled-water
ton-hours, steam mass. :func:`find_unit` reads the unit out of a column header or a unit
cell; :func:`to_kwh` and :func:`from_kwh` convert readings, vectorised over numpy arrays and
pandas Series; :func:`convert_temperature` brings temperatures to °C.

Factors come from NIST SP 811 (2008), *Guide for the Use of the International System of
Units*, Appendix B.8 (factors for units listed alphabetically). Volume-to-energy (gas) and
mass-to-energy (steam) need a heat content that depends on the supply; the defaults below
are adjustable per call.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
import pandas as pd

# --- Factor constants -------------------------------------------------------------------------

#: Joules in one kilowatt hour; NIST SP 811 (2008), B.8: kilowatt hour = 3.6 E+06 J (exact).
JOULES_PER_KWH = 3.6e6
#: Joules in one International Table Btu. NIST SP 811 (2008), B.8 prints 1.055 056 E+03 J; the
#: full value follows from the definition 1 Btu_IT/(lb·°F) = 1 cal_IT/(g·°C) with
#: cal_IT = 4.1868 J, lb = 0.453 592 37 kg and °F = 5/9 K (exact).
JOULES_PER_BTU = 4.1868 * 453.59237 * 5.0 / 9.0
#: kWh in one Btu_IT.
KWH_PER_BTU = JOULES_PER_BTU / JOULES_PER_KWH
#: Joules in one therm. NIST SP 811 (2008), B.8: therm (EC) = 1.055 06 E+08 J, therm (U.S.) =
#: 1.054 804 E+08 J. We use the EC therm because it equals 100 000 Btu_IT (to 4 ppm), the Btu
#: every other factor here uses, so therms, dekatherms and MMBtu agree with one another; the
#: U.S. therm rests on the 59 °F Btu. The two differ by 0.024 %, far inside meter accuracy.
JOULES_PER_THERM = 1.05506e8
#: Watts in one ton of refrigeration, defined as 12 000 Btu_IT/h. NIST SP 811 (2008), B.8:
#: ton of refrigeration (12 000 Btu_IT/h) = 3.516 853 E+03 W.
WATTS_PER_TON_OF_REFRIGERATION = 12_000.0 * JOULES_PER_BTU / 3600.0
#: Cubic metres in one cubic foot; NIST SP 811 (2008), B.8: cubic foot = 2.831 685 E-02 m³
#: (exact as 0.3048³ since the foot is 0.3048 m).
CUBIC_METRES_PER_CUBIC_FOOT = 0.3048**3

#: Default heat content of natural gas, Btu per standard cubic foot (higher heating value).
#: U.S. Energy Information Administration, "Heat Content of Natural Gas Consumed", U.S. total:
#: 1,036 Btu/ft³ for 2023 (1,036–1,037 over 2020–2025). Local supply varies by a few percent;
#: the gas utility's bill states the factor it used, which should replace this default.
GAS_HEAT_CONTENT_BTU_PER_FT3 = 1036.0
#: Default energy delivered per pound of steam, Btu/lb. Common practice for low-pressure
#: district steam is about 1,000 Btu/lb (latent heat plus some sensible heat, condensate
#: not credited), so 1,000 lb of steam ≈ 1 MMBtu. Replace it with the plant's figure.
STEAM_ENTHALPY_BTU_PER_LB = 1000.0

#: Standard cubic metres in one normal cubic metre (Nm³, 0 °C and 101.325 kPa) at the U.S.
#: gas-industry base of 60 °F and 14.73 psia (common practice, from memory), by the ideal-gas
#: law V_std = V_n · (T_std / T_n) · (p_n / p_std). Gas heat contents are quoted per standard
#: cubic foot, so a normal cubic metre holds about 5 % more gas than a metre at base conditions.
_PASCALS_PER_PSI = 0.453_592_37 * 9.806_65 / 0.0254**2  # lbf/in², NIST SP 811 B.8: 6.894 757 E+03
STANDARD_PER_NORMAL_VOLUME = (
    ((60.0 - 32.0) / 1.8 + 273.15) / 273.15 * (101_325.0 / (14.73 * _PASCALS_PER_PSI))
)

# --- Units --------------------------------------------------------------------------------------

#: What each kind of unit is converted through: energy to kWh, power to kW (times the interval),
#: gas volume to standard cubic feet (times the heat content), steam mass to pounds (times the
#: enthalpy), temperature to °C.
BASE_UNITS: Mapping[str, str] = {
    "energy": "kWh",
    "power": "kW",
    "gas_volume": "ft³",
    "steam_mass": "lb",
    "temperature": "°C",
}


@dataclass(frozen=True)
class Unit:
    """A unit as found in a meter file.

    Attributes
    ----------
    name : str
        Normalised display name ("kWh", "therm", "m³", "ton-hour", "°F").
    kind : str
        One of the keys of :data:`BASE_UNITS`.
    utility_hint : str or None
        The utility this unit usually measures (a name from ``engine.meters.UTILITIES``), or
        None when the unit is used by several (MMBtu, GJ). Only a hint: the caller may override.
    base_amount : float or None
        How many of the kind's base unit (:data:`BASE_UNITS`) one of this unit is; None for
        temperatures, which convert with an offset.
    """

    name: str
    kind: str
    utility_hint: str | None
    base_amount: float | None


def _unit(name: str, kind: str, hint: str | None, base_amount: float | None) -> Unit:
    return Unit(name=name, kind=kind, utility_hint=hint, base_amount=base_amount)


_KWH_PER_THERM = JOULES_PER_THERM / JOULES_PER_KWH
_KW_PER_BTU_PER_HOUR = JOULES_PER_BTU / 3600.0 / 1000.0

#: Every unit the tool knows, by display name.
UNITS: Mapping[str, Unit] = {
    u.name: u
    for u in (
        _unit("Wh", "energy", "electricity", 1e-3),
        _unit("kWh", "energy", "electricity", 1.0),
        _unit("MWh", "energy", "electricity", 1e3),
        _unit("GWh", "energy", "electricity", 1e6),
        _unit("kJ", "energy", None, 1e3 / JOULES_PER_KWH),
        _unit("MJ", "energy", None, 1e6 / JOULES_PER_KWH),
        _unit("GJ", "energy", None, 1e9 / JOULES_PER_KWH),
        _unit("Btu", "energy", None, KWH_PER_BTU),
        _unit("kBtu", "energy", None, 1e3 * KWH_PER_BTU),
        _unit("MMBtu", "energy", None, 1e6 * KWH_PER_BTU),
        _unit("therm", "energy", "natural_gas", _KWH_PER_THERM),
        _unit("Dth", "energy", "natural_gas", 10.0 * _KWH_PER_THERM),
        _unit("ton-hour", "energy", "chilled_water", WATTS_PER_TON_OF_REFRIGERATION / 1000.0),
        _unit("W", "power", "electricity", 1e-3),
        _unit("kW", "power", "electricity", 1.0),
        _unit("MW", "power", "electricity", 1e3),
        _unit("ton", "power", "chilled_water", WATTS_PER_TON_OF_REFRIGERATION / 1000.0),
        _unit("Btu/h", "power", None, _KW_PER_BTU_PER_HOUR),
        _unit("kBtu/h", "power", None, 1e3 * _KW_PER_BTU_PER_HOUR),
        _unit("MMBtu/h", "power", None, 1e6 * _KW_PER_BTU_PER_HOUR),
        _unit("ft³", "gas_volume", "natural_gas", 1.0),
        _unit("ccf", "gas_volume", "natural_gas", 100.0),
        _unit("Mcf", "gas_volume", "natural_gas", 1e3),
        _unit("MMcf", "gas_volume", "natural_gas", 1e6),
        _unit("m³", "gas_volume", "natural_gas", 1.0 / CUBIC_METRES_PER_CUBIC_FOOT),
        _unit(
            "Nm³",
            "gas_volume",
            "natural_gas",
            STANDARD_PER_NORMAL_VOLUME / CUBIC_METRES_PER_CUBIC_FOOT,
        ),
        _unit("lb", "steam_mass", "steam", 1.0),
        _unit("klb", "steam_mass", "steam", 1e3),
        _unit("°F", "temperature", None, None),
        _unit("°C", "temperature", None, None),
    )
}

# --- Recognising units in text ------------------------------------------------------------------

# Spellings of each unit, as regular expressions over lower-cased text in which "³" is "3",
# "·" is "-" and degree look-alikes are "°". Where one spelling begins another at the same
# place ("kw" and "kw-h", "ton" and "ton-hours"), the longer one is listed first.
_SPELLINGS: tuple[tuple[str, str], ...] = (
    ("MMBtu/h", r"mmbtu/hr?|mmbtuh"),
    # "MBtu" and "MBH": in U.S. usage the M is the Roman thousand (as in Mcf, Mlb), so MBtu is
    # a kBtu, not a million Btu (common practice).
    ("kBtu/h", r"[km]btu/hr?|kbtuh|mbh"),
    ("Btu/h", r"btu/hr?|btuh"),
    ("MMBtu", r"mmbtus?"),
    ("kBtu", r"[km]btus?"),
    ("Btu", r"btus?"),
    ("Dth", r"dths?|dekatherms?|decatherms?"),
    ("therm", r"therms?|thms?"),
    ("ton-hour", r"tons?[ -]?(?:hours?|hrs?|h)"),
    ("ton", r"tons?"),
    ("GWh", r"gw-?h"),
    ("MWh", r"mw-?h"),
    ("kWh", r"kw-?h"),
    ("Wh", r"w-?h"),
    ("MW", r"mw"),
    ("kW", r"kw"),
    ("GJ", r"gj"),
    ("MJ", r"mj"),
    ("kJ", r"kj"),
    # "hcf" (hundred cubic feet) is another name for the ccf.
    ("ccf", r"ccf|hcf"),
    ("MMcf", r"mmcf"),
    ("Mcf", r"mcf"),
    ("ft³", r"ft3|scf|cu\.? ?ft|cubic (?:feet|foot)"),
    ("Nm³", r"nm3"),
    ("m³", r"m3|cubic met(?:er|re)s?"),
    # "Mlb" is a thousand pounds in steam metering (common practice).
    ("klb", r"[km]lbs?"),
    ("lb", r"lbs?|pounds?"),
    ("°F", r"°f|deg(?:rees?)?\.? ?f|fahrenheit"),
    ("°C", r"°c|deg(?:rees?)?\.? ?c|celsius|centigrade"),
)
# Single letters are units only when they stand alone: the whole text, inside brackets, or (for
# temperatures) right after a word starting with "temp" at the end of the text ("Temp F").
# Elsewhere "Building F" or "Meter W" would be misread.
_LETTERS: tuple[tuple[str, str], ...] = (("°F", "f"), ("°C", "c"), ("W", "w"))
_TEMPERATURE_LEAD_IN = r"\btemp\w*[ :]+"
# A unit token may follow a digit ("15kWh", "usage_kwh") but not a letter ("Room3" is not m³),
# and may not touch a "/" on either side: "kWh/day" or "lb/hr" are rates we do not read.
_BEFORE = r"(?<![a-z/])"
_AFTER = r"(?![a-z0-9/])"
_TRANSLATION = str.maketrans({"³": "3", "·": "-", "º": "°", "˚": "°", "^": None})


def _build_pattern() -> tuple[re.Pattern[str], dict[str, Unit]]:
    groups: dict[str, Unit] = {}
    alternatives: list[str] = []
    for number, (name, spelling) in enumerate(_SPELLINGS):
        group = f"u{number}"
        groups[group] = UNITS[name]
        alternatives.append(f"{_BEFORE}(?P<{group}>{spelling}){_AFTER}")
    for number, (name, letter) in enumerate(_LETTERS):
        group = f"l{number}"
        groups[group] = UNITS[name]
        lead_in = r"^|[(\[{]"
        if UNITS[name].kind == "temperature":
            lead_in += "|" + _TEMPERATURE_LEAD_IN
        alternatives.append(rf"(?:{lead_in}) *(?P<{group}>{letter}) *(?:$|[)\]}}])")
    return re.compile("|".join(alternatives)), groups


_PATTERN, _GROUP_UNITS = _build_pattern()


def _normalised(text: str) -> str:
    text = text.replace("℉", "°F").replace("℃", "°C")
    return text.translate(_TRANSLATION).lower().strip()


def find_unit(text: str) -> Unit | None:
    """Find the unit named in a column header or a unit cell.

    Matching ignores case and decoration ("Usage (kWh)", "Energy [MWh]", "Demand kW") but only
    accepts whole unit tokens: "kW" is not found inside "kWh", nor "m3" inside "Room3". Apparent
    power (kVA) and rates such as "kWh/day" are not units of this tool and give None. When the
    text names several units the leftmost wins.

    Parameters
    ----------
    text : str
        A header or cell text.

    Returns
    -------
    Unit or None
        The unit, or None when no known unit is named.

    Examples
    --------
    >>> find_unit("Main gas (CCF)").name
    'ccf'
    >>> find_unit("Chiller plant ton-hrs").name
    'ton-hour'
    >>> find_unit("Demand kVA") is None
    True
    """
    match = _PATTERN.search(_normalised(text))
    if match is None:
        return None
    return _GROUP_UNITS[match.lastgroup]


def utility_hint(text: str) -> str | None:
    """The utility a unit written as ``text`` usually measures (kWh: electricity, therm:
    natural gas), or None when the unit says nothing about it."""
    unit = find_unit(text)
    return unit.utility_hint if unit is not None else None


def _resolve(unit: Unit | str) -> Unit:
    if isinstance(unit, Unit):
        return unit
    found = find_unit(unit)
    if found is None:
        raise ValueError(f"no known unit in {unit!r}")
    return found


# --- Conversions --------------------------------------------------------------------------------

Values = TypeVar("Values", float, np.ndarray, pd.Series)


def _apply(values: Values, transform: Callable[[np.ndarray], np.ndarray]) -> Values:
    """Apply an elementwise float transform, keeping the container (Series, array or number)."""
    if isinstance(values, pd.Series):
        data = values.to_numpy(dtype="float64", na_value=np.nan)
        return pd.Series(transform(data), index=values.index, name=values.name)
    if np.ndim(values) == 0:
        return float(transform(np.float64(values)))
    return transform(np.asarray(values, dtype="float64"))


def _positive(value: float, what: str) -> float:
    if not (np.isfinite(value) and value > 0):
        raise ValueError(f"{what} must be a positive number, got {value!r}")
    return float(value)


def kwh_per_unit(
    unit: Unit | str,
    *,
    interval: pd.Timedelta | None = None,
    gas_heat_content: float = GAS_HEAT_CONTENT_BTU_PER_FT3,
    steam_enthalpy: float = STEAM_ENTHALPY_BTU_PER_LB,
) -> float:
    """kWh in one reading of ``unit``; see :func:`to_kwh` for the parameters."""
    unit = _resolve(unit)
    if unit.kind == "energy":
        return unit.base_amount
    if unit.kind == "power":
        if interval is None:
            raise ValueError(
                f"readings in {unit.name} are average demand: the interval length is needed "
                "to turn them into energy"
            )
        hours = _positive(pd.Timedelta(interval) / pd.Timedelta(hours=1), "the interval")
        return unit.base_amount * hours
    if unit.kind == "gas_volume":
        heat = _positive(gas_heat_content, "the gas heat content (Btu per cubic foot)")
        return unit.base_amount * heat * KWH_PER_BTU
    if unit.kind == "steam_mass":
        enthalpy = _positive(steam_enthalpy, "the steam enthalpy (Btu per pound)")
        return unit.base_amount * enthalpy * KWH_PER_BTU
    raise ValueError(f"{unit.name} is a {unit.kind} unit and cannot be converted to energy")


def to_kwh(
    values: Values,
    unit: Unit | str,
    *,
    interval: pd.Timedelta | None = None,
    gas_heat_content: float = GAS_HEAT_CONTENT_BTU_PER_FT3,
    steam_enthalpy: float = STEAM_ENTHALPY_BTU_PER_LB,
) -> Values:
    """Convert readings in ``unit`` to kWh per reading.

    Parameters
    ----------
    values : float, numpy.ndarray or pandas.Series
        The readings; NaN stays NaN.
    unit : Unit or str
        The readings' unit, or text naming it (read with :func:`find_unit`).
    interval : pandas.Timedelta, optional
        Length of each reading's interval; required for power units, whose readings are the
        average demand over the interval (energy = demand × hours).
    gas_heat_content : float, default :data:`GAS_HEAT_CONTENT_BTU_PER_FT3`
        Btu per standard cubic foot, for gas volumes.
    steam_enthalpy : float, default :data:`STEAM_ENTHALPY_BTU_PER_LB`
        Btu delivered per pound, for steam mass.

    Returns
    -------
    Same container as ``values`` (float64), in kWh.

    Raises
    ------
    ValueError
        For a temperature unit, a power unit without ``interval``, or a non-positive setting.

    Examples
    --------
    >>> round(to_kwh(1.0, "MMBtu"), 3)
    293.071
    """
    factor = kwh_per_unit(
        unit, interval=interval, gas_heat_content=gas_heat_content, steam_enthalpy=steam_enthalpy
    )
    return _apply(values, lambda data: data * factor)


def from_kwh(
    values: Values,
    unit: Unit | str,
    *,
    interval: pd.Timedelta | None = None,
    gas_heat_content: float = GAS_HEAT_CONTENT_BTU_PER_FT3,
    steam_enthalpy: float = STEAM_ENTHALPY_BTU_PER_LB,
) -> Values:
    """Convert kWh back to ``unit`` (e.g. a gas budget in the therms of the bill).

    The inverse of :func:`to_kwh`, with the same parameters.
    """
    factor = kwh_per_unit(
        unit, interval=interval, gas_heat_content=gas_heat_content, steam_enthalpy=steam_enthalpy
    )
    return _apply(values, lambda data: data / factor)


def convert_temperature(values: Values, unit: Unit | str) -> Values:
    """Convert temperatures in °F or °C to °C.

    NIST SP 811 (2008), B.8: t/°C = (t/°F − 32)/1.8.

    Parameters
    ----------
    values : float, numpy.ndarray or pandas.Series
        The temperatures.
    unit : Unit or str
        °F or °C (or text naming one).

    Returns
    -------
    Same container as ``values`` (float64), in °C.
    """
    unit = _resolve(unit)
    if unit.name == "°F":
        return _apply(values, lambda data: (data - 32.0) / 1.8)
    if unit.name == "°C":
        return _apply(values, lambda data: data.copy())
    raise ValueError(f"{unit.name} is not a temperature unit")


def from_celsius(values: Values, unit: Unit | str) -> Values:
    """Convert temperatures in °C to ``unit`` (°F or °C), for showing them as a site reads them.

    The inverse of :func:`convert_temperature`; NIST SP 811 (2008), B.8:
    t/°F = 1.8 · (t/°C) + 32.
    """
    unit = _resolve(unit)
    if unit.name == "°F":
        return _apply(values, lambda data: data * 1.8 + 32.0)
    if unit.name == "°C":
        return _apply(values, lambda data: data.copy())
    raise ValueError(f"{unit.name} is not a temperature unit")


def per_degree_in(values: Values, unit: Unit | str) -> Values:
    """Convert an amount per °C of temperature difference (a slope, kWh per °C-day) to one per
    degree of ``unit``: a Fahrenheit degree is 1/1.8 of a kelvin (NIST SP 811 (2008), B.8:
    °F interval = 5.555 556 E-01 K), so a slope per °F is the slope per °C divided by 1.8."""
    unit = _resolve(unit)
    if unit.kind != "temperature":
        raise ValueError(f"{unit.name} is not a temperature unit")
    size = 1.0 / 1.8 if unit.name == "°F" else 1.0
    return _apply(values, lambda data: data * size)
