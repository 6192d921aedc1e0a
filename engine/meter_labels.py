"""What a person calls each meter, and the units figures are shown in — never what is computed.

The engine works in kWh and °C under each meter's raw column name, which stays the meter's key
(in the project file and in every JSON output). A project keeps beside that, per meter (read and
stored by the step :mod:`engine.steps.labels`):

* a display name, shown wherever the meter is named in the window, workbooks and text output;
* the utility the meter is filed under (kept with the meter itself, so utility roll-ups and
  bill prices follow it);
* the unit its readings were read in (therm, ccf, ton-hour…), shown beside kWh;

and for the site whether temperatures are shown in °C or °F (set at import when the weather
file came in °F). Conversions happen only when a figure is shown, with the factors of
:mod:`engine.units`.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache

from engine import units
from engine.errors import InputError
from engine.meters import CANONICAL_UNIT, UTILITIES, utility_words
from engine.progress import Progress, reworded

#: The project setting holding each meter's display name and unit read in, by raw name.
LABELS_SETTING = "meter_labels"
#: The project setting holding the unit temperatures are shown in ("°C" or "°F").
TEMPERATURE_SETTING = "temperature_unit"
TEMPERATURE_UNITS = ("°C", "°F")
#: Kinds of unit an amount of energy can be shown in without knowing the interval (power units
#: such as kW need one): energy, gas volume (at the default heat content) and steam mass.
SHOWABLE_KINDS = ("energy", "gas_volume", "steam_mass")
#: The units a meter's figures can be shown in, in the order the window offers them.
READ_UNITS: tuple[str, ...] = tuple(
    name for name, unit in units.UNITS.items() if unit.kind in SHOWABLE_KINDS
)
LONGEST_NAME = 80


@dataclass(frozen=True)
class MeterLabel:
    """How one meter is named and shown; ``name`` is the raw column name, its key."""

    name: str
    utility: str
    read_unit: str = CANONICAL_UNIT
    display_name: str = ""

    @property
    def shown(self) -> str:
        """The display name, or the raw name when it has none."""
        return self.display_name or self.name

    @property
    def other_unit(self) -> str | None:
        """The unit figures are shown in beside kWh, or None when that is kWh itself."""
        return None if self.read_unit == CANONICAL_UNIT else self.read_unit

    def in_read_unit(self, kwh: float | None) -> float | None:
        """``kwh`` in the unit read in (None stays None); gas volumes at the default heat
        content of :mod:`engine.units`."""
        return None if kwh is None else units.from_kwh(float(kwh), self.read_unit)

    def as_dict(self) -> dict:
        return {
            "name": self.name,
            "display_name": self.shown,
            "utility": self.utility,
            "read_unit": self.read_unit,
        }


Labels = Mapping[str, MeterLabel]


def default_read_unit(unit_found: str) -> str:
    """The unit found on import when energy can be shown in it, else kWh (a kW file's
    readings are demand, which a monthly total cannot be shown in)."""
    unit = units.UNITS.get(unit_found)
    return unit.name if unit is not None and unit.kind in SHOWABLE_KINDS else CANONICAL_UNIT


def checked_display_name(text: str, name: str) -> str:
    text = " ".join(text.split())
    if len(text) > LONGEST_NAME:
        raise InputError(
            f"the display name of meter '{name}' is {len(text)} characters long.",
            hint=f"Keep it to {LONGEST_NAME} characters.",
        )
    return "" if text == name else text


def checked_utility(text: str) -> str:
    key = "_".join(text.strip().lower().replace("-", " ").split())
    if key not in UTILITIES:
        raise InputError(
            f"'{text}' is not a utility this tool knows.",
            hint=f"Use one of: {', '.join(map(utility_words, UTILITIES))}.",
        )
    return key


def checked_read_unit(text: str) -> str:
    unit = units.find_unit(text)
    if unit is None or unit.kind not in SHOWABLE_KINDS:
        raise InputError(
            f"'{text}' is not a unit energy can be shown in.",
            hint=f"Use one of: {', '.join(READ_UNITS)}.",
        )
    return unit.name


def shown_name(labels: Labels | None, name: str) -> str:
    """How meter ``name`` is named to readers: its display name, else the raw name (also for
    names that are not meters, such as a utility)."""
    label = (labels or {}).get(name)
    return name if label is None else label.shown


def with_shown_names(text: str, labels: Labels) -> str:
    """``text`` with every meter named as readers know it: each raw name that has a display
    name, standing as a whole name (not inside a longer one), becomes that display name.

    Display names already in ``text`` are left as they are, so rewording twice changes
    nothing (a display name may hold the raw name, "Library" shown as "Main Library").
    """
    shown = {label.name: label.display_name for label in labels.values() if label.display_name}
    if not shown:
        return text
    found = _names_pattern(tuple(sorted({*shown, *shown.values()}, key=len, reverse=True)))
    return found.sub(lambda match: shown.get(match.group(0), match.group(0)), text)


def naming_progress(progress: Progress | None, labels: Labels) -> Progress | None:
    """``progress`` whose messages name meters by their display names in ``labels``."""
    if progress is None:
        return None
    return reworded(progress, lambda message: with_shown_names(message, labels))


@cache
def _names_pattern(names: tuple[str, ...]) -> re.Pattern[str]:
    """Any of ``names`` (longest first) standing alone: no letter, digit, "_" or "-" beside."""
    return re.compile(r"(?<![\w-])(?:" + "|".join(map(re.escape, names)) + r")(?![\w-])")


# -- temperatures ------------------------------------------------------------------------------


def checked_temperature_unit(text: str) -> str:
    """ "°F" or "°C" from text such as "F", "fahrenheit" or "°C"; InputError for others."""
    unit = units.find_unit(text)
    if unit is None or unit.kind != "temperature":
        raise InputError(
            f"'{text}' is not a temperature unit.",
            hint="Use F (°F) or C (°C).",
        )
    return unit.name


def in_temperature_unit(value: float, unit: str, shown: str) -> tuple[float, str]:
    """A figure in ``unit`` with temperatures (°C) and amounts per °C ("kWh per °C-day",
    "kWh per day per °C") expressed in ``shown`` (°C or °F) instead; other figures as given."""
    if unit == "°C":
        return float(units.from_celsius(value, shown)), shown
    if "°C" in unit:
        return float(units.per_degree_in(value, shown)), unit.replace("°C", shown)
    return value, unit
