"""Read a tariff from a rate card: a small TOML file of our own, named ``*.ratecard.toml``.

TOML is read with the standard library's :mod:`tomllib`; it allows comments, so the rate
card can quote the tariff sheet it was copied from. The same structure as JSON-safe dicts
(dates as ISO text) is what :meth:`engine.tariffs.Tariff.to_dict` writes for the project file.

Format (format version 1)
-------------------------
Top level:

``ratecard_format`` (required)
    ``1``.
``name``, ``currency`` (required)
    The tariff's name; an ISO 4217 currency code such as ``"USD"``.
``[holidays]`` (optional; needed when a window has ``except_holidays = true``)
    ``country`` (ISO 3166 code; public holidays from the ``holidays`` package, observed days
    included), ``subdivision`` (state or province code), ``dates`` (extra days).
``[[version]]`` (one or more)
    ``effective_from`` (a date): the version applies to billing months whose **last day** is
    on or after it, until the next version. Each version has:

    * ``fixed_per_month``: the fixed (customer) charge per billing month;
    * the energy rate, exactly one of
      ``energy_per_kwh`` (flat),
      ``[[version.time_of_use]]`` periods with ``name``, ``per_kwh`` and window keys (the first
      period whose window holds an interval prices it; the last period has no window keys and
      takes every remaining interval), or
      ``[[version.block]]`` tiers of the month's kWh with ``per_kwh`` and ``up_to_kwh``
      (ascending; the last tier has no ``up_to_kwh``);
    * ``[[version.demand]]`` (optional): ``name``, ``per_kw`` and window keys; billed on the
      month's highest interval-average kW inside the window (all intervals without window
      keys);
    * ``[[version.tax]]`` (optional): ``name`` and ``percent`` of the month's fixed + energy +
      demand charges (taxes do not compound).

Window keys (all optional; local clock time, judged at each interval's start):
``months`` (list of 1–12), ``days`` (``"weekdays"``, ``"weekends"``, ``"all"`` or a list such
as ``["mon", "tue"]``), ``start`` and ``end`` (``"HH:MM"``, end exclusive, ``"24:00"`` allowed,
an end before the start runs past midnight; give both or neither) and ``except_holidays``.

Every problem is an :class:`~engine.errors.InputError` naming the file and the key.
"""

from __future__ import annotations

import itertools
import math
import re
import reprlib
import tomllib
from datetime import date, datetime, time
from pathlib import Path
from typing import Any

from engine.calendar import CampusCalendar
from engine.errors import InputError
from engine.tariffs._schema import (
    ALL_DAYS,
    ALL_MONTHS,
    DAY_GROUPS,
    DAY_NAMES,
    FLAT_PERIOD,
    FORMAT_KEY,
    FORMAT_VERSION,
    MINUTES_PER_DAY,
    Block,
    DemandCharge,
    Tariff,
    TariffVersion,
    Tax,
    TimeOfUsePeriod,
    Window,
)

#: The file name ending of a rate card.
RATECARD_SUFFIX = ".ratecard.toml"
_FULL_DAY_NAMES = ("monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")
_NO_HOLIDAYS: tuple[None, None, tuple[date, ...]] = (None, None, ())
#: A rate card is a page of text; a file far larger is not one.
MAX_RATECARD_BYTES = 2**20
_SHORT = reprlib.Repr()
_SHORT.maxlevel, _SHORT.maxstring, _SHORT.maxother = 3, 60, 60
#: A tax above this many percent is almost surely a slip (a fraction typed as a percentage).
_MAX_PERCENT = 100.0


