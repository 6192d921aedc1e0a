"""The parts of a tariff as plain frozen dataclasses: windows, rates, versions and the tariff.

Every money amount is in the tariff's currency; energy rates are per kWh, demand rates per kW
and taxes in percent. ``to_dict`` gives the JSON-safe form of the rate-card file (see
:mod:`engine.tariffs._ratecard`), so a tariff can be stored in a project and read back.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date
from typing import Any

import numpy as np

from engine.calendar import CampusCalendar
from engine.errors import InputError

#: The rate-card key holding the file format's version, and the version this code writes.
FORMAT_KEY = "ratecard_format"
FORMAT_VERSION = 1
ALL_MONTHS: tuple[int, ...] = tuple(range(1, 13))
ALL_DAYS: tuple[int, ...] = tuple(range(7))
MINUTES_PER_DAY = 1440
#: Day names accepted in a window's ``days`` (three-letter forms; full names work too).
DAY_NAMES: tuple[str, ...] = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
#: Shorthands for a window's ``days``.
DAY_GROUPS: dict[str, tuple[int, ...]] = {
    "weekdays": (0, 1, 2, 3, 4),
    "weekends": (5, 6),
    "all": ALL_DAYS,
}


def clock_text(minutes: int) -> str:
    """``"HH:MM"`` of minutes after local midnight (1440 is ``"24:00"``)."""
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


@dataclass(frozen=True)
class LocalClock:
    """Local calendar facts of each interval start, computed once and shared by all windows."""

    month: np.ndarray
    weekday: np.ndarray
    minute_of_day: np.ndarray
    holiday: np.ndarray


@dataclass(frozen=True)
class Window:
    """When a rate applies, on the site's local clock.

    An interval is inside when its local **start** falls in one of ``months`` on one of
    ``days`` (0 = Monday), at or after ``start_minute`` and before ``end_minute`` (minutes
    after local midnight; an end at or before the start runs past midnight, each interval
    judged on its own weekday) and, with ``except_holidays``, not on one of the tariff's
    holidays.
    """

    months: tuple[int, ...] = ALL_MONTHS
    days: tuple[int, ...] = ALL_DAYS
    start_minute: int = 0
    end_minute: int = MINUTES_PER_DAY
    except_holidays: bool = False

    @property
    def always(self) -> bool:
        """True when the window holds every interval."""
        return self == Window()

    def mask(self, clock: LocalClock) -> np.ndarray:
        """Boolean per interval: inside the window."""
        minute = clock.minute_of_day
        if self.start_minute < self.end_minute:
            inside = (minute >= self.start_minute) & (minute < self.end_minute)
        else:
            inside = (minute >= self.start_minute) | (minute < self.end_minute)
        inside &= np.isin(clock.month, self.months) & np.isin(clock.weekday, self.days)
        if self.except_holidays:
            inside &= ~clock.holiday
        return inside

    def to_dict(self) -> dict[str, Any]:
        """Only the keys that narrow the window, as written in a rate card."""
        data: dict[str, Any] = {}
        if self.months != ALL_MONTHS:
            data["months"] = list(self.months)
        if self.days != ALL_DAYS:
            data["days"] = [DAY_NAMES[day] for day in self.days]
        if (self.start_minute, self.end_minute) != (0, MINUTES_PER_DAY):
            data["start"] = clock_text(self.start_minute)
            data["end"] = clock_text(self.end_minute)
        if self.except_holidays:
            data["except_holidays"] = True
        return data


@dataclass(frozen=True)
class TimeOfUsePeriod:
    """An energy rate for the intervals inside a window (a flat rate is one all-hours period)."""

    name: str
    per_kwh: float
    window: Window = field(default_factory=Window)

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "per_kwh": self.per_kwh, **self.window.to_dict()}


@dataclass(frozen=True)
class Block:
    """An energy rate for the billing month's kWh up to ``up_to_kwh`` (``inf`` in the last)."""

    up_to_kwh: float
    per_kwh: float

    def to_dict(self) -> dict[str, Any]:
        data: dict[str, Any] = {"per_kwh": self.per_kwh}
        if math.isfinite(self.up_to_kwh):
            data["up_to_kwh"] = self.up_to_kwh
        return data


@dataclass(frozen=True)
class DemandCharge:
    """A rate per kW of the billing month's highest interval-average demand inside a window."""

    name: str
    per_kw: float
    window: Window = field(default_factory=Window)

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "per_kw": self.per_kw, **self.window.to_dict()}


@dataclass(frozen=True)
class Tax:
    """A tax or fee in percent of the month's fixed, energy and demand charges."""

    name: str
    percent: float

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "percent": self.percent}


