"""Degree-days by the three published methods and the balance-point search."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest
import statsmodels.api as sm
from hypothesis import given
from hypothesis import strategies as st
from scipy.integrate import quad
from vega_datasets import data as vega_data

from engine.degree_days import (
    balance_point,
    daily_degree_days,
    integrated_degree_days,
    mean_temperature_degree_days,
    met_office_degree_days,
)
from engine.errors import InputError
from engine.weather import celsius_to_fahrenheit, fahrenheit_to_celsius

# --- mean-temperature method ------------------------------------------------------------------


def test_mean_temperature_method_by_hand() -> None:
    tmean = np.array([10.0, 15.5, 20.0])
    # max(base − Tmean, 0) and max(Tmean − base, 0), worked by hand for base 15.5
    assert mean_temperature_degree_days(tmean, 15.5, "heating").tolist() == [5.5, 0.0, 0.0]
    assert mean_temperature_degree_days(tmean, 15.5, "cooling").tolist() == [0.0, 0.0, 4.5]


def test_daily_methods_read_their_columns() -> None:
    daily = pd.DataFrame(
        {"tmean": [8.0], "tmax": [14.0], "tmin": [4.0]},
        index=pd.DatetimeIndex(["2031-01-10"], name="day"),
    )
    assert daily_degree_days(daily, 15.0, method="mean_of_hours").iloc[0] == 7.0
    assert daily_degree_days(daily, 15.0, method="mean_of_max_min").iloc[0] == 6.0
    with pytest.raises(ValueError, match="method"):
        daily_degree_days(daily, 15.0, method="guess")


# --- UK Met Office min/max method -------------------------------------------------------------
# CIBSE TM41 (2006), "Degree-days: theory and application", Met Office equations, from memory.
# Heating with Tmean = (Tmax + Tmin)/2:
#   Tmax <= b:           b − Tmean
#   Tmean <= b < Tmax:   (b − Tmin)/2 − (Tmax − b)/4
#   Tmin < b < Tmean:    (b − Tmin)/4
#   b <= Tmin:           0
# Cooling:
#   Tmin >= b:           Tmean − b
#   Tmean >= b > Tmin:   (Tmax − b)/2 − (b − Tmin)/4
#   Tmax > b > Tmean:    (Tmax − b)/4
#   Tmax <= b:           0

BASE = 15.5


@pytest.mark.parametrize(
    ("tmax", "tmin", "expected"),
    [
        (12.0, 4.0, 15.5 - 8.0),  # case 1: whole day below base
        (17.5, 9.5, (15.5 - 9.5) / 2 - (17.5 - 15.5) / 4),  # case 2: mean 13.5 below base
        (21.0, 13.0, (15.5 - 13.0) / 4),  # case 3: mean 17.0 above base, min below
        (24.0, 16.0, 0.0),  # case 4: whole day above base
    ],
)
def test_met_office_heating_four_cases(tmax: float, tmin: float, expected: float) -> None:
    assert met_office_degree_days(tmax, tmin, BASE, "heating") == pytest.approx(expected)


@pytest.mark.parametrize(
    ("tmax", "tmin", "expected"),
    [
        (26.0, 18.0, 22.0 - 15.5),  # whole day above base
        (19.5, 13.5, (19.5 - 15.5) / 2 - (15.5 - 13.5) / 4),  # mean 16.5 above base
        (18.0, 11.0, (18.0 - 15.5) / 4),  # mean 14.5 below base, max above
        (15.0, 6.0, 0.0),  # whole day below base
    ],
)
def test_met_office_cooling_four_cases(tmax: float, tmin: float, expected: float) -> None:
    assert met_office_degree_days(tmax, tmin, BASE, "cooling") == pytest.approx(expected)


def test_met_office_is_continuous_at_case_boundaries() -> None:
    # At each boundary the neighbouring published formulas must agree.
    eps = 1e-9
    for tmax, tmin in [(15.5, 7.5), (19.5, 11.5), (23.5, 15.5)]:  # b = Tmax, Tmean, Tmin
        for kind in ("heating", "cooling"):
            low = met_office_degree_days(tmax - eps, tmin - eps, BASE, kind)
            high = met_office_degree_days(tmax + eps, tmin + eps, BASE, kind)
            assert low == pytest.approx(high, abs=1e-6)


temperatures = st.floats(-30, 40, allow_nan=False)


@given(a=temperatures, b=temperatures, base=st.floats(-5, 30, allow_nan=False))
def test_met_office_properties(a: float, b: float, base: float) -> None:
    tmax, tmin = max(a, b), min(a, b)
    tmean = (tmax + tmin) / 2
    hdd = float(met_office_degree_days(tmax, tmin, base, "heating"))
    cdd = float(met_office_degree_days(tmax, tmin, base, "cooling"))
    # Follows from the published formulas: HDD − CDD = b − Tmean in every case, and the
    # estimate never falls below the mean-temperature method (the day's spread only adds).
    assert hdd - cdd == pytest.approx(base - tmean, abs=1e-9)
    assert hdd >= max(base - tmean, 0.0) - 1e-9
    assert cdd >= max(tmean - base, 0.0) - 1e-9


def test_met_office_broadcasts_days_against_bases() -> None:
    tmax = np.array([[12.0], [21.0]])
    tmin = np.array([[4.0], [13.0]])
    table = met_office_degree_days(tmax, tmin, np.array([[10.0, 15.5]]))
    assert table.shape == (2, 2)
    assert table[1, 1] == pytest.approx((15.5 - 13.0) / 4)


# --- integration of hourly data ---------------------------------------------------------------


def _sinusoidal_day(step: str, mean: float, amplitude: float) -> pd.Series:
    index = pd.date_range("2031-01-06", "2031-01-07", freq=step, tz="UTC", inclusive="left")
    hours = (index - index[0]).total_seconds().to_numpy() / 3600
    return pd.Series(mean + amplitude * np.sin(2 * np.pi * hours / 24), index=index)


def test_integration_converges_to_quad_of_a_sinusoidal_day() -> None:
    mean, amplitude, base = 12.0, 8.0, 15.5

    def deficit(hour: float) -> float:
        return max(base - (mean + amplitude * math.sin(2 * math.pi * hour / 24)), 0.0)

    rise = 24 / (2 * math.pi) * math.asin((base - mean) / amplitude)  # where T crosses the base
    exact = quad(deficit, 0, 24, points=[rise, 12 - rise], limit=200)[0] / 24
    # Sampling a periodic day is the trapezoid rule; away from the two kinks (where the
    # deficit starts and stops) it is spectrally accurate, and at a kink whose slope jumps by
    # |T'| its error is at most |T'|·h²/8 degree-hours. |T'| <= A·2π/24 per hour.
    slope = amplitude * 2 * math.pi / 24
    for step, hours in [("1h", 1.0), ("15min", 0.25), ("1min", 1 / 60)]:
        bound = 2 * slope * hours**2 / 8 / 24
        value = integrated_degree_days(_sinusoidal_day(step, mean, amplitude), base).iloc[0]
        assert abs(value - exact) <= bound, step


def test_integration_scales_daylight_saving_days_and_refuses_thin_days() -> None:
    # Berlin's 2031 autumn change is on 26 October: a 25-hour local day.
    index = pd.date_range("2031-10-25 22:00", "2031-10-27 23:00", freq="h", tz="UTC")
    temps = pd.Series(10.0, index=index)
    hdd = integrated_degree_days(temps, 15.0, timezone="Europe/Berlin")
    assert hdd.loc["2031-10-26"] == pytest.approx(5.0 * 25 / 24)  # 125 degree-hours / 24
    assert hdd.loc["2031-10-27"] == pytest.approx(5.0)
    thin = temps.drop(temps.loc["2031-10-27 05:00":"2031-10-27 15:00"].index)
    assert np.isnan(integrated_degree_days(thin, 15.0, timezone="Europe/Berlin").loc["2031-10-27"])


@pytest.mark.slow
def test_integration_on_pvlib_tmy_matches_numpy() -> None:
    path = Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"
    tmy, _ = pvlib.iotools.read_tmy3(str(path), map_variables=True)
    temps = tmy["temp_air"].to_numpy()
    assert len(temps) == 8760
    # TMY3 rows are hour-ending 01:00 … 24:00 in local standard time (UTC−5 here), so row i
    # covers hour i of the year; lay them on hour starts of a non-leap year.
    index = pd.date_range("2031-01-01", periods=8760, freq="h", tz="Etc/GMT+5")
    series = pd.Series(temps, index=index.tz_convert("UTC"))
    for kind, base in [("heating", 18.3), ("cooling", 18.3)]:
        ours = integrated_degree_days(series, base, kind, timezone="Etc/GMT+5")
        sign = 1 if kind == "heating" else -1
        independent = np.maximum(sign * (base - temps), 0).reshape(365, 24).sum(axis=1) / 24
        np.testing.assert_allclose(ours.to_numpy(), independent, rtol=1e-12)
    yearly_hdd = integrated_degree_days(series, 18.3, timezone="Etc/GMT+5").sum()
    yearly_cdd = integrated_degree_days(series, 18.3, "cooling", timezone="Etc/GMT+5").sum()
    # Greensboro, NC: roughly 3,500–4,000 °F·day heating and ~1,500 °F·day cooling a year at
    # 65 °F (from memory), i.e. about 2,000 and 850 °C·day; wide bands for plausibility only.
    assert 1700 < yearly_hdd < 2500
    assert 500 < yearly_cdd < 1300


@pytest.mark.slow
def test_seattle_yearly_heating_degree_days() -> None:
    path = Path(vega_data.seattle_weather.filepath)
    assert path.is_file()  # the copy shipped inside vega_datasets, no download
    weather = pd.read_csv(path, parse_dates=["date"])
    daily = pd.DataFrame(
        {"tmax": weather["temp_max"].to_numpy(), "tmin": weather["temp_min"].to_numpy()},
        index=pd.DatetimeIndex(weather["date"], name="day"),
    )
    base_c = fahrenheit_to_celsius(65.0)  # 18.33 °C
    ours = daily_degree_days(daily, base_c, method="mean_of_max_min")
    yearly = ours.groupby(ours.index.year).sum()

    independent = (
        (base_c - weather[["temp_max", "temp_min"]].mean(axis=1))
        .clip(lower=0)
        .groupby(weather["date"].dt.year)
        .sum()
    )
    np.testing.assert_allclose(yearly.to_numpy(), independent.to_numpy(), rtol=1e-12)
    assert yearly.index.tolist() == [2012, 2013, 2014, 2015]
    # Seattle normals are about 4,400–4,900 °F·day at 65 °F (from memory): 2,450–2,700 °C·day.
    # 2012–2015 included warm years, so the band is wide.
    assert ((yearly > 2000) & (yearly < 3000)).all()

    # Same days in °F with base 65 °F: every degree-day is 9/5 as large.
    in_f = daily.apply(celsius_to_fahrenheit)
    yearly_f = daily_degree_days(in_f, 65.0, method="mean_of_max_min").groupby(ours.index.year)
    np.testing.assert_allclose(yearly_f.sum().to_numpy(), yearly.to_numpy() * 9 / 5, rtol=1e-9)

    # The Met Office equations equal the mean method on days wholly below the base (case 1)
    # and add at most a quarter of the smaller excursion, i.e. (Tmax − Tmin)/8, on days that
    # straddle it (cases 2 and 3): a bound that follows from the published formulas.
    met_office = daily_degree_days(daily, base_c, method="met_office")
    extra = (met_office - ours).groupby(ours.index.year).sum()
    straddling = (daily["tmin"] < base_c) & (base_c < daily["tmax"])
    allowance = ((daily["tmax"] - daily["tmin"]) / 8).where(straddling, 0.0)
    assert (extra >= -1e-9).all()
    assert (extra <= allowance.groupby(ours.index.year).sum() + 1e-9).all()


# --- balance point ----------------------------------------------------------------------------


def _invented_climate_days(years: int = 3, seed: int = 11) -> pd.DataFrame:
    """Daily temperatures for an invented inland campus: cold winters, warm summers."""
    rng = np.random.default_rng(seed)
    days = pd.date_range("2027-01-01", periods=365 * years, freq="D", name="day")
    season = 11.0 - 12.0 * np.cos(2 * np.pi * (days.day_of_year.to_numpy() - 15) / 365.25)
    tmean = season + rng.normal(0, 3.0, len(days))
    swing = rng.uniform(4, 12, len(days))
    return pd.DataFrame(
        {"tmean": tmean, "tmax": tmean + swing / 2, "tmin": tmean - swing / 2}, days
    )


def _ols(
    energy: np.ndarray, *regressors: np.ndarray
) -> sm.regression.linear_model.RegressionResults:
    return sm.OLS(energy, sm.add_constant(np.column_stack(regressors))).fit()


def test_balance_point_recovers_a_known_heating_base() -> None:
    daily = _invented_climate_days()
    rng = np.random.default_rng(5)
    hdd = np.maximum(14.0 - daily["tmean"].to_numpy(), 0)
    energy = pd.Series(800 + 45 * hdd + rng.normal(0, 25, len(daily)), index=daily.index)

    fit = balance_point(energy, daily, "heating")
    assert abs(fit.heating_base - 14.0) < 0.5
    assert fit.heating_slope == pytest.approx(45, rel=0.05)
    assert fit.cooling_base is None and fit.cooling_slope is None

    # Reference: statsmodels OLS at the chosen base gives the same line, R² and residuals.
    chosen = np.maximum(fit.heating_base - daily["tmean"].to_numpy(), 0)
    reference = _ols(energy.to_numpy(), chosen)
    assert fit.intercept == pytest.approx(reference.params[0], rel=1e-9)
    assert fit.heating_slope == pytest.approx(reference.params[1], rel=1e-9)
    assert fit.r_squared == pytest.approx(reference.rsquared, rel=1e-9)
    # ASHRAE Guideline 14-2014: CV(RMSE) = sqrt(SSE / (n − p)) / mean(y), p parameters.
    n, p = len(energy), 2
    assert fit.cv_rmse == pytest.approx(math.sqrt(reference.ssr / (n - p)) / energy.mean())
    assert fit.days == n
    # The chosen base is a minimum: nudging it either way fits no better.
    for nudge in (-0.2, 0.2):
        other = np.maximum(fit.heating_base + nudge - daily["tmean"].to_numpy(), 0)
        assert _ols(energy.to_numpy(), other).ssr >= reference.ssr


def test_balance_point_cooling_and_both() -> None:
    daily = _invented_climate_days(seed=3)
    rng = np.random.default_rng(9)
    t = daily["tmean"].to_numpy()
    hdd, cdd = np.maximum(12.5 - t, 0), np.maximum(t - 20.0, 0)
    cooling_only = pd.Series(500 + 70 * cdd + rng.normal(0, 20, len(t)), index=daily.index)
    fit = balance_point(cooling_only, daily["tmean"], "cooling")
    assert abs(fit.cooling_base - 20.0) < 0.5
    assert fit.cooling_slope == pytest.approx(70, rel=0.05)
    assert fit.heating_base is None

    both = pd.Series(600 + 40 * hdd + 70 * cdd + rng.normal(0, 20, len(t)), index=daily.index)
    fit = balance_point(both, daily, "both")
    assert abs(fit.heating_base - 12.5) < 0.5 and abs(fit.cooling_base - 20.0) < 0.5
    assert fit.heating_slope == pytest.approx(40, rel=0.05)
    assert fit.cooling_slope == pytest.approx(70, rel=0.05)
    reference = _ols(
        both.to_numpy(),
        np.maximum(fit.heating_base - t, 0),
        np.maximum(t - fit.cooling_base, 0),
    )
    assert fit.r_squared == pytest.approx(reference.rsquared, rel=1e-9)
    assert fit.cv_rmse == pytest.approx(math.sqrt(reference.ssr / (len(t) - 3)) / both.mean())
    assert set(fit.to_dict()) >= {"heating_base", "cooling_base", "intercept", "r_squared"}


def _best_pair(energy: np.ndarray, t: np.ndarray, heating: np.ndarray, cooling: np.ndarray):
    """Brute force with numpy's lstsq, one fit per pair (heating base ≤ cooling base, both
    slopes positive): the pair with the least squared error."""
    best, best_sse = None, np.inf
    for h in heating:
        for c in cooling[cooling >= h]:
            design = np.column_stack([np.ones_like(t), np.maximum(h - t, 0), np.maximum(t - c, 0)])
            coefficients = np.linalg.lstsq(design, energy, rcond=None)[0]
            sse = np.sum((energy - design @ coefficients) ** 2)
            if (coefficients[1:] > 0).all() and sse < best_sse:
                best, best_sse = (h, c), sse
    return best, best_sse


def test_balance_point_search_picks_the_pair_brute_force_picks() -> None:
    # A coarse grid of 9 candidates, then 41 × 41 between the winners' neighbours (as the
    # docstring describes), each pair fitted on its own by numpy's least squares.
    daily = _invented_climate_days(years=2, seed=8)
    rng = np.random.default_rng(6)
    t = daily["tmean"].to_numpy()
    energy = 600 + 40 * np.maximum(13.0 - t, 0) + 70 * np.maximum(t - 19.0, 0)
    energy = energy + rng.normal(0, 30, len(t))
    grid = np.linspace(5.0, 25.0, 9)
    fit = balance_point(pd.Series(energy, index=daily.index), daily, "both", grid)

    (coarse_h, coarse_c), _ = _best_pair(energy, t, grid, grid)
    fine = [
        np.linspace(grid[i - 1], grid[i + 1], 41)
        for i in np.searchsorted(grid, (coarse_h, coarse_c))
    ]
    (heating, cooling), sse = _best_pair(energy, t, *fine)
    assert (fit.heating_base, fit.cooling_base) == (heating, cooling)
    assert 1 - fit.r_squared == pytest.approx(sse / np.sum((energy - energy.mean()) ** 2), rel=1e-9)


def test_day_groups_keep_a_low_summer_session_from_hiding_the_cooling() -> None:
    # Invented campus building: heating below 10 °C, cooling above 16 °C, and a summer session
    # (the hottest ten weeks) and weekends that run far below a term weekday. Ground truth is
    # known by construction.
    daily = _invented_climate_days(seed=4)
    rng = np.random.default_rng(12)
    t = daily["tmean"].to_numpy()
    summer = np.isin(daily.index.month, (6, 7, 8)) & (daily.index.day_of_year < 235)
    weekend = daily.index.day_of_week >= 5
    level = np.where(summer, 1500.0, 3000.0) * np.where(weekend, 0.6, 1.0)
    energy = level + 30 * np.maximum(10.0 - t, 0) + 45 * np.maximum(t - 16.0, 0)
    energy = pd.Series(energy + rng.normal(0, 20, len(t)), index=daily.index)
    groups = pd.Series(np.where(summer, "summer", "term"), index=daily.index)
    groups = groups + np.where(weekend, "/weekend", "/weekday")

    fit = balance_point(energy, daily, "both", groups=groups)
    assert abs(fit.heating_base - 10.0) < 0.5 and abs(fit.cooling_base - 16.0) < 0.5
    assert fit.heating_slope == pytest.approx(30, rel=0.05)
    assert fit.cooling_slope == pytest.approx(45, rel=0.05)
    # Reference: statsmodels OLS with a level per group at the chosen bases: same slopes,
    # and CV(RMSE) with p = slopes + one level per group (ASHRAE Guideline 14-2014, from memory).
    dummies = pd.get_dummies(groups).to_numpy(dtype=float)
    design = np.column_stack(
        [dummies, np.maximum(fit.heating_base - t, 0), np.maximum(t - fit.cooling_base, 0)]
    )
    reference = sm.OLS(energy.to_numpy(), design).fit()
    assert [fit.heating_slope, fit.cooling_slope] == pytest.approx(reference.params[-2:])
    assert fit.r_squared == pytest.approx(reference.rsquared, rel=1e-9)
    p = design.shape[1]
    assert fit.cv_rmse == pytest.approx(math.sqrt(reference.ssr / (len(t) - p)) / energy.mean())

    # Without the groups the low summer weeks read as energy falling with heat: the search
    # puts the heating base far above 10 °C (near 25 °C on this draw).
    blind = balance_point(energy, daily, "both")
    assert blind.heating_base > 20.0


def test_balance_point_in_fahrenheit_and_met_office_method() -> None:
    daily_c = _invented_climate_days(seed=21)
    rng = np.random.default_rng(2)
    hdd_c = met_office_degree_days(daily_c["tmax"], daily_c["tmin"], 15.0)
    energy = pd.Series(400 + 30 * hdd_c + rng.normal(0, 10, len(daily_c)), index=daily_c.index)
    daily_f = daily_c.apply(celsius_to_fahrenheit)
    fit = balance_point(energy, daily_f, "heating", method="met_office")
    assert abs(fit.heating_base - celsius_to_fahrenheit(15.0)) < 0.9  # 0.5 K in °F
    assert fit.heating_slope == pytest.approx(30 * 5 / 9, rel=0.05)  # per °F·day


def test_balance_point_refuses_what_it_cannot_fit() -> None:
    daily = _invented_climate_days(years=1)
    flat = pd.Series(np.random.default_rng(1).normal(500, 5, len(daily)), index=daily.index)
    falling = flat - 30 * np.maximum(15 - daily["tmean"], 0)
    with pytest.raises(InputError, match="does not rise"):
        balance_point(falling, daily, "heating")
    with pytest.raises(InputError, match="at least 14"):
        balance_point(flat.iloc[:10], daily, "heating")