class _Table:
    """One TOML table being read: knows its place for messages and which keys were read."""

    def __init__(self, data: Any, place: tuple[str, ...], source: str) -> None:
        self.place, self.source = place, source
        if not isinstance(data, dict):
            raise self.error(None, "must be a table of keys.")
        self.data: dict[str, Any] = data
        self._read: set[str] = set()

    def error(self, key: str | None, problem: str, hint: str = "") -> InputError:
        where = ", ".join(self.place)
        if key is None:
            label = where or "the rate card"
        else:
            label = f"key '{key}'" + (f" ({where})" if where else "")
        return InputError(f"{label} {problem}", hint=hint, file=self.source or None)

    def has(self, key: str) -> bool:
        return key in self.data

    def raw(self, key: str) -> Any:
        self._read.add(key)
        if key not in self.data:
            raise self.error(key, "is missing.", hint="Add it; see sample/tariffs/README.md.")
        return self.data[key]

    def number(self, key: str, *, maximum: float = math.inf) -> float:
        value = self.raw(key)
        ok = isinstance(value, int | float) and not isinstance(value, bool)
        if not ok or not math.isfinite(_as_float(value)) or not 0 <= value <= maximum:
            limit = f" and at most {maximum:g}" if math.isfinite(maximum) else ""
            raise self.error(key, f"must be a number of 0 or more{limit}, not {_shown(value)}.")
        return float(value)

    def text(self, key: str) -> str:
        value = self.raw(key)
        if not isinstance(value, str) or not value.strip():
            raise self.error(key, f"must be non-empty text, not {_shown(value)}.")
        return value.strip()

    def day(self, key: str) -> date:
        return self.as_day(key, self.raw(key))

    def as_day(self, key: str, value: Any) -> date:
        """A TOML date or ISO date text (the stored JSON form) as a date."""
        if isinstance(value, date) and not isinstance(value, datetime):
            return value
        try:
            return date.fromisoformat(value)
        except (TypeError, ValueError):
            problem = f"must be a date such as 2025-07-01, not {_shown(value)}."
            raise self.error(key, problem) from None

    def flag(self, key: str) -> bool:
        value = self.raw(key)
        if not isinstance(value, bool):
            raise self.error(key, f"must be true or false, not {_shown(value)}.")
        return value

    def tables(self, key: str) -> list[_Table]:
        items = self.raw(key)
        if not isinstance(items, list) or not items:
            raise self.error(key, "must be one or more tables ([[...]] entries).")
        return [
            _Table(item, (*self.place, f"{key} {number}"), self.source)
            for number, item in enumerate(items, start=1)
        ]

    def done(self) -> None:
        unknown = sorted(set(self.data) - self._read)
        if unknown:
            raise self.error(
                unknown[0],
                "is not part of the rate-card format.",
                hint="Check its spelling; see sample/tariffs/README.md for every key.",
            )


def _as_float(value: int | float) -> float:
    """The number as a float; an integer beyond a float's range is infinite."""
    try:
        return float(value)
    except OverflowError:
        return math.inf


def _shown(value: Any) -> str:
    """A short, one-line picture of a value for a message (long or deep ones cut short)."""
    if isinstance(value, int) and value.bit_length() > 128:  # repr fails beyond 4300 digits
        return f"an integer of about {int(value.bit_length() * math.log10(2)) + 1} digits"
    return _SHORT.repr(value)


def is_currency_code(text: str) -> bool:
    """Whether ``text`` has the form of an ISO 4217 currency code: three capital letters."""
    return re.fullmatch(r"[A-Z]{3}", text) is not None


def read_tariff(path: str | Path) -> Tariff:
    """Read and check a rate card (``*.ratecard.toml``).

    Raises
    ------
    InputError
        When the file cannot be read, is not TOML, or a key is missing or wrong.
    """
    path = Path(path)
    try:
        if path.stat().st_size > MAX_RATECARD_BYTES:
            raise InputError(
                f"is {path.stat().st_size:,} bytes, far more than a rate card needs (at most "
                f"{MAX_RATECARD_BYTES:,}).",
                hint="Check that this is the rate card; see sample/tariffs/README.md.",
                file=path,
            )
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(
            f"cannot be read as a UTF-8 text file ({error}).",
            hint="Check the path, and save the rate card as UTF-8 text.",
            file=path,
        ) from None
    return tariff_from_dict(_parse_toml(text, path), source=str(path))


def _parse_toml(text: str, path: Path) -> dict[str, Any]:
    """The TOML document; its syntax errors, over-long integers and deep nesting explained."""
    hint = "Fix the line named; see sample/tariffs/README.md for the format."
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise InputError(f"is not valid TOML: {error}.", hint=hint, file=path) from None
    except ValueError:  # Python converts integers of at most 4300 digits
        raise InputError(
            "holds an integer with thousands of digits, too long to read.",
            hint="Write prices and charges as ordinary numbers such as 0.0712.",
            file=path,
        ) from None
    except RecursionError:
        raise InputError(
            "nests lists or tables too deeply to read.",
            hint="A rate card needs at most a list of tables; see sample/tariffs/README.md.",
            file=path,
        ) from None