#: Name of the single period that a flat energy rate becomes.
FLAT_PERIOD = "all hours"


@dataclass(frozen=True)
class TariffVersion:
    """The rates in effect from ``effective_from`` until the next version.

    Energy is priced either by ``time_of_use`` periods (first matching period wins; the last
    covers every remaining interval; a flat rate is one all-hours period) or by ``blocks`` of
    the month's kWh, never both.
    """

    effective_from: date
    fixed_per_month: float
    time_of_use: tuple[TimeOfUsePeriod, ...] = ()
    blocks: tuple[Block, ...] = ()
    demand: tuple[DemandCharge, ...] = ()
    taxes: tuple[Tax, ...] = ()

    @property
    def tax_percent(self) -> float:
        return sum(tax.percent for tax in self.taxes)

    @property
    def windows(self) -> tuple[tuple[str, Window], ...]:
        """Every named window the version uses (energy periods, then demand charges)."""
        return tuple((part.name, part.window) for part in (*self.time_of_use, *self.demand))

    @property
    def flat_rate(self) -> float | None:
        """The per-kWh rate when energy has one all-hours rate, else None."""
        if len(self.time_of_use) == 1 and self.time_of_use[0].window.always:
            return self.time_of_use[0].per_kwh
        return None

    def to_dict(self) -> dict[str, Any]:
        data: dict[str, Any] = {
            "effective_from": self.effective_from.isoformat(),
            "fixed_per_month": self.fixed_per_month,
        }
        if self.flat_rate is not None and self.time_of_use[0].name == FLAT_PERIOD:
            data["energy_per_kwh"] = self.flat_rate
        elif self.time_of_use:
            data["time_of_use"] = [period.to_dict() for period in self.time_of_use]
        else:
            data["block"] = [block.to_dict() for block in self.blocks]
        if self.demand:
            data["demand"] = [charge.to_dict() for charge in self.demand]
        if self.taxes:
            data["tax"] = [tax.to_dict() for tax in self.taxes]
        return data


@dataclass(frozen=True)
class Tariff:
    """A named tariff with its currency, holidays and versions sorted by effective date.

    ``source`` names the file it was read from (for messages) and takes no part in equality.
    """

    name: str
    currency: str
    versions: tuple[TariffVersion, ...]
    holiday_country: str | None = None
    holiday_subdivision: str | None = None
    holiday_dates: tuple[date, ...] = ()
    source: str = field(default="", compare=False)

    def version_numbers(self, days: Iterable[date]) -> np.ndarray:
        """Position in ``versions`` of the version in effect on each day.

        Raises
        ------
        InputError
            When a day comes before the first version takes effect.
        """
        wanted = np.asarray(list(days), dtype="datetime64[D]")
        starts = np.asarray([v.effective_from for v in self.versions], dtype="datetime64[D]")
        numbers = np.searchsorted(starts, wanted, side="right") - 1
        if (numbers < 0).any():
            early = wanted[numbers < 0].min()
            raise InputError(
                f"tariff '{self.name}' has no version in effect on {early}; the first takes "
                f"effect on {self.versions[0].effective_from}.",
                hint="Add a [[version]] with an earlier effective_from, or cost later months.",
                file=self.source or None,
            )
        return numbers

    def version_on(self, day: date) -> TariffVersion:
        """The version in effect on ``day``."""
        return self.versions[int(self.version_numbers([day])[0])]

    def holidays(self, years: Iterable[int]) -> np.ndarray:
        """The tariff's holidays in ``years`` as sorted ``datetime64[D]`` days."""
        public = CampusCalendar(self.holiday_country, self.holiday_subdivision)
        days = set(public.public_holidays(years)) | set(self.holiday_dates)
        return np.asarray(sorted(days), dtype="datetime64[D]")

    def to_dict(self) -> dict[str, Any]:
        """The JSON-safe form of the rate-card file (dates as ISO text)."""
        data: dict[str, Any] = {
            FORMAT_KEY: FORMAT_VERSION,
            "name": self.name,
            "currency": self.currency,
        }
        holidays: dict[str, Any] = {}
        if self.holiday_country is not None:
            holidays["country"] = self.holiday_country
        if self.holiday_subdivision is not None:
            holidays["subdivision"] = self.holiday_subdivision
        if self.holiday_dates:
            holidays["dates"] = [day.isoformat() for day in self.holiday_dates]
        if holidays:
            data["holidays"] = holidays
        data["version"] = [version.to_dict() for version in self.versions]
        return data
