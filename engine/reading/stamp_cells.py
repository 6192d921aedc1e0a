"""Reading time stamps from raw cells: text, spreadsheet date-times, Excel serial numbers.

:func:`parse_stamps` reads a column of cells as clock times: naive local clock time, or UTC
when the text carried UTC offsets. Day-first against month-first is settled by the data. What
the clock times mean as instants (time zone, interval, start or end) is
:mod:`engine.timestamps`' job.

Speed: text stamps are split into a date part and a time part. Each part has few distinct
values (a year of 15-minute readings has 365 dates and 96 times of day), so formats are
inferred per shape of text and ``pd.to_datetime(format=...)`` runs once per distinct value.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from engine.errors import InputError

_US = "datetime64[us]"

_SPAN_US = "timedelta64[us]"

_NAT = np.datetime64("NaT", "us")

_NO_SPAN = np.timedelta64("NaT", "us")

_DAY = np.timedelta64(1, "D").astype(_SPAN_US)

_CLOCK_ZERO = np.datetime64("1900-01-01", "us")  # the date pd.to_datetime gives a bare time

# Excel's 1900 date system: serial 61 is 1900-03-01 and every later serial counts days from
# 1899-12-30. Excel also counts a 1900-02-29 that never was (serial 60), so serials 1-59 would
# be a day off under that epoch and 60 is no date at all: serials below 61 are refused.
_EXCEL_EPOCH = np.datetime64("1899-12-30", "ms")

_FIRST_SOUND_SERIAL = 61

_LAST_EXCEL_SERIAL = 2_958_465  # 9999-12-31, the last day Excel can show

_MS_PER_DAY = 86_400_000

# Numbers are taken for Excel dates only inside this span; anything else is not a meter stamp.
_PLAUSIBLE_SPAN = (np.datetime64("1970-01-01", "us"), np.datetime64("2100-01-01", "us"))

_DATE_GRAMMAR = re.compile(
    r"""
      (?P<Y>\d{4})(?P<iso_sep>[-/.])(?P<m>\d{1,2})(?P=iso_sep)(?P<d>\d{1,2})         # 2024-03-10
    | (?P<first>\d{1,2})(?P<num_sep>[-/.])(?P<second>\d{1,2})(?P=num_sep)(?P<y>\d{4}|\d{2})
    | (?P<dn>\d{1,2})-(?P<mon>[A-Za-z]{3,9})-(?P<Yn>\d{4})                          # 10-Mar-2024
    | (?P<serial>\d{5}(?:\.\d+)?)                                                   # 45361.59375
    """,
    re.VERBOSE,
)

_TIME_GRAMMAR = re.compile(
    r"""
    (?P<H>\d{1,2}):(?P<M>\d{2})(?::(?P<S>\d{2})(?:\.(?P<f>\d{1,9}))?)?
    (?:\s*(?P<p>[AaPp][Mm]))?
    (?:\s*(?P<z>Z|[+-]\d{2}:?\d{2}))?
    """,
    re.VERBOSE,
)

_FIXED_DIRECTIVES = {
    "Y": "%Y",
    "m": "%m",
    "d": "%d",
    "dn": "%d",
    "Yn": "%Y",
    "M": "%M",
    "S": "%S",
    "f": "%f",
    "p": "%p",
    "z": "%z",
}

_SHOWN_AS = (
    ("%Y", "yyyy"),
    ("%y", "yy"),
    ("%m", "mm"),
    ("%d", "dd"),
    ("%H", "hh"),
    ("%I", "hh"),
    ("%M", "mm"),
    ("%S", "ss"),
    ("%f", "fff"),
    ("%p", "AM/PM"),
    ("%z", "±hh:mm"),
    ("%b", "Mon"),
    ("%B", "Month"),
)

_SERIAL_LABEL = "Excel serial day numbers"

_DIGITS_AS_NINE = str.maketrans("0123456789", "9999999999")

_END_OF_DAY_TEXT = r"24:00(?::00(?:\.0+)?)?(?:\s*(?:Z|[+-]\d{2}:?\d{2}))?$"

_ACCEPTED_FORMS = (
    "Accepted: 2024-03-10 14:15 or 2024-03-10T14:15:00-05:00, 03/10/2024 2:15 PM, "
    "10.03.2024 14:15, 10-Mar-2024 14:15, spreadsheet date cells, and Excel serial numbers "
    "for dates from 1970 to 2099."
)

# What a cell holds, decided once per Python type present in the column.
_EMPTY, _TEXT, _NUMBER, _MOMENT, _CLOCK, _SPAN, _OTHER = range(7)


@dataclass(frozen=True, eq=False)
class ParsedStamps:
    """Clock times read from a column of cells, with what was found on the way.

    Attributes
    ----------
    values : pandas.DatetimeIndex
        One stamp per cell, NaT where the cell could not be read. Naive local clock time, or
        tz-aware UTC when the text carried UTC offsets.
    bad_rows : numpy.ndarray
        Positions of cells that could not be read; empty cells count as bad.
    has_offsets : bool
        The stamps carried UTC offsets (``values`` is then UTC).
    dayfirst_used : bool or None
        The day/month order used for dates such as ``10/03/2024``; None when none occurred.
    format_note : str
        Short description of the form(s) read, for the inspect report.
    end_of_day_rows : numpy.ndarray
        Positions of cells written with ``24:00`` (read as midnight ending that day), evidence
        that the stamps mark interval ends.
    """

    values: pd.DatetimeIndex
    bad_rows: np.ndarray
    has_offsets: bool
    dayfirst_used: bool | None
    format_note: str
    end_of_day_rows: np.ndarray


@dataclass
class _Read:
    """Per-cell outcome of reading cells (internal).

    ``form`` holds, per cell, an index into ``form_names`` (-1 where no form applied), so the
    inspect report can say which forms were read and how often.
    """

    values: np.ndarray  # datetime64[us], or timedelta64[us] for times of day; NaT where unread
    aware: np.ndarray  # the cell carried a UTC offset, its value is UTC
    end_of_day: np.ndarray  # written as 24:00
    form: np.ndarray
    form_names: list[str] = field(default_factory=list)
    dayfirst: bool | None = None

    @classmethod
    def unread(cls, size: int, missing: np.generic) -> _Read:
        no = np.zeros(size, bool)
        return cls(np.full(size, missing), no, no.copy(), np.full(size, -1, dtype=np.int64))

    def name_rows(self, rows: np.ndarray, name: str) -> None:
        """Record that ``rows`` were read in the form called ``name``."""
        if name not in self.form_names:
            self.form_names.append(name)
        self.form[rows] = self.form_names.index(name)

    def put(self, rows: np.ndarray, part: _Read) -> None:
        """Copy ``part``, read from ``rows`` of these cells, into place."""
        self.values[rows] = part.values
        self.aware[rows] = part.aware
        self.end_of_day[rows] = part.end_of_day
        for index, name in enumerate(part.form_names):
            self.name_rows(rows[part.form == index], name)
        if part.dayfirst is not None:
            self.dayfirst = part.dayfirst

    def take(self, codes: np.ndarray) -> _Read:
        """One row per code: spreads what was read per distinct text back to the cells."""
        return _Read(
            self.values[codes],
            self.aware[codes],
            self.end_of_day[codes],
            self.form[codes],
            self.form_names,
            self.dayfirst,
        )


@dataclass(frozen=True)
class _Form:
    """How text of one shape is read: a format per day/month order, or Excel serial numbers."""

    month_first: str
    day_first: str
    aware: bool = False
    serial: bool = False

    @property
    def ambiguous(self) -> bool:
        return self.month_first != self.day_first

    def format(self, dayfirst: bool | None) -> str:
        return self.day_first if dayfirst else self.month_first

    def label(self, dayfirst: bool | None) -> str:
        if self.serial:
            return _SERIAL_LABEL
        text = self.format(dayfirst)
        for directive, shown in _SHOWN_AS:
            text = text.replace(directive, shown)
        if self.ambiguous:
            return f"{'day-first' if dayfirst else 'month-first'} {text}"
        return text


@dataclass(frozen=True)
class _Column:
    """The column being read, to name its cells in messages.

    Errors carry the cell's 0-based position as ``InputError`` row (the importer maps it to
    the file's row); the text names the cell by its index label and shows what it holds.
    """

    cells: pd.Series

    @property
    def name(self) -> str | None:
        return None if self.cells.name is None else str(self.cells.name)

    def describe(self, position: int) -> str:
        label, text = self.cells.index[position], str(self.cells.iloc[position]).strip()
        return f"row {label} ({text!r})"


def parse_stamps(
    cells: pd.Series, *, dayfirst: bool | None = None, second: pd.Series | None = None
) -> ParsedStamps:
    """Read a column of date-time cells as clock times.

    Parameters
    ----------
    cells : pandas.Series
        The date-time column, or the date column when ``second`` is given. Cells may be text,
        spreadsheet date-times (``datetime``, ``date``, ``pandas.Timestamp``) or Excel serial
        numbers. Messages name cells by their index label (give the file's row numbers);
        ``InputError.row`` is the cell's 0-based position.
    dayfirst : bool or None
        The user's choice for dates such as ``10/03/2024``. None lets the data decide: a first
        number above 12 settles day-first, a second number above 12 settles month-first.
    second : pandas.Series, optional
        The time-of-day column: text (``14:15``, ``2:15 PM``, ``24:00``), ``datetime.time``,
        durations, or Excel day fractions.

    Returns
    -------
    ParsedStamps

    Raises
    ------
    InputError
        When no cell can be read, when the day/month order cannot be settled (and ``dayfirst``
        is None), contradicts itself or contradicts ``dayfirst``, or when some stamps carry UTC
        offsets and others do not.

    Examples
    --------
    >>> parse_stamps(pd.Series(["25.03.2024 14:15", "26.03.2024 24:00"])).format_note
    'day-first dd.mm.yyyy hh:mm'
    """
    read = _read_stamp_cells(cells, dayfirst)
    _require_some(read, cells)
    if second is not None:
        if len(second) != len(cells):
            raise ValueError("the date and time columns must be the same length")
        times = _read_time_cells(second)
        _require_some(times, second)
        at_midnight = read.values == read.values.astype("datetime64[D]")
        if not at_midnight.any():
            raise InputError(
                "the date cells carry a time of day already, so a time column cannot be added",
                hint="Choose the date-time column alone, without a separate time column.",
                column=_Column(cells).name,
            )
        read.values = np.where(at_midnight, read.values, _NAT)
        read = _combine(read, times, " + ")
    has_offsets = _refuse_mixed_offsets(read, _Column(cells))
    values = pd.DatetimeIndex(read.values)
    return ParsedStamps(
        values=values.tz_localize("UTC") if has_offsets else values,
        bad_rows=np.flatnonzero(np.isnat(read.values)),
        has_offsets=has_offsets,
        dayfirst_used=read.dayfirst,
        format_note=_describe_forms(read),
        end_of_day_rows=np.flatnonzero(read.end_of_day),
    )


def from_excel_serial(serials: np.ndarray | pd.Series | list[float]) -> pd.DatetimeIndex:
    """Excel serial day numbers (1900 date system) as naive date-times.

    Days count from 1899-12-30 and the fraction is the time of day, rounded to the millisecond
    (the finest Excel shows). Serials below 61 give NaT: Excel counts a 1900-02-29 that never
    existed as serial 60, so serials 1-59 would come out a day early and 60 is no date at all.
    """
    days = np.asarray(serials, dtype=float)
    sound = np.isfinite(days) & (days >= _FIRST_SOUND_SERIAL) & (days < _LAST_EXCEL_SERIAL + 1)
    ms = np.rint(np.where(sound, days, 0.0) * _MS_PER_DAY).astype(np.int64)
    stamps = (_EXCEL_EPOCH + ms.astype("timedelta64[ms]")).astype(_US)
    return pd.DatetimeIndex(np.where(sound, stamps, _NAT))


def _read_stamp_cells(cells: pd.Series, dayfirst: bool | None) -> _Read:
    """Read a date-time (or date) column of any mix of cell kinds."""
    column = _Column(cells)
    kinds = _cell_kinds(cells)
    read = _Read.unread(len(cells), _NAT)
    at = np.flatnonzero(kinds == _TEXT)
    if at.size:
        texts = cells.to_numpy(dtype=object)[at]
        read.put(at, _read_stamp_text(texts, at, dayfirst, column))
    at = np.flatnonzero(kinds == _NUMBER)
    if at.size:
        read.values[at] = _plausible(from_excel_serial(cells.iloc[at].to_numpy(dtype=float)))
        read.name_rows(at, _SERIAL_LABEL)
    at = np.flatnonzero(kinds == _MOMENT)
    if at.size:
        try:
            moments = pd.to_datetime(cells.iloc[at]).dt.round("ms")
        except ValueError as error:  # pandas refuses a mix of zones in one column
            raise InputError(
                "the date-times in this column mix different time zones or none",
                hint="Export the column in one time zone, or as local clock time.",
                column=column.name,
            ) from error
        aware = moments.dt.tz is not None
        if aware:
            moments = moments.dt.tz_convert("UTC").dt.tz_localize(None)
        read.values[at] = moments.to_numpy(dtype=_US)
        read.aware[at] = aware
        read.name_rows(at, "spreadsheet date-times")
    return read


def _read_stamp_text(
    texts: np.ndarray, at: np.ndarray, dayfirst: bool | None, column: _Column
) -> _Read:
    """Read text stamps (rows ``at`` of the column): date part, then time part if any."""
    dates, times = _split_date_time(texts)
    date_part = _read_date_text(dates, at, dayfirst, column)
    return _combine(date_part, _read_time_text(times, blank_is_midnight=True), " ")


def _split_date_time(texts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Split stamps at the first space, or at the ISO 8601 'T' after yyyy-mm-dd.

    Returns the date parts and the time parts (``""`` where a stamp has no time part).
    """
    stamps = pd.Series(texts, dtype=object)
    cut = stamps.str.find(" ").to_numpy(dtype=np.int64, copy=True)
    leading = np.flatnonzero(cut == 0)
    if leading.size:  # rare: stamps that start with blanks
        stamps.iloc[leading] = stamps.iloc[leading].str.lstrip()
        cut[leading] = stamps.iloc[leading].str.find(" ").to_numpy()
    no_space = np.flatnonzero(cut < 0)
    if no_space.size:
        iso_t = stamps.iloc[no_space].str.slice(10, 11).eq("T").to_numpy()
        cut[no_space[iso_t]] = len("yyyy-mm-dd")
    dates = np.empty(len(stamps), dtype=object)
    times = np.full(len(stamps), "", dtype=object)
    for position in np.unique(cut):
        rows = slice(None) if (cut[0] == cut).all() else cut == position
        group = stamps[rows]
        if position < 0:
            dates[rows] = group.to_numpy()
        else:
            dates[rows] = group.str.slice(0, position).to_numpy()
            times[rows] = group.str.slice(position + 1).to_numpy()
    return dates, times


def _read_date_text(
    dates: np.ndarray, at: np.ndarray, dayfirst: bool | None, column: _Column
) -> _Read:
    """Read date parts (rows ``at`` of the column) once per distinct text, settling the order."""
    codes, distinct = pd.factorize(dates)
    texts = pd.Series(distinct, dtype="str").str.strip()
    part = _Read.unread(len(texts), _NAT)
    either_way: list[tuple[_Form, np.ndarray, np.ndarray, np.ndarray]] = []
    for form, which in _group_by_form(texts, _DATE_GRAMMAR).items():
        group = texts.iloc[which]
        if form.ambiguous:
            month_first = _to_datetime(group, form.month_first, aware=False)
            day_first = _to_datetime(group, form.day_first, aware=False)
            either_way.append((form, which, month_first, day_first))
        else:
            part.values[which] = (
                _plausible(from_excel_serial(pd.to_numeric(group)))
                if form.serial
                else _to_datetime(group, form.month_first, aware=False)
            )
            part.name_rows(which, form.label(None))
    if either_way:
        part.dayfirst = _settle_order(either_way, len(texts), codes, at, dayfirst, column)
        for form, which, month_first, day_first in either_way:
            part.values[which] = day_first if part.dayfirst else month_first
            part.name_rows(which, form.label(part.dayfirst))
    return part.take(codes)


def _settle_order(
    either_way: list[tuple[_Form, np.ndarray, np.ndarray, np.ndarray]],
    distinct: int,
    codes: np.ndarray,
    at: np.ndarray,
    dayfirst: bool | None,
    column: _Column,
) -> bool | None:
    """Day-first (True) or month-first (False) from the dates that read only one way."""
    only_day_first = np.zeros(distinct, bool)
    only_month_first = np.zeros(distinct, bool)
    both = np.zeros(distinct, bool)
    for _form, which, month_first, day_first in either_way:
        month_ok, day_ok = ~np.isnat(month_first), ~np.isnat(day_first)
        only_day_first[which] = day_ok & ~month_ok
        only_month_first[which] = month_ok & ~day_ok
        both[which] = day_ok & month_ok
    day_rows = at[only_day_first[codes]]
    month_rows = at[only_month_first[codes]]
    hint = "Choose the order: --day-first or --month-first on the command line, or in the window."
    if day_rows.size and month_rows.size:
        later = max(day_rows[0], month_rows[0])
        raise InputError(
            f"dates read neither day-first nor month-first: {column.describe(day_rows[0])} "
            f"has a first number above 12 (day-first) but {column.describe(month_rows[0])} "
            "has a second number above 12 (month-first)",
            hint="Correct the dates that do not follow the column's order.",
            row=int(later),
            column=column.name,
        )
    if not (day_rows.size or month_rows.size):
        if dayfirst is None and both.any():
            raise InputError(
                "cannot tell whether dates are day-first or month-first: every date reads "
                "both ways (no number above 12 in either place)",
                hint=hint,
                column=column.name,
            )
        return dayfirst if both.any() else None
    found = bool(day_rows.size)
    if dayfirst is not None and dayfirst != found:
        evidence = day_rows[0] if found else month_rows[0]
        raise InputError(
            f"dates were set to {_order_name(dayfirst)}, but {column.describe(evidence)} "
            f"can only be {_order_name(found)}",
            hint=hint,
            row=int(evidence),
            column=column.name,
        )
    return found


def _read_time_text(times: np.ndarray, *, blank_is_midnight: bool) -> _Read:
    """Read times of day, once per distinct text, as spans since midnight.

    ``24:00`` is midnight at the end of the day (ISO 8601 allows it). With a UTC offset the
    span runs to the UTC instant, so adding it to the naive date gives UTC. A blank time is
    midnight when it is the missing time part of a date-only stamp, else unread.
    """
    codes, distinct = pd.factorize(times)
    texts = pd.Series(distinct, dtype="str").str.strip()
    part = _Read.unread(len(texts), _NO_SPAN)
    if blank_is_midnight:
        part.values[texts.eq("").to_numpy()] = np.timedelta64(0, "us")
    for form, which in _group_by_form(texts, _TIME_GRAMMAR).items():
        group = texts.iloc[which]
        clock = _to_datetime(group, form.month_first, form.aware)
        late = np.isnat(clock) & group.str.match(_END_OF_DAY_TEXT).to_numpy()
        if late.any():
            midnight = group[late].str.replace("24", "00", n=1)
            clock[late] = _to_datetime(midnight, form.month_first, form.aware) + _DAY
        part.values[which] = clock - _CLOCK_ZERO
        part.aware[which] = form.aware
        part.end_of_day[which] = late
        part.name_rows(which, form.label(None))
    return part.take(codes)


def _read_time_cells(cells: pd.Series) -> _Read:
    """Read a time-of-day column as spans since midnight."""
    kinds = _cell_kinds(cells)
    read = _Read.unread(len(cells), _NO_SPAN)
    at = np.flatnonzero((kinds == _TEXT) | (kinds == _CLOCK))
    if at.size:
        texts = cells.to_numpy(dtype=object)[at]
        clock = kinds[at] == _CLOCK
        texts[clock] = [str(time) for time in texts[clock]]  # datetime.time as 14:15:00
        read.put(at, _read_time_text(texts, blank_is_midnight=False))
    at = np.flatnonzero(kinds == _SPAN)
    if at.size:
        spans = pd.to_timedelta(cells.iloc[at]).to_numpy(dtype=_SPAN_US)
        within = (spans >= np.timedelta64(0, "us")) & (spans <= _DAY)
        read.values[at] = np.where(within, spans, _NO_SPAN)
        read.end_of_day[at] = spans == _DAY
        read.name_rows(at, "durations")
    at = np.flatnonzero(kinds == _NUMBER)
    if at.size:
        fractions = cells.iloc[at].to_numpy(dtype=float)
        ms = np.rint(fractions * _MS_PER_DAY).astype(np.int64).astype("timedelta64[ms]")
        within = (fractions >= 0) & (fractions < 1)
        read.values[at] = np.where(within, ms.astype(_SPAN_US), _NO_SPAN)
        read.name_rows(at, "Excel day fractions")
    return read


def _combine(date_part: _Read, time_part: _Read, joiner: str) -> _Read:
    """Dates plus times of day, row by row, with forms named 'date<joiner>time'."""
    width = len(time_part.form_names) + 1
    codes, keys = pd.factorize((date_part.form + 1) * width + (time_part.form + 1))
    names = []
    for key in keys:
        date_id, time_id = divmod(int(key), width)
        both = (
            date_part.form_names[date_id - 1] if date_id else "",
            time_part.form_names[time_id - 1] if time_id else "",
        )
        names.append(joiner.join(name for name in both if name))
    return _Read(
        values=date_part.values + time_part.values,
        aware=date_part.aware | time_part.aware,
        end_of_day=time_part.end_of_day,
        form=codes,
        form_names=names,
        dayfirst=date_part.dayfirst,
    )


def _cell_kinds(cells: pd.Series) -> np.ndarray:
    """What each cell holds (text, number, date-time, ...), decided once per type present."""
    dtype = cells.dtype
    if pd.api.types.is_object_dtype(dtype):
        type_codes, types = pd.factorize(cells.map(type))
        kinds = np.array([_kind_of_type(kind) for kind in types], dtype=np.int8)[type_codes]
    elif pd.api.types.is_datetime64_any_dtype(dtype):
        kinds = np.full(len(cells), _MOMENT, dtype=np.int8)
    elif pd.api.types.is_timedelta64_dtype(dtype):
        kinds = np.full(len(cells), _SPAN, dtype=np.int8)
    elif pd.api.types.is_bool_dtype(dtype):
        kinds = np.full(len(cells), _OTHER, dtype=np.int8)
    elif pd.api.types.is_numeric_dtype(dtype):
        kinds = np.full(len(cells), _NUMBER, dtype=np.int8)
    elif pd.api.types.is_string_dtype(dtype):
        kinds = np.full(len(cells), _TEXT, dtype=np.int8)
    else:
        kinds = np.full(len(cells), _OTHER, dtype=np.int8)
    kinds[cells.isna().to_numpy()] = _EMPTY
    return kinds


def _kind_of_type(kind: type) -> int:
    if issubclass(kind, str):
        return _TEXT
    if issubclass(kind, bool | np.bool_):
        return _OTHER
    if issubclass(kind, int | float | np.integer | np.floating):
        return _NUMBER
    if issubclass(kind, dt.date | np.datetime64):  # datetime and Timestamp are dates too
        return _MOMENT
    if issubclass(kind, dt.time):
        return _CLOCK
    if issubclass(kind, dt.timedelta | np.timedelta64):
        return _SPAN
    return _OTHER


def _group_by_form(texts: pd.Series, grammar: re.Pattern[str]) -> dict[_Form, np.ndarray]:
    """Positions of ``texts`` per form; one example per shape (digits as 9) is examined."""
    shape_codes, _shapes = pd.factorize(texts.str.translate(_DIGITS_AS_NINE))
    shape_of_form: dict[_Form, list[int]] = {}
    _, examples = np.unique(shape_codes, return_index=True)
    for shape, example in enumerate(examples):
        form = _form_of(texts.iloc[example], grammar)
        if form is not None:
            shape_of_form.setdefault(form, []).append(shape)
    return {
        form: np.flatnonzero(np.isin(shape_codes, shapes)) for form, shapes in shape_of_form.items()
    }


def _form_of(text: str, grammar: re.Pattern[str]) -> _Form | None:
    match = grammar.fullmatch(text)
    if match is None:
        return None
    found = match.groupdict()
    if found.get("serial"):
        return _Form("", "", serial=True)
    return _Form(
        month_first=_strptime_format(match, dayfirst=False),
        day_first=_strptime_format(match, dayfirst=True),
        aware=found.get("z") is not None,
    )


def _strptime_format(match: re.Match[str], *, dayfirst: bool) -> str:
    """The ``pd.to_datetime`` format for text shaped like the matched example."""
    found = match.groupdict()
    directives = {
        **_FIXED_DIRECTIVES,
        "first": "%d" if dayfirst else "%m",
        "second": "%m" if dayfirst else "%d",
        "y": "%Y" if len(found.get("y") or "") == 4 else "%y",
        "mon": "%b" if len(found.get("mon") or "") == 3 else "%B",
        "H": "%I" if found.get("p") else "%H",
    }
    fields = sorted(
        (match.span(name), directives[name])
        for name, value in found.items()
        if value is not None and name in directives
    )
    text, pieces, done = match.string, [], 0
    for (start, end), directive in fields:
        pieces += [text[done:start], directive]
        done = end
    return "".join([*pieces, text[done:]])


def _to_datetime(texts: pd.Series, fmt: str, aware: bool) -> np.ndarray:
    """Parse with one explicit format: NaT where text does not fit, UTC wall time when aware."""
    parsed = pd.to_datetime(texts, format=fmt, errors="coerce", utc=aware)
    if aware:
        parsed = parsed.dt.tz_localize(None)
    return parsed.to_numpy(dtype=_US, copy=True)


def _plausible(stamps: pd.DatetimeIndex | np.ndarray) -> np.ndarray:
    """NaT for dates outside the span a meter stamp can have (guards numbers that are not dates)."""
    values = np.asarray(stamps, dtype=_US)
    inside = (values >= _PLAUSIBLE_SPAN[0]) & (values < _PLAUSIBLE_SPAN[1])
    return np.where(inside, values, _NAT)


def _require_some(read: _Read, cells: pd.Series) -> None:
    """Refuse a column where not one cell could be read."""
    column = _Column(cells)
    if len(cells) and not np.isnat(read.values).all():
        return
    filled = np.flatnonzero(cells.notna().to_numpy() & cells.astype("str").str.strip().ne(""))
    if not filled.size:
        raise InputError(
            "the column holds no dates or times",
            hint="Choose the column that holds the date and time of each reading.",
            column=column.name,
        )
    raise InputError(
        f"no cell could be read as a date or time; the first is {column.describe(filled[0])}",
        hint=_ACCEPTED_FORMS,
        row=int(filled[0]),
        column=column.name,
    )


def _refuse_mixed_offsets(read: _Read, column: _Column) -> bool:
    """Whether the stamps carry UTC offsets; refuse a column where only some do."""
    read_ok = ~np.isnat(read.values)
    with_offset = np.flatnonzero(read_ok & read.aware)
    without = np.flatnonzero(read_ok & ~read.aware)
    if with_offset.size and without.size:
        odd = with_offset[0] if with_offset.size < without.size else without[0]
        raise InputError(
            f"some stamps carry a UTC offset and some do not: {column.describe(with_offset[0])} "
            f"has one, {column.describe(without[0])} has none",
            hint="Export every stamp with its offset, or every stamp in local clock time.",
            row=int(odd),
            column=column.name,
        )
    return bool(with_offset.size)


def _describe_forms(read: _Read) -> str:
    """The forms read, most common first, e.g. 'day-first dd.mm.yyyy hh:mm'."""
    counted = np.bincount(read.form[~np.isnat(read.values) & (read.form >= 0)])
    names = [
        read.form_names[index]
        for index in np.argsort(-counted, kind="stable")
        if counted[index] and read.form_names[index]
    ]
    return f"{names[0]}; also {', '.join(names[1:])}" if len(names) > 1 else "".join(names)


def _order_name(dayfirst: bool) -> str:
    return "day-first" if dayfirst else "month-first"
