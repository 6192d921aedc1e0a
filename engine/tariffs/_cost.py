"""What interval energy costs under a tariff, per local calendar (billing) month.

One computation serves a single metered or forecast series (:func:`cost`) and many simulated
paths at once (:func:`cost_paths`): monthly kWh and energy charges are sums over each month's
intervals (``numpy.add.reduceat``), demand charges take each path's own highest interval in
the month and window (``numpy.maximum.reduceat``), all vectorised over paths and intervals.

Conventions
-----------
* A billing month is a local calendar month; the series must cover whole months, every
  interval present (a bill never silently skips missing energy).
* The version of the tariff in effect on the month's last day prices the whole month.
* Demand is the highest interval-average kW (kWh ÷ interval hours) at the series' own
  interval; utilities usually meter 15-minute demand (common practice), so hourly energy
  gives a slightly lower peak than the bill would. A negative peak (net export) bills as 0.
* Amounts are not rounded to the cent: they feed budgets, not invoices.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.tariffs._schema import Block, LocalClock, Tariff, TariffVersion, clock_text

#: The parts of a month's cost, in the order of the last axis of :func:`cost_paths`.
COST_PARTS: tuple[str, ...] = ("kwh", "peak_kw", "fixed", "energy", "demand", "taxes", "total")
_HOUR = pd.Timedelta(hours=1)
_DAY = pd.Timedelta(days=1)


@dataclass(frozen=True)
class _Months:
    """Where each whole local month sits in a series of interval starts."""

    labels: pd.PeriodIndex
    starts: np.ndarray
    of_interval: np.ndarray
    local: pd.DatetimeIndex

    @property
    def last_days(self) -> list[date]:
        return [label.end_time.date() for label in self.labels]


def cost(
    energy_kwh: pd.Series, timezone: str, tariff: Tariff, interval: pd.Timedelta
) -> pd.DataFrame:
    """The cost of interval energy under a tariff, per billing month.

    Parameters
    ----------
    energy_kwh : pandas.Series
        kWh per interval on a tz-aware UTC index of interval starts covering whole local
        calendar months, with no interval missing.
    timezone : str
        The site's IANA zone; months, time-of-use and demand windows are on its clock.
    tariff : Tariff
        From :func:`engine.tariffs.read_tariff`.
    interval : pandas.Timedelta
        The interval length: a whole divisor of an hour (e.g. 15 minutes), or one day when
        the tariff has no time-of-use periods and no demand charges.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``month`` (monthly ``PeriodIndex``), with the :data:`COST_PARTS` columns:
        kWh, peak kW (over all intervals) and the fixed, energy, demand, taxes and total
        charges in ``attrs["currency"]``.

    Raises
    ------
    InputError
        When months are incomplete or values missing, the interval does not suit the
        tariff, or a month has no tariff version in effect.

    Examples
    --------
    >>> bills = cost(meter.values, meter.timezone, read_tariff("main.ratecard.toml"),
    ...              meter.interval)  # doctest: +SKIP
    """
    months = _whole_months(energy_kwh.index, timezone, interval)
    parts = _cost_array(energy_kwh.to_numpy(dtype=float)[np.newaxis, :], months, tariff, interval)
    frame = pd.DataFrame(parts[0], index=months.labels, columns=list(COST_PARTS))
    frame.attrs["currency"] = tariff.currency
    return frame


def cost_paths(
    paths: np.ndarray,
    index: pd.DatetimeIndex,
    timezone: str,
    tariff: Tariff,
    interval: pd.Timedelta | None = None,
) -> np.ndarray:
    """The monthly cost of many energy paths at once (each path billed on its own peaks).

    Parameters
    ----------
    paths : numpy.ndarray
        ``(n_paths, n_intervals)`` kWh per interval, e.g. simulated futures of one meter.
    index : pandas.DatetimeIndex
        The UTC interval starts of the columns, covering whole local months.
    timezone, tariff
        As in :func:`cost`.
    interval : pandas.Timedelta, optional
        The interval length; by default the index's frequency or its first step.

    Returns
    -------
    numpy.ndarray
        ``(n_paths, n_months, len(COST_PARTS))``; months are :func:`billing_months` of the
        index and the last axis follows :data:`COST_PARTS`.
    """
    paths = np.asarray(paths, dtype=float)
    if paths.ndim != 2 or paths.shape[1] != len(index):
        raise ValueError(f"paths must be (n_paths, {len(index)}), not {paths.shape}")
    if interval is None:
        interval = _step_of(index)
    return _cost_array(paths, _whole_months(index, timezone, interval), tariff, interval)


def billing_months(index: pd.DatetimeIndex, timezone: str) -> pd.PeriodIndex:
    """The local calendar months touched by ``index``, in order, as a monthly PeriodIndex."""
    local = index.tz_convert(timezone).tz_localize(None)
    return pd.period_range(local[0], local[-1], freq="M", name="month")


def _step_of(index: pd.DatetimeIndex) -> pd.Timedelta:
    if index.freq is not None:
        return pd.Timedelta(index.freq)
    if len(index) < 2:
        raise ValueError("give the interval: it cannot be read from fewer than two stamps")
    return index[1] - index[0]


def _interval_text(interval: pd.Timedelta) -> str:
    if interval >= _DAY:
        return f"{interval / _DAY:g}-day"
    return f"{interval / pd.Timedelta(minutes=1):g}-minute"


def _local_text(stamp: pd.Timestamp, timezone: str) -> str:
    return stamp.tz_convert(timezone).strftime("%Y-%m-%d %H:%M %Z")


def _whole_months(index: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta) -> _Months:
    """Check that ``index`` is every interval of whole local months and locate the months."""
    if not isinstance(index, pd.DatetimeIndex) or str(index.tz) != "UTC" or not len(index):
        raise ValueError("costs need a non-empty tz-aware UTC DatetimeIndex of interval starts")
    sub_hour = interval > pd.Timedelta(0) and _HOUR % interval == pd.Timedelta(0)
    if not (sub_hour or interval == _DAY):
        raise InputError(
            f"costs need intervals that divide an hour, or daily energy; these are "
            f"{_interval_text(interval)}.",
            hint="Cost the series at 15-minute, 30-minute or hourly intervals.",
        )
    labels = billing_months(index, timezone)
    ends = [labels[0].start_time, (labels[-1] + 1).start_time]
    first, after = (
        stamp.tz_localize(timezone, ambiguous=True, nonexistent="shift_forward") for stamp in ends
    )
    if sub_hour:
        expected = pd.date_range(first, after, freq=interval, inclusive="left").tz_convert("UTC")
    else:
        expected = pd.date_range(first, after, freq="D", inclusive="left").tz_convert("UTC")
    if len(index) != len(expected) or not (index == expected).all():
        _explain_grid(index, expected, timezone, interval)
    local = index.tz_convert(timezone)
    codes = (local.year * 12 + local.month).to_numpy()
    return _Months(
        labels=labels,
        starts=np.flatnonzero(np.r_[True, codes[1:] != codes[:-1]]),
        of_interval=codes - codes[0],
        local=local,
    )


def _explain_grid(
    index: pd.DatetimeIndex, expected: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta
) -> None:
    hint = (
        "A bill covers whole local calendar months: give every interval from the first day of "
        "the first month to the last day of the last (fill gaps in cleaning first)."
    )
    if not (index.is_monotonic_increasing and index.is_unique):
        raise InputError("the interval starts are not in time order or repeat.", hint=hint)
    off_grid = index.difference(expected)
    if len(off_grid):
        raise InputError(
            f"{len(off_grid)} interval start(s) are not on the {_interval_text(interval)} steps "
            f"of local months, the first at {_local_text(off_grid[0], timezone)}.",
            hint=hint,
        )
    missing = expected.difference(index)
    raise InputError(
        f"{len(missing)} interval(s) are missing, the first at "
        f"{_local_text(missing[0], timezone)}.",
        hint=hint,
    )


def _cost_array(
    paths: np.ndarray, months: _Months, tariff: Tariff, interval: pd.Timedelta
) -> np.ndarray:
    """``(n_paths, n_months, len(COST_PARTS))`` for paths already checked against months."""
    if np.isnan(paths).any():
        path, position = np.argwhere(np.isnan(paths))[0]
        stamp = months.local[position].strftime("%Y-%m-%d %H:%M %Z")
        raise InputError(
            f"the energy to cost has no value at {stamp}"
            + (f" (path {path + 1})." if paths.shape[0] > 1 else "."),
            hint="Fill or forecast every interval first; a bill needs all of its month.",
        )
    numbers = tariff.version_numbers(months.last_days)
    used = {number: tariff.versions[number] for number in np.unique(numbers)}
    _check_interval(used.values(), interval, tariff)
    clock = _clock(months.local, tariff, used.values())
    hours = interval / _HOUR
    kwh = np.add.reduceat(paths, months.starts, axis=1)
    peak_kw = np.maximum.reduceat(paths, months.starts, axis=1) / hours
    energy = np.zeros_like(kwh)
    demand = np.zeros_like(kwh)
    rates = np.zeros(paths.shape[1])
    for number, version in used.items():
        in_months = numbers == number
        in_intervals = in_months[months.of_interval]
        if version.blocks:
            energy[:, in_months] = _block_charges(kwh[:, in_months], version.blocks)
        else:
            rates[in_intervals] = _interval_rates(version, clock, in_intervals)
        for charge in version.demand:
            inside = charge.window.mask(clock) & in_intervals
            demand += charge.per_kw * _window_peaks(paths, months, inside) / hours
    if rates.any():
        energy += np.add.reduceat(paths * rates, months.starts, axis=1)
    by_month = [tariff.versions[number] for number in numbers]
    fixed = np.broadcast_to(np.array([v.fixed_per_month for v in by_month]), kwh.shape)
    tax_share = np.array([v.tax_percent for v in by_month]) / 100.0
    taxes = tax_share * (fixed + energy + demand)
    total = fixed + energy + demand + taxes
    return np.stack([kwh, peak_kw, fixed, energy, demand, taxes, total], axis=-1)


def _check_interval(
    versions: Iterable[TariffVersion], interval: pd.Timedelta, tariff: Tariff
) -> None:
    """Time-of-use and demand need sub-daily energy whose steps meet the window edges."""
    for version in versions:
        for name, window in version.windows:
            if interval == _DAY and (not window.always or version.demand):
                raise InputError(
                    f"tariff '{tariff.name}' prices '{name}' by time of day or peak demand, "
                    "which daily energy cannot show.",
                    hint="Cost hourly or 15-minute energy with this tariff.",
                    file=tariff.source or None,
                )
            for edge in (window.start_minute, window.end_minute):
                if pd.Timedelta(minutes=edge) % interval:
                    raise InputError(
                        f"the window of '{name}' in tariff '{tariff.name}' has an edge at "
                        f"{clock_text(edge)}, inside a {_interval_text(interval)} interval.",
                        hint="Cost energy at an interval that meets the window edges "
                        "(e.g. 15 minutes).",
                        file=tariff.source or None,
                    )


def _clock(
    local: pd.DatetimeIndex, tariff: Tariff, versions: Iterable[TariffVersion]
) -> LocalClock:
    needs_holidays = any(w.except_holidays for v in versions for _, w in v.windows)
    days = local.tz_localize(None).normalize().to_numpy().astype("datetime64[D]")
    holidays = tariff.holidays(range(local[0].year, local[-1].year + 1)) if needs_holidays else []
    return LocalClock(
        month=local.month.to_numpy(),
        weekday=local.day_of_week.to_numpy(),
        minute_of_day=(local.hour * 60 + local.minute).to_numpy(),
        holiday=np.isin(days, holidays),
    )


def _interval_rates(version: TariffVersion, clock: LocalClock, chosen: np.ndarray) -> np.ndarray:
    """Per-kWh rate of each chosen interval: the first time-of-use period that holds it."""
    if version.flat_rate is not None:
        return np.full(int(chosen.sum()), version.flat_rate)
    inside = [period.window.mask(clock)[chosen] for period in version.time_of_use]
    return np.select(inside, [period.per_kwh for period in version.time_of_use])


def _block_charges(kwh: np.ndarray, blocks: tuple[Block, ...]) -> np.ndarray:
    """Energy charge of monthly kWh priced in consumption blocks (tiers)."""
    uppers = np.array([block.up_to_kwh for block in blocks])
    lowers = np.r_[0.0, uppers[:-1]]
    in_block = np.clip(kwh[..., np.newaxis] - lowers, 0.0, uppers - lowers)
    return in_block @ np.array([block.per_kwh for block in blocks])


def _window_peaks(paths: np.ndarray, months: _Months, inside: np.ndarray) -> np.ndarray:
    """Each path's highest interval kWh inside the window, per month (0 where none is)."""
    peaks = np.zeros((paths.shape[0], len(months.labels)))
    positions = np.flatnonzero(inside)
    if not positions.size:
        return peaks
    chosen = paths if positions.size == paths.shape[1] else paths[:, positions]
    month = months.of_interval[positions]
    firsts = np.flatnonzero(np.r_[True, month[1:] != month[:-1]])
    peaks[:, month[firsts]] = np.maximum.reduceat(chosen, firsts, axis=1)
    return np.maximum(peaks, 0.0)
