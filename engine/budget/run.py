"""One call from meter plans to a budget: simulate the paths, then summarise them."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import date

import numpy as np
import pandas as pd

from engine.budget.plan import MeterPlan
from engine.budget.result import BudgetRun, Calibration
from engine.budget.simulate import simulate_paths
from engine.budget.summary import check_levels, summarise
from engine.budget.weather_paths import WeatherAssumption
from engine.progress import Progress


def simulate_budget(
    meters: Sequence[MeterPlan],
    months: Sequence[str],
    as_of: date | str | pd.Timestamp,
    weather: WeatherAssumption,
    *,
    levels: Sequence[int] = (10, 50, 90),
    paths: int = 1000,
    calibration: Mapping[str, Calibration] | None = None,
    block_days: float | None = None,
    error_days: int = 730,
    rng: np.random.Generator | int | None = None,
    progress: Progress | None = None,
) -> BudgetRun:
    """Budget totals with P-levels per month, meter, utility and campus, and their cost.

    Parameters
    ----------
    meters : sequence of MeterPlan
        Fitted models with their history, calendar and price, all on one site's clock.
    months : sequence of str
        Consecutive budget months, ``"YYYY-MM"`` (see :func:`budget_months`).
    as_of : date or ISO text
        The last local day whose readings count; a month under way is its actual to date
        plus a forecast of the rest.
    weather : WeatherAssumption
        Typical, past years (one per path, shared by every meter), a given series, or none.
    levels : sequence of int, default (10, 50, 90)
        Quantiles reported, in percent; must include 50.
    paths : int, default 1000
    calibration : mapping of meter name to Calibration, optional
        From :func:`calibrate`; each meter's ranges are scaled around P50 by its ``scale``.
    block_days, error_days, rng, progress
        See :func:`simulate_paths`.

    Returns
    -------
    BudgetRun

    Examples
    --------
    >>> run = simulate_budget(plans, budget_months(fiscal_year=2027), "2026-06-30",
    ...                       WeatherAssumption.past_years(temps), rng=1)  # doctest: +SKIP
    """
    levels = check_levels(levels)
    totals = simulate_paths(
        meters,
        months,
        as_of,
        weather,
        paths=paths,
        block_days=block_days,
        error_days=error_days,
        rng=rng,
        progress=progress,
    )
    return summarise(totals, levels=levels, calibration=calibration)
