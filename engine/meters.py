"""The data model every step shares: a meter's interval energy, and what the importer noticed.

Conventions (relied on by cleaning, profiles, models and budgets):

* ``MeterSeries.values`` is a float64 ``pandas.Series`` of energy **per interval** in the
  utility's canonical unit (see :data:`CANONICAL_UNIT`), indexed by a sorted, unique,
  tz-aware **UTC** ``DatetimeIndex`` of **interval starts**. Missing intervals are absent or NaN.
* ``timezone`` is the site's IANA zone name; local clock time is
  ``values.index.tz_convert(timezone)``.
* Temperatures are stored in degrees Celsius; Fahrenheit is only a display and import setting.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

#: The utilities the tool knows, with the canonical unit each is stored in. Every utility is
#: stored as energy in kWh (thermal kWh for gas, steam and chilled water) so that one budget
#: machinery serves all; the unit as found on import is kept beside it for display and audit.
UTILITIES: tuple[str, ...] = (
    "electricity",
    "natural_gas",
    "chilled_water",
    "steam",
    "hot_water",
)
CANONICAL_UNIT = "kWh"


def utility_words(name: str) -> str:
    """A utility's key in words for readers ("natural gas"); any other name as it is."""
    return name.replace("_", " ") if name in UTILITIES else name


@dataclass
class MeterSeries:
    """One meter's interval energy in kWh with what is known about where it came from."""

    name: str
    utility: str
    values: pd.Series
    interval: pd.Timedelta
    timezone: str
    unit_found: str = CANONICAL_UNIT
    source: str = ""

    def __post_init__(self) -> None:
        if self.utility not in UTILITIES:
            raise ValueError(f"unknown utility {self.utility!r}; expected one of {UTILITIES}")
        index = self.values.index
        if not isinstance(index, pd.DatetimeIndex) or str(index.tz) != "UTC":
            raise ValueError("meter values need a tz-aware UTC DatetimeIndex of interval starts")

    @property
    def unit(self) -> str:
        return CANONICAL_UNIT

    def local_index(self) -> pd.DatetimeIndex:
        """Interval starts on the site's local clock."""
        return self.values.index.tz_convert(self.timezone)


@dataclass(frozen=True)
class Finding:
    """Something the importer noticed, for the user to see before anything is stored."""

    kind: str
    message: str
    meter: str | None = None
    count: int = 0
    rows: tuple[int, ...] = field(default_factory=tuple)

    def as_dict(self) -> dict:
        return {
            "kind": self.kind,
            "meter": self.meter,
            "count": self.count,
            "rows": list(self.rows),
            "message": self.message,
        }
