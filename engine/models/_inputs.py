"""Checked views of :class:`ModelInputs` that every family shares.

The models work on numpy arrays aligned with ``inputs.index``; these helpers check the index,
find the interval (sub-hourly, hourly or daily), align energy, temperature and calendar labels,
and give the local clock. Problems with the data are :class:`InputError` with a hint.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, label_intervals
from engine.errors import InputError
from engine.models.base import ModelInputs

HOUR = pd.Timedelta(hours=1)
DAY = pd.Timedelta(days=1)
#: Label columns the models read from ``engine.calendar.label_intervals``.
LABEL_COLUMNS: tuple[str, ...] = ("day_type", "period_kind", "occupied")
#: Spacing at or above which inputs count as daily (days are 23 to 25 hours long in UTC).
_DAILY_FROM = pd.Timedelta(hours=20)


def step_of(inputs: ModelInputs) -> pd.Timedelta:
    """The interval of the inputs: a length dividing one hour, or one (local) day.

    Daily inputs have one start per local day, at local midnight, so their UTC spacing is
    23 to 25 hours around daylight-saving changes; they are reported as one day.
    """
    index = inputs.index
    if not isinstance(index, pd.DatetimeIndex) or index.tz is None:
        raise InputError(
            "the model inputs need time stamps with a time zone.",
            hint="Build the inputs from stored meter data (UTC interval starts).",
        )
    require_intervals(len(index))
    if not (index.is_monotonic_increasing and index.is_unique):
        raise InputError(
            "the model inputs' time stamps are out of order or repeated.",
            hint="Clean the meter's time stamps (duplicates, clock changes) first.",
        )
    gaps = np.diff(index.tz_convert("UTC").tz_localize(None).to_numpy())
    spacing = pd.Timedelta(gaps.min())
    if spacing >= _DAILY_FROM:
        local = index.tz_convert(inputs.timezone)
        if (local != local.normalize()).any():
            raise InputError(
                "daily model inputs must start at local midnight.",
                hint="Sum the readings by local calendar day before modelling.",
            )
        return DAY
    if spacing > HOUR or HOUR % spacing != pd.Timedelta(0):
        raise InputError(
            f"readings every {spacing} cannot be modelled; the interval must divide one hour "
            "(e.g. 15 minutes or one hour) or be one day.",
            hint="Resample the meter to hourly readings first.",
        )
    if np.any(gaps % gaps.min()):
        raise InputError(
            f"some readings are off the {spacing} grid.",
            hint="Align the readings to a regular interval in the cleaning step.",
        )
    return spacing


def require_intervals(count: int) -> None:
    """Raise when the inputs (or a window of them) hold fewer than two intervals."""
    if count < 2:
        raise InputError(
            f"the model inputs hold {count} interval(s); at least two are needed.",
            hint="Choose a longer span of readings.",
        )


def require_interval_data(step: pd.Timedelta, what: str) -> None:
    """Raise when ``what`` needs readings within the day but the inputs are daily."""
    if step >= DAY:
        raise InputError(
            f"{what} needs readings within the day (hourly or shorter), not daily totals.",
            hint="Use the meter's interval readings, or a daily model such as change-point "
            "regression.",
        )


def require_same_step(fitted: pd.Timedelta, given: pd.Timedelta) -> None:
    """Raise when a model fitted at one interval is asked to predict at another."""
    if fitted != given:
        raise InputError(
            f"the model was fitted on {fitted} intervals but is asked to predict {given} ones.",
            hint="Predict at the interval the model was fitted on.",
        )


def _aligned(series: pd.Series, index: pd.DatetimeIndex) -> np.ndarray:
    if not series.index.equals(index):
        series = series.reindex(index)
    return series.to_numpy(dtype=float, na_value=np.nan)


def energy_values(inputs: ModelInputs, minimum: int = 2) -> np.ndarray:
    """Energy per interval as floats (NaN where unknown), with at least ``minimum`` known."""
    if inputs.energy is None:
        raise InputError(
            "fitting a model needs the meter's energy readings.",
            hint="Give the readings of the fit window.",
        )
    energy = _aligned(inputs.energy, inputs.index)
    require_known_energy(int(np.isfinite(energy).sum()), minimum)
    return energy


def require_known_energy(known: int, minimum: int) -> None:
    """Raise when fewer than ``minimum`` intervals (of the inputs or a window) have energy."""
    if known < minimum:
        raise InputError(
            f"only {known} intervals have energy readings; this model needs at least {minimum}.",
            hint="Choose a longer fit window or fill the gaps in the cleaning step.",
        )


def temperature_values(inputs: ModelInputs) -> np.ndarray | None:
    """Outdoor temperature (°C) per interval, or None when the inputs have none."""
    if inputs.temperature is None:
        return None
    return _aligned(inputs.temperature, inputs.index)


def require_temperature(inputs: ModelInputs, model_label: str) -> np.ndarray:
    """Temperatures for predicting with a model that was fitted with them."""
    temperature = temperature_values(inputs)
    if temperature is None:
        raise InputError(
            f"the {model_label} was fitted with outdoor temperature, so predicting needs it too.",
            hint="Give temperatures for the forecast window (e.g. a typical weather year).",
        )
    return temperature


def labels_of(inputs: ModelInputs) -> pd.DataFrame:
    """Calendar labels aligned with the index; from the local clock alone when not given.

    Without labels the day type comes from the weekday (no holidays), there are no campus
    periods and occupied hours are the calendar's default Monday–Friday 07:00–19:00.
    """
    if inputs.labels is None:
        return label_intervals(inputs.index, inputs.timezone, CampusCalendar())
    missing = [column for column in LABEL_COLUMNS if column not in inputs.labels.columns]
    if missing:
        raise InputError(
            f"the interval labels lack the columns {missing}.",
            hint="Label the intervals with the campus calendar again.",
        )
    labels = inputs.labels
    if not labels.index.equals(inputs.index):
        labels = labels.reindex(inputs.index)
    if labels["day_type"].isna().any():
        first = inputs.index[labels["day_type"].isna().to_numpy()][0]
        raise InputError(
            f"some intervals have no calendar label, the first at {first:%Y-%m-%d %H:%M} UTC.",
            hint="Label the intervals with the campus calendar again after changing the data.",
        )
    return labels


def local_clock(inputs: ModelInputs) -> pd.DatetimeIndex:
    """Interval starts on the site's local clock, as naive times."""
    return inputs.index.tz_convert(inputs.timezone).tz_localize(None)


def prediction(values: np.ndarray, inputs: ModelInputs) -> pd.Series:
    """Predicted kWh per interval as a Series on the inputs' index."""
    return pd.Series(np.asarray(values, dtype=float), index=inputs.index, name="kWh")
