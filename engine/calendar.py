"""The campus calendar: public holidays, named campus periods and when buildings are occupied.

A :class:`CampusCalendar` holds the country (and optional subdivision) whose public holidays
apply, with observed dates included (a holiday falling on a weekend and moved to a weekday
counts on both days), plus named campus periods such as terms, breaks and closures. An
:class:`OccupancyRule` says which hours are occupied. :func:`label_intervals` turns both into
per-interval driver columns for profiles and models, vectorised over the readings.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field, replace
from datetime import date, time
from typing import Any

import holidays
import numpy as np
import pandas as pd

from engine.errors import InputError

#: The kinds a campus period may have.
PERIOD_KINDS: tuple[str, ...] = ("term", "break", "closure", "summer", "other")
#: Day types in :func:`label_intervals`; a public holiday wins over the weekday.
DAY_TYPES: tuple[str, ...] = ("weekday", "saturday", "sunday", "holiday")

_MINUTES_PER_DAY = 1440


@dataclass(frozen=True)
class CampusPeriod:
    """A named stretch of campus days, ``first_day`` to ``last_day`` inclusive."""

    name: str
    first_day: date
    last_day: date
    kind: str = "other"

    def __post_init__(self) -> None:
        if self.kind not in PERIOD_KINDS:
            raise ValueError(
                f"unknown period kind {self.kind!r}; expected one of {', '.join(PERIOD_KINDS)}"
            )
        if self.last_day < self.first_day:
            raise ValueError(f"period {self.name!r} ends before it starts")

    @property
    def days(self) -> int:
        """Number of calendar days the period covers."""
        return (self.last_day - self.first_day).days + 1

    def to_dict(self) -> dict[str, str]:
        return {
            "name": self.name,
            "first_day": self.first_day.isoformat(),
            "last_day": self.last_day.isoformat(),
            "kind": self.kind,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> CampusPeriod:
        return cls(
            name=str(data["name"]),
            first_day=date.fromisoformat(data["first_day"]),
            last_day=date.fromisoformat(data["last_day"]),
            kind=str(data.get("kind", "other")),
        )


@dataclass(frozen=True)
class CampusCalendar:
    """Public holidays of a country/subdivision plus the campus's own named periods.

    Parameters
    ----------
    country : str or None
        ISO 3166 country code whose public holidays apply (``None``: no public holidays).
    subdivision : str or None
        State, province or nation code within the country (e.g. ``"CA"`` in the US,
        ``"SCT"`` in GB, ``"BY"`` in DE) for regional holidays.
    periods : tuple of CampusPeriod
        Named campus periods. Where periods overlap, the shorter (more specific) one labels
        the day, so a reading week inside a term shows as the break.
    """

    country: str | None = None
    subdivision: str | None = None
    periods: tuple[CampusPeriod, ...] = field(default_factory=tuple)

    def __post_init__(self) -> None:
        object.__setattr__(self, "periods", tuple(self.periods))
        if self.country is None:
            if self.subdivision is not None:
                raise InputError(
                    f"subdivision {self.subdivision!r} was given without a country.",
                    hint="Choose the country as well, or clear the subdivision.",
                )
            return
        country = self.country.strip().upper()
        supported = holidays.list_supported_countries()
        if country not in supported:
            raise InputError(
                f"no public-holiday list is known for country {self.country!r}.",
                hint="Use a two-letter ISO 3166 code such as US, GB, DE or CA.",
            )
        object.__setattr__(self, "country", country)
        if self.subdivision is not None and self.subdivision not in supported[country]:
            raise InputError(
                f"country {country} has no subdivision {self.subdivision!r}.",
                hint=f"Use one of: {', '.join(supported[country])}.",
            )

    def public_holidays(self, years: Iterable[int]) -> dict[date, str]:
        """Public holidays (observed dates included) of the given years, date → name."""
        if self.country is None:
            return {}
        found = holidays.country_holidays(
            self.country, subdiv=self.subdivision, years=sorted(set(years)), observed=True
        )
        return dict(sorted(found.items()))

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe form for the project file."""
        return {
            "country": self.country,
            "subdivision": self.subdivision,
            "periods": [period.to_dict() for period in self.periods],
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> CampusCalendar:
        return cls(
            country=data.get("country"),
            subdivision=data.get("subdivision"),
            periods=tuple(CampusPeriod.from_dict(item) for item in data.get("periods", [])),
        )


def holiday_countries() -> dict[str, str]:
    """Countries with a public-holiday list, code → name, in the order of their names.

    The names come from the ``holidays`` package's registry of country classes
    ("UnitedStates" reads "United States"); a country it does not name is shown by its code.
    """
    named = {
        entry[1]: re.sub(r"(?<=[a-z])(?=[A-Z])", " ", entry[0])
        for entry in getattr(holidays.registry, "COUNTRIES", {}).values()
    }
    codes = holidays.list_supported_countries(include_aliases=False)
    return dict(sorted(((code, named.get(code, code)) for code in codes), key=lambda p: p[1]))


def holiday_subdivisions(country: str) -> dict[str, str]:
    """The regions of ``country`` with their own public holidays, code → name (the code where
    the ``holidays`` package gives no name)."""
    codes = holidays.list_supported_countries(include_aliases=False).get(country, [])
    names: dict[str, str] = {}
    if codes:
        aliases = holidays.country_holidays(country).subdivisions_aliases
        for name, code in aliases.items():
            names.setdefault(code, name)
    return {code: names.get(code, code) for code in codes}


def _format_clock(minutes: int) -> str:
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _parse_clock(text: str) -> int:
    """Minutes after midnight of ``"HH:MM"``; ``"24:00"`` is the end of the day."""
    match = re.fullmatch(r"\s*(\d{1,2}):(\d{2})\s*", text)
    if not match:
        raise ValueError(f"clock time {text!r} is not written as HH:MM")
    minutes = int(match[1]) * 60 + int(match[2])
    if int(match[2]) >= 60 or minutes > _MINUTES_PER_DAY:
        raise ValueError(f"clock time {text!r} is not between 00:00 and 24:00")
    return minutes


def _clock_minutes(value: time | str) -> int:
    if isinstance(value, str):
        return _parse_clock(value)
    return value.hour * 60 + value.minute


@dataclass(frozen=True)
class OccupancyRule:
    """When the campus counts as occupied, in local clock time.

    Occupied means: a day in ``days`` (0 = Monday) between ``opens`` and ``closes``, or a
    Saturday within ``saturday_hours`` when given; never on a public holiday, nor on a day
    whose campus period is of a kind in ``closed_kinds``. Times are ``"HH:MM"`` strings or
    :class:`datetime.time`; ``"24:00"`` closes at midnight.
    """

    days: tuple[int, ...] = (0, 1, 2, 3, 4)
    opens: str | time = "07:00"
    closes: str | time = "19:00"
    saturday_hours: tuple[str | time, str | time] | None = None
    closed_kinds: tuple[str, ...] = ("closure",)

    def __post_init__(self) -> None:
        object.__setattr__(self, "days", tuple(sorted(set(self.days))))
        object.__setattr__(self, "closed_kinds", tuple(self.closed_kinds))
        object.__setattr__(self, "opens", _format_clock(_clock_minutes(self.opens)))
        object.__setattr__(self, "closes", _format_clock(_clock_minutes(self.closes)))
        if self.saturday_hours is not None:
            sat_open, sat_close = (_clock_minutes(value) for value in self.saturday_hours)
            object.__setattr__(
                self, "saturday_hours", (_format_clock(sat_open), _format_clock(sat_close))
            )
        if any(day not in range(7) for day in self.days):
            raise ValueError("occupied days are numbered 0 (Monday) to 6 (Sunday)")
        if self.saturday_hours is not None and 5 in self.days:
            raise ValueError("Saturday is both an ordinary occupied day and has its own hours")
        for opens, closes in self.opening_minutes():
            if closes <= opens:
                raise ValueError(f"closing {_format_clock(closes)} is not after opening")
        unknown = set(self.closed_kinds) - set(PERIOD_KINDS)
        if unknown:
            raise ValueError(f"unknown period kinds {sorted(unknown)}; expected {PERIOD_KINDS}")

    def opening_minutes(self) -> list[tuple[int, int]]:
        """(opens, closes) in minutes after midnight: ordinary days, then Saturday if set."""
        spans = [(_parse_clock(self.opens), _parse_clock(self.closes))]
        if self.saturday_hours is not None:
            spans.append(
                (_parse_clock(self.saturday_hours[0]), _parse_clock(self.saturday_hours[1]))
            )
        return spans

    def to_dict(self) -> dict[str, Any]:
        return {
            "days": list(self.days),
            "opens": self.opens,
            "closes": self.closes,
            "saturday_hours": list(self.saturday_hours) if self.saturday_hours else None,
            "closed_kinds": list(self.closed_kinds),
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> OccupancyRule:
        saturday = data.get("saturday_hours")
        return cls(
            days=tuple(int(day) for day in data["days"]),
            opens=data["opens"],
            closes=data["closes"],
            saturday_hours=(saturday[0], saturday[1]) if saturday else None,
            closed_kinds=tuple(data.get("closed_kinds", ("closure",))),
        )


def with_holidays(calendar: CampusCalendar, code: str) -> CampusCalendar:
    """Public holidays of ``code`` ("US", "US-IL", or "none" for no public holidays)."""
    if code.lower() == "none":
        return CampusCalendar(periods=calendar.periods)
    country, _, region = code.partition("-")
    return CampusCalendar(country, region or None, calendar.periods)


def _epoch_day(day: date) -> int:
    return int(np.datetime64(day, "D").astype(np.int64))


def label_intervals(
    index_utc: pd.DatetimeIndex,
    timezone: str,
    calendar: CampusCalendar,
    rule: OccupancyRule | None = None,
) -> pd.DataFrame:
    """Calendar driver columns for each interval start.

    Parameters
    ----------
    index_utc : pandas.DatetimeIndex
        Tz-aware interval starts (any zone; labelled on the site's local clock).
    timezone : str
        The site's IANA time zone.
    calendar : CampusCalendar
        Holidays and campus periods.
    rule : OccupancyRule, optional
        Occupied hours; the default is Monday–Friday 07:00–19:00.

    Returns
    -------
    pandas.DataFrame
        Indexed like ``index_utc``, with columns ``local`` (naive local time),
        ``hour_of_week`` (0 = Monday 00:00 … 167), ``day_type`` (see :data:`DAY_TYPES`),
        ``period`` and ``period_kind`` (``""`` outside any period) and ``occupied``.
    """
    if not isinstance(index_utc, pd.DatetimeIndex) or index_utc.tz is None:
        raise ValueError("label_intervals needs a tz-aware DatetimeIndex")
    rule = rule or OccupancyRule()
    local = index_utc.tz_convert(timezone).tz_localize(None)
    minutes = local.to_numpy().astype("datetime64[m]").astype(np.int64)
    day_number = minutes // _MINUTES_PER_DAY
    minute_of_day = minutes - day_number * _MINUTES_PER_DAY
    if len(day_number) == 0:
        first = last = 0
    else:
        first, last = int(day_number.min()), int(day_number.max())
    # Everything below the next line is decided once per local day, then spread to intervals.
    days = np.arange(first, last + 1)
    weekday = (days + 3) % 7  # 1970-01-01, epoch day 0, was a Thursday (weekday 3)
    years = range(pd.Timestamp(first, unit="D").year, pd.Timestamp(last, unit="D").year + 1)
    holiday_days = [_epoch_day(day) for day in calendar.public_holidays(years)]
    is_holiday = np.isin(days, holiday_days)

    day_type = np.where(weekday == 5, 1, np.where(weekday == 6, 2, 0))
    day_type[is_holiday] = 3

    period_names = sorted({period.name for period in calendar.periods})
    name_code = {name: code for code, name in enumerate(period_names, start=1)}
    period_code = np.zeros(len(days), dtype=np.int64)
    kind_code = np.zeros(len(days), dtype=np.int64)
    # Longest first, so shorter periods written later win where periods overlap.
    for period in sorted(calendar.periods, key=lambda p: p.days, reverse=True):
        start = max(_epoch_day(period.first_day) - first, 0)
        stop = min(_epoch_day(period.last_day) - first + 1, len(days))
        if start < stop:
            period_code[start:stop] = name_code[period.name]
            kind_code[start:stop] = PERIOD_KINDS.index(period.kind) + 1

    closed_kind_codes = [PERIOD_KINDS.index(kind) + 1 for kind in rule.closed_kinds]
    open_day = ~is_holiday & ~np.isin(kind_code, closed_kind_codes)
    spans = rule.opening_minutes()
    opens = np.zeros(len(days), dtype=np.int64)
    closes = np.zeros(len(days), dtype=np.int64)
    ordinary = open_day & np.isin(weekday, rule.days)
    opens[ordinary], closes[ordinary] = spans[0]
    if rule.saturday_hours is not None:
        saturday = open_day & (weekday == 5)
        opens[saturday], closes[saturday] = spans[1]

    at = day_number - first
    occupied = (minute_of_day >= opens[at]) & (minute_of_day < closes[at])
    return pd.DataFrame(
        {
            "local": local,
            "hour_of_week": weekday[at] * 24 + minute_of_day // 60,
            "day_type": pd.Categorical.from_codes(day_type[at], categories=DAY_TYPES),
            "period": pd.Categorical.from_codes(period_code[at], categories=["", *period_names]),
            "period_kind": pd.Categorical.from_codes(kind_code[at], categories=["", *PERIOD_KINDS]),
            "occupied": occupied,
        },
        index=index_utc,
    )


def shift_to_year(calendar: CampusCalendar, year: int) -> CampusCalendar:
    """Copy the campus periods forward (or back) so the earliest one starts in ``year``.

    All periods move by the same whole number of weeks, the one that brings the earliest
    period's first day closest to the same date in ``year``; so each period keeps its weekday
    (a term starting on a Monday still starts on a Monday) and periods that touched still
    touch. For one year that is 364 or 371 days. Public holidays are not stored but recomputed
    for whatever years are labelled, so they follow automatically.
    """
    if not calendar.periods:
        return calendar
    anchor = min(period.first_day for period in calendar.periods)
    try:
        same_date = anchor.replace(year=year)
    except ValueError:  # 29 February in a year without one
        same_date = date(year, 2, 28)
    shift = pd.Timedelta(weeks=round((same_date - anchor).days / 7))
    moved = tuple(
        replace(
            period,
            first_day=period.first_day + shift,
            last_day=period.last_day + shift,
        )
        for period in calendar.periods
    )
    return replace(calendar, periods=moved)
