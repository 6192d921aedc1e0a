"""The weather a budget assumes: typical, the spread of past years, a given series, or none.

Every assumption becomes one or more *weather scenarios*: hourly °C on the budget window's
hours. A path of the simulation uses one scenario, and every meter of that path uses the same
one, so meters that all respond to a cold winter are cold together.

* ``"typical"`` — one scenario: :func:`engine.weather.typical_year` learned from the
  temperatures before the cut (a smooth year; the range then holds model error only).
* ``"past_years"`` — one scenario per past year whose same calendar window is complete
  (:func:`engine.weather.past_year_samples`), optionally only the most recent ``years``
  (climates drift; 10–30 recent years is common practice); paths share them out equally.
* ``"given"`` — one scenario: the user's series, which must cover every hour from the cut on
  (short gaps up to 6 hours are interpolated, as in :func:`engine.weather.fill_hourly`).
* ``"none"`` — no temperatures, for calendar-only models.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.budget.periods import BudgetWindow
from engine.errors import InputError
from engine.weather import fill_hourly, past_year_samples, typical_year

#: The weather assumptions, with what each means in words.
WEATHER_KINDS: dict[str, str] = {
    "typical": "typical weather",
    "past_years": "the weather of past years, one past year per path",
    "given": "a given temperature series",
    "none": "no weather (calendar-only models)",
}


@dataclass(frozen=True, eq=False)
class WeatherAssumption:
    """Which weather the budget assumes, with the temperatures it draws on (°C).

    Use the constructors: :meth:`typical`, :meth:`past_years`, :meth:`given`, :meth:`none`.
    For the first two ``temperatures`` is the site's history (hourly or finer); readings
    from the cut on are ignored.
    """

    kind: str
    temperatures: pd.Series | None = None
    years: int | None = None

    def __post_init__(self) -> None:
        if self.kind not in WEATHER_KINDS:
            raise ValueError(f"weather kind must be one of {sorted(WEATHER_KINDS)}")
        if (self.kind == "none") != (self.temperatures is None):
            raise ValueError("temperatures go with every weather kind except 'none'")
        if self.years is not None and (self.kind != "past_years" or self.years < 1):
            raise ValueError("a number of years (at least 1) goes with past years only")

    @classmethod
    def typical(cls, history_c: pd.Series) -> WeatherAssumption:
        return cls("typical", history_c)

    @classmethod
    def past_years(cls, history_c: pd.Series, years: int | None = None) -> WeatherAssumption:
        return cls("past_years", history_c, years)

    @classmethod
    def given(cls, temperatures_c: pd.Series) -> WeatherAssumption:
        return cls("given", temperatures_c)

    @classmethod
    def none(cls) -> WeatherAssumption:
        return cls("none")


@dataclass(frozen=True, eq=False)
class WeatherScenarios:
    """Hourly °C per scenario on the window's hours (``hourly`` is None without weather)."""

    names: tuple[str, ...]
    hourly: np.ndarray | None
    description: str

    @property
    def count(self) -> int:
        return len(self.names)


def _before(temperatures: pd.Series, cut: pd.Timestamp) -> pd.Series:
    if not isinstance(temperatures.index, pd.DatetimeIndex) or temperatures.index.tz is None:
        raise InputError(
            "the temperatures have no time zone on their time stamps.",
            hint="Use the project's stored weather (UTC time stamps).",
        )
    return temperatures[temperatures.index < cut]


def weather_scenarios(
    assumption: WeatherAssumption, window: BudgetWindow, cut: pd.Timestamp
) -> WeatherScenarios:
    """The scenarios ``assumption`` gives on ``window``, knowing only weather before ``cut``."""
    if assumption.kind == "none":
        return WeatherScenarios(("calendar only",), None, WEATHER_KINDS["none"])
    temps = assumption.temperatures
    if assumption.kind == "typical":
        typical = typical_year(_before(temps, cut), window.timezone)
        hourly = typical.hourly(window.first_day, window.last_day).to_numpy()
        years = f"{typical.years[0]}–{typical.years[-1]}"
        return WeatherScenarios(
            ("typical",), hourly[np.newaxis, :], f"typical weather learned from {years}"
        )
    if assumption.kind == "past_years":
        history = _before(temps, cut)
        if assumption.years is not None:
            earliest = window.start - pd.DateOffset(years=assumption.years) - pd.Timedelta(days=1)
            history = history[history.index >= earliest]
        samples = past_year_samples(history, window.first_day, window.last_day, window.timezone)
        names = tuple(str(year) for year in samples.columns)
        return WeatherScenarios(
            names,
            samples.to_numpy().T.copy(),
            f"the weather of {len(names)} past years ({', '.join(sorted(names))}), "
            "one per path in equal shares, shared by every meter",
        )
    filled = fill_hourly(temps).hourly.reindex(window.hours)
    needed = window.hours >= cut
    missing = needed & filled.isna().to_numpy()
    if missing.any():
        first = window.hours[missing][0].tz_convert(window.timezone)
        raise InputError(
            f"the given temperatures have no value for {int(missing.sum())} budget hour(s), "
            f"the first at {first:%Y-%m-%d %H:%M %Z}.",
            hint="Give hourly temperatures for every day of the budget after the as-of date.",
        )
    return WeatherScenarios(
        ("given",), filled.to_numpy()[np.newaxis, :], "the given temperature series"
    )