def tariff_from_dict(data: dict[str, Any], source: str = "") -> Tariff:
    """Check the parsed rate card (or its stored JSON form) and build the :class:`Tariff`."""
    top = _Table(data, (), source)
    form = top.raw(FORMAT_KEY)
    if form != FORMAT_VERSION:
        raise top.error(
            FORMAT_KEY,
            f"is {_shown(form)}; this version of Loadledger reads rate-card format "
            f"{FORMAT_VERSION}.",
            hint="Write the file in format 1, or update Loadledger.",
        )
    name = top.text("name")
    currency = top.text("currency")
    if not is_currency_code(currency):
        problem = f"must be a three-letter ISO 4217 code, not {_shown(currency)}."
        raise top.error("currency", problem)
    country, subdivision, dates = _holidays(top, source) if top.has("holidays") else _NO_HOLIDAYS
    versions = tuple(sorted((_version(table) for table in top.tables("version")), key=_effective))
    top.done()
    for earlier, later in itertools.pairwise(versions):
        if earlier.effective_from == later.effective_from:
            raise top.error(
                "version",
                f"has two versions taking effect on {later.effective_from}.",
                hint="Give each version its own effective_from date.",
            )
    holidays_needed = any(
        window.except_holidays for version in versions for _, window in version.windows
    )
    if holidays_needed and country is None and not dates:
        raise top.error(
            "holidays",
            "is missing, but a window says except_holidays = true.",
            hint='Add a [holidays] table with country = "US" (or your country) or dates.',
        )
    return Tariff(name, currency, versions, country, subdivision, dates, source)


def _effective(version: TariffVersion) -> date:
    return version.effective_from


def _holidays(top: _Table, source: str) -> tuple[str | None, str | None, tuple[date, ...]]:
    table = _Table(top.raw("holidays"), ("holidays",), source)
    country = table.text("country") if table.has("country") else None
    subdivision = table.text("subdivision") if table.has("subdivision") else None
    dates: tuple[date, ...] = ()
    if table.has("dates"):
        listed = table.raw("dates")
        if not isinstance(listed, list):
            raise table.error("dates", "must be a list of dates.")
        dates = tuple(sorted({table.as_day("dates", day) for day in listed}))
    table.done()
    try:
        calendar = CampusCalendar(country, subdivision)
    except InputError as error:
        raise table.error("country", f"is not usable: {error.problem}", error.hint) from None
    return calendar.country, calendar.subdivision, dates


def _version(table: _Table) -> TariffVersion:
    effective_from = table.day("effective_from")
    fixed = table.number("fixed_per_month")
    given = [key for key in ("energy_per_kwh", "time_of_use", "block") if table.has(key)]
    if len(given) != 1:
        problem = "is missing" if not given else f"is given {len(given)} ways ({', '.join(given)})"
        raise table.error(
            "energy_per_kwh",
            f"{problem}: a version prices energy in exactly one way.",
            hint="Give energy_per_kwh (flat), [[version.time_of_use]] or [[version.block]].",
        )
    periods: tuple[TimeOfUsePeriod, ...] = ()
    blocks: tuple[Block, ...] = ()
    if given == ["energy_per_kwh"]:
        periods = (TimeOfUsePeriod(FLAT_PERIOD, table.number("energy_per_kwh")),)
    elif given == ["time_of_use"]:
        periods = _periods(table.tables("time_of_use"))
    else:
        blocks = _blocks(table.tables("block"))
    demand = (
        tuple(
            DemandCharge(item.text("name"), item.number("per_kw"), _window(item))
            for item in table.tables("demand")
        )
        if table.has("demand")
        else ()
    )
    taxes = tuple(_tax(item) for item in table.tables("tax")) if table.has("tax") else ()
    table.done()
    return TariffVersion(effective_from, fixed, periods, blocks, demand, taxes)


