"""Daily energy against daily mean outdoor temperature, with the fitted change-point line."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.changepoint import KINDS, ChangePointFit, select_best
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.profiles._readings import complete_days, local_readings

#: Fewest chosen days for a fit on them alone (see :func:`energy_vs_temperature`).
MIN_FIT_DAYS = 60


@dataclass(frozen=True)
class TemperatureResponse:
    """Daily points, the fitted change-point model, and its line ready to draw.

    ``daily`` is indexed by ``local date`` with ``day type``, ``mean temperature °C``,
    ``energy kWh``, ``fitted kWh`` and ``in fit`` (whether the day was fitted on); ``line``
    holds the model's corners (ends of the temperature range and each change point) as
    ``temperature °C`` and ``fitted kWh``. ``basis`` says in words which days were fitted.
    """

    daily: pd.DataFrame
    line: pd.DataFrame
    model: ChangePointFit
    basis: str = ""


def daily_mean_temperature(
    temperatures: pd.Series, timezone: str, *, min_coverage: float = 0.75
) -> pd.Series:
    """Mean temperature (°C) of each local day holding enough readings.

    A day counts when it holds at least ``min_coverage`` of the readings its typical spacing
    implies (e.g. 18 of 24 hourly readings at the default).
    """
    index = temperatures.index
    if not isinstance(index, pd.DatetimeIndex) or index.tz is None:
        raise InputError(
            "the temperature readings need time stamps with a time zone.",
            hint="Import the weather file with its time zone set.",
        )
    temps = temperatures.dropna().sort_index()
    if len(temps) < 2:
        raise InputError(
            "there are too few temperature readings to form daily means.",
            hint="Import a weather file covering the meter's dates.",
        )
    spacing = pd.Series(temps.index).diff().median()
    per_day = max(pd.Timedelta(days=1) / spacing, 1.0)
    dates = temps.index.tz_convert(timezone).tz_localize(None).normalize()
    grouped = temps.astype(float).groupby(dates)
    means = grouped.mean()
    return means[grouped.size() >= min_coverage * per_day]


def change_point_line(model: ChangePointFit, low: float, high: float) -> pd.DataFrame:
    """The fitted line's corners between ``low`` and ``high`` °C, for drawing."""
    inside = [point for point in model.change_points_ if low < point < high]
    temps = np.array([low, *inside, high])
    return pd.DataFrame({"temperature °C": temps, "fitted kWh": model.predict(temps)})


def energy_vs_temperature(
    meter: MeterSeries,
    temperatures: pd.Series,
    labels: pd.DataFrame | None = None,
    *,
    kind: str = "best",
    day_types: Sequence[str] | None = None,
    fit_days: pd.DatetimeIndex | None = None,
) -> TemperatureResponse:
    """Daily energy against daily mean temperature with a change-point fit.

    Parameters
    ----------
    meter : MeterSeries
        Interval energy in kWh; only whole local days are used.
    temperatures : pandas.Series
        Outdoor temperature in °C with a tz-aware index, any spacing up to daily.
    labels : pandas.DataFrame, optional
        Calendar labels; give the day types of the points.
    kind : str, default "best"
        A change-point shape from :data:`engine.changepoint.KINDS`, or ``"best"`` to let
        :func:`engine.changepoint.select_best` choose.
    day_types : sequence of str, optional
        Fit only days of these types (e.g. ``["weekday"]``); all days by default.
    fit_days : pandas.DatetimeIndex, optional
        Local dates (naive midnights) the line is fitted on, e.g. ordinary working days so
        that breaks and weekends do not hide the weather; every day is still returned. With
        fewer than :data:`MIN_FIT_DAYS` of them holding data, every day is fitted.
    """
    if kind != "best" and kind not in KINDS:
        raise InputError(
            f"unknown change-point model {kind!r}.", hint=f"Choose 'best' or one of {KINDS}."
        )
    days = complete_days(meter, local_readings(meter, labels))
    if day_types is not None:
        days = days[days["day_type"].astype(str).isin(list(day_types))]
    mean_temps = daily_mean_temperature(temperatures, meter.timezone)
    joined = days.join(mean_temps.rename("temp"), how="inner")
    if joined.empty:
        raise InputError(
            f"no whole day of meter '{meter.name}' has a daily mean temperature.",
            hint="Import weather covering the meter's dates (and check the day types chosen).",
        )
    x, y = joined["temp"].to_numpy(), joined["kWh"].to_numpy()
    used, basis = _fitted_days(pd.DatetimeIndex(joined.index), fit_days)
    fitted_x, fitted_y = x[used], y[used]
    model = (
        select_best(fitted_x, fitted_y)
        if kind == "best"
        else ChangePointFit(kind).fit(fitted_x, fitted_y)
    )
    daily = pd.DataFrame(
        {
            "day type": joined["day_type"].astype(str).to_numpy(),
            "mean temperature °C": x,
            "energy kWh": y,
            "fitted kWh": model.predict(x),
            "in fit": used,
        },
        index=pd.DatetimeIndex(joined.index, name="local date"),
    )
    line = change_point_line(model, float(x.min()), float(x.max()))
    return TemperatureResponse(daily=daily, line=line, model=model, basis=basis)


def _fitted_days(
    days: pd.DatetimeIndex, fit_days: pd.DatetimeIndex | None
) -> tuple[np.ndarray, str]:
    """Which of ``days`` the line is fitted on, and that in words."""
    if fit_days is not None:
        chosen = days.isin(fit_days)
        if chosen.sum() >= MIN_FIT_DAYS:
            return chosen, (
                f"{chosen.sum():,} ordinary working days (weekdays in term or outside campus "
                f"periods, not holidays) of {len(days):,}"
            )
        every = f"all {len(days):,} days (fewer than {MIN_FIT_DAYS} ordinary working days)"
        return np.ones(len(days), dtype=bool), every
    return np.ones(len(days), dtype=bool), f"all {len(days):,} days"
