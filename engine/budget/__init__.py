"""Budget-period totals with an honest range: simulation, calibration, roll-ups and cost.

Typical use::

    months = budget_months(fiscal_year=2027)                 # July 2026 – June 2027
    weather = WeatherAssumption.past_years(hourly_temperatures)
    past = backtest_budget(plans_as_of, histories, 36, weather=weather, rng=1)
    run = simulate_budget(plans, months, "2026-06-30", weather,
                          calibration=past.calibrations(), rng=1)
    run.to_json()

See :mod:`engine.budget.simulate` for how paths are made, :mod:`engine.budget.summary` for how
they are summed and summarised, and :mod:`engine.budget.calibration` for the range check.
"""

from engine.budget.calibration import calibrate, conformal_scale, rolling_calibration
from engine.budget.past_budgets import BudgetBacktest, PlanFactory, backtest_budget, month_total
from engine.budget.periods import BudgetWindow, as_of_cut, as_of_date, budget_months
from engine.budget.plan import MeterPlan
from engine.budget.refits import RollingRefits, plans_from_refits, rolling_refits
from engine.budget.result import (
    BudgetRun,
    Calibration,
    MeterBudget,
    PeriodTotal,
    RollUp,
    Spread,
)
from engine.budget.run import simulate_budget
from engine.budget.scenarios import WeatherScenarios
from engine.budget.simulate import MeterPaths, PathTotals, simulate_paths
from engine.budget.summary import summarise, widen
from engine.budget.weather_paths import WEATHER_KINDS, WeatherAssumption

__all__ = [
    "WEATHER_KINDS",
    "BudgetBacktest",
    "BudgetRun",
    "BudgetWindow",
    "Calibration",
    "MeterBudget",
    "MeterPaths",
    "MeterPlan",
    "PathTotals",
    "PeriodTotal",
    "PlanFactory",
    "RollUp",
    "RollingRefits",
    "Spread",
    "WeatherAssumption",
    "WeatherScenarios",
    "as_of_cut",
    "as_of_date",
    "backtest_budget",
    "budget_months",
    "calibrate",
    "conformal_scale",
    "month_total",
    "plans_from_refits",
    "rolling_calibration",
    "rolling_refits",
    "simulate_budget",
    "simulate_paths",
    "summarise",
    "widen",
]