def _periods(tables: list[_Table]) -> tuple[TimeOfUsePeriod, ...]:
    periods = tuple(
        TimeOfUsePeriod(item.text("name"), item.number("per_kwh"), _window(item)) for item in tables
    )
    for item, period in zip(tables[:-1], periods[:-1], strict=True):
        if period.window.always:
            raise item.error(
                None,
                "covers every interval, so the periods after it would never apply.",
                hint="Put the all-hours period last, or give it window keys.",
            )
    if not periods[-1].window.always:
        raise tables[-1].error(
            None,
            "is the last time-of-use period but has window keys, so some intervals would "
            "have no rate.",
            hint="End with a period without months/days/start/end that takes the rest.",
        )
    return periods


def _blocks(tables: list[_Table]) -> tuple[Block, ...]:
    blocks = []
    below = 0.0
    for item in tables[:-1]:
        up_to = item.number("up_to_kwh")
        if up_to <= below:
            raise item.error(
                "up_to_kwh",
                f"is {up_to:g}, not above the block before ({below:g}).",
                hint="List blocks from the lowest to the highest kWh.",
            )
        blocks.append(Block(up_to, item.number("per_kwh")))
        item.done()
        below = up_to
    last = tables[-1]
    if last.has("up_to_kwh"):
        raise last.error(
            "up_to_kwh",
            "is given in the last block, so kWh above it would have no rate.",
            hint="Leave up_to_kwh out of the last block.",
        )
    blocks.append(Block(math.inf, last.number("per_kwh")))
    last.done()
    return tuple(blocks)


def _tax(table: _Table) -> Tax:
    tax = Tax(table.text("name"), table.number("percent", maximum=_MAX_PERCENT))
    table.done()
    return tax


def _window(table: _Table) -> Window:
    """The window keys of a period or demand charge; marks the whole table as read."""
    months = _months(table) if table.has("months") else ALL_MONTHS
    days = _days(table) if table.has("days") else ALL_DAYS
    if table.has("start") != table.has("end"):
        missing = "end" if table.has("start") else "start"
        raise table.error(missing, "is missing: give both start and end, or neither.")
    start, end = 0, MINUTES_PER_DAY
    if table.has("start"):
        start, end = _clock(table, "start"), _clock(table, "end")
        if start == MINUTES_PER_DAY:
            raise table.error("start", "must be before 24:00.")
        if start == end:
            raise table.error("end", "must differ from start.")
    except_holidays = table.flag("except_holidays") if table.has("except_holidays") else False
    table.done()
    return Window(months, days, start, end, except_holidays)


def _months(table: _Table) -> tuple[int, ...]:
    value = table.raw("months")
    ok = isinstance(value, list) and value
    if not ok or not all(isinstance(m, int) and not isinstance(m, bool) for m in value):
        raise table.error("months", f"must be a list of month numbers 1–12, not {_shown(value)}.")
    if not set(value) <= set(ALL_MONTHS):
        raise table.error("months", f"must hold month numbers 1–12 only, not {_shown(value)}.")
    return tuple(sorted(set(value)))


def _days(table: _Table) -> tuple[int, ...]:
    value = table.raw("days")
    if isinstance(value, str) and value.strip().lower() in DAY_GROUPS:
        return DAY_GROUPS[value.strip().lower()]
    found = set()
    for name in value if isinstance(value, list) and value else [value]:
        text = name.strip().lower() if isinstance(name, str) else ""
        if text in DAY_NAMES:
            found.add(DAY_NAMES.index(text))
        elif text in _FULL_DAY_NAMES:
            found.add(_FULL_DAY_NAMES.index(text))
        else:
            raise table.error(
                "days",
                f"has {_shown(name)}, which is not a day.",
                hint='Use "weekdays", "weekends", "all" or a list such as ["mon", "sat"].',
            )
    return tuple(sorted(found))


def _clock(table: _Table, key: str) -> int:
    value = table.raw(key)
    if isinstance(value, time):
        if value.second or value.microsecond:
            raise table.error(key, f"must be whole minutes, not {value}.")
        return value.hour * 60 + value.minute
    match = re.fullmatch(r"(\d{1,2}):(\d{2})", value.strip()) if isinstance(value, str) else None
    minutes = int(match[1]) * 60 + int(match[2]) if match else -1
    if not match or int(match[2]) >= 60 or not 0 <= minutes <= MINUTES_PER_DAY:
        problem = f'must be a local time "HH:MM" from 00:00 to 24:00, not {_shown(value)}.'
        raise table.error(key, problem)
    return minutes
