"""A meter made ready for modelling and budgeting: raw, cleaned, and on the model grid with drivers.

Every step that models or budgets meters needs the same things of each one: the raw readings,
the cleaned series the cleaning log gives, and the model inputs (hourly or daily energy with
temperature and calendar labels). :class:`ReadyMeter` holds them for one meter and
:class:`PreparedSite` for a site; the step :mod:`engine.steps.prepared_site` builds them once per
request from a project, and domain code receives these objects, never the project.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.quality import quality_summary
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.models.base import ModelInputs
from engine.weather import fill_hourly

HOUR = pd.Timedelta(hours=1)
_DAILY = pd.Timedelta(hours=23)


@dataclass(frozen=True)
class ReadyMeter:
    """One meter: its raw readings, the cleaned series and the model inputs built from them.

    ``inputs`` covers the whole history (sub-hourly readings summed to hours, an hour with an
    interval missing is missing; daily readings stay daily; excluded ranges are missing).
    ``steps`` are the active cleaning steps with their ids, as the project lists them.
    """

    name: str
    utility: str
    raw: MeterSeries
    cleaned: CleanedSeries
    inputs: ModelInputs
    steps: list[dict]

    def quality(self) -> dict:
        """The data-quality summary of the cleaning (:func:`engine.cleaning.quality_summary`)."""
        return quality_summary(self.raw.values, self.cleaned)

    def history(self, cut: pd.Timestamp, *, weather: bool = True) -> ModelInputs:
        """The inputs before ``cut`` (UTC); without temperature unless ``weather``."""
        before = self.inputs.window(end=cut)
        return before if weather else replace(before, temperature=None)


@dataclass(frozen=True)
class PreparedSite:
    """The site's calendar and hourly weather, and its meters made ready."""

    path: str
    timezone: str
    calendar: CampusCalendar
    temperatures: pd.Series | None  # the weather readings as stored, °C
    hourly: pd.Series | None  # the same on the hour, short gaps filled
    meters: dict[str, ReadyMeter]
    #: With several weather stations: each one's hours, in the order they are combined.
    station_hours: dict[str, int] = field(default_factory=dict)

    def hourly_before(self, cut: pd.Timestamp | None) -> pd.Series | None:
        """Hourly °C filled from the readings before ``cut`` only (a gap at the cut is not
        bridged with a later reading)."""
        if self.temperatures is None or cut is None or self.hourly.index[-1] < cut:
            return self.hourly
        return fill_hourly(self.temperatures[self.temperatures.index < cut]).hourly

    def meter(self, name: str) -> ReadyMeter:
        if name not in self.meters:
            raise InputError(
                f"the project has no meter '{name}'.",
                hint=f"Choose one of: {', '.join(self.meters)}.",
                file=self.path,
            )
        return self.meters[name]


def model_inputs(
    meter: MeterSeries,
    cleaned: CleanedSeries,
    calendar: CampusCalendar,
    hourly: pd.Series | None,
) -> ModelInputs:
    """One meter's cleaned energy with temperature and calendar labels, ready for a model."""
    energy = cleaned.values.where(~cleaned.excluded)
    if meter.interval < HOUR:
        per_hour = int(HOUR / meter.interval)
        grouped = energy.resample("h")
        energy = grouped.sum(min_count=1).where(grouped.count() == per_hour)
    index = _regular_index(energy.index, meter.timezone, meter.interval >= pd.Timedelta(days=1))
    energy = energy.reindex(index)
    labels = label_intervals(index, meter.timezone, calendar)
    temperature = None if hourly is None else temperature_on(hourly, index, meter.timezone)
    return ModelInputs(index, meter.timezone, energy, temperature, labels)


def temperature_on(hourly: pd.Series, index: pd.DatetimeIndex, timezone: str) -> pd.Series:
    """Hourly °C on an hourly ``index``, or each local day's mean on a daily one."""
    if len(index) > 1 and (index[1] - index[0]) >= _DAILY:
        local_days = hourly.tz_convert(timezone).index.normalize()
        daily = hourly.groupby(local_days).mean()
        daily.index = daily.index.tz_convert("UTC")
        return daily.reindex(index)
    return hourly.reindex(index)


def fingerprint(*parts: ModelInputs | pd.Series | dict | list | str | int | None) -> str:
    """A digest of everything a result depends on: inputs (index, energy, temperature,
    labels), series, and JSON-able settings. Equal digests mean equal inputs."""
    digest = hashlib.sha256()
    for part in parts:
        if isinstance(part, ModelInputs):
            _hash_index(digest, part.index)
            for series in (part.energy, part.temperature):
                _hash_array(digest, None if series is None else series.to_numpy(np.float64))
            if part.labels is None:
                digest.update(b"no labels")
            else:
                hashed = pd.util.hash_pandas_object(part.labels, index=False)
                _hash_array(digest, hashed.to_numpy())
        elif isinstance(part, pd.Series):
            _hash_index(digest, part.index)
            _hash_array(digest, part.to_numpy(np.float64))
        else:
            digest.update(json.dumps(part, sort_keys=True, default=str).encode())
        digest.update(b"|")
    return digest.hexdigest()


def _hash_index(digest: hashlib._Hash, index: pd.Index) -> None:
    stamps = index.as_unit("ns").asi8 if isinstance(index, pd.DatetimeIndex) else index
    digest.update(np.asarray(stamps).tobytes())
    digest.update(str(getattr(index, "tz", "")).encode())


def _hash_array(digest: hashlib._Hash, values: np.ndarray | None) -> None:
    if values is None:
        digest.update(b"none")
        return
    digest.update(str(values.dtype).encode())
    digest.update(np.ascontiguousarray(values).tobytes())


def _regular_index(index: pd.DatetimeIndex, timezone: str, daily: bool) -> pd.DatetimeIndex:
    """Every interval start from the first to the last (local midnights for daily data)."""
    if len(index) == 0:
        raise InputError("the meter has no readings to model.", hint="Import readings first.")
    if daily:
        local = index.tz_convert(timezone)
        days = pd.date_range(local[0], local[-1], freq=pd.DateOffset(days=1))
        return days.tz_convert("UTC")
    return pd.date_range(index[0], index[-1], freq="h")
