"""Energy models: explainable families, benchmarks and a challenger, all on one contract.

Every family follows :mod:`engine.models.base`: settings in the constructor, ``fit`` returns
``self``, learned values end in ``_``, ``predict`` raises ``NotFittedError`` before ``fit``,
and ``to_dict``/``from_dict`` store plain JSON. :data:`MODEL_FAMILIES` lists the families on the
contract's inputs by stored identifier (the ones a meter's models are chosen from);
:data:`BILL_FAMILIES` those fitted on billing periods, and :func:`model_from_dict` loads any.

Explainable: :class:`CalendarRegressionModel`, :class:`TimeOfWeekTemperatureModel`,
:class:`DailyChangePointModel`, :class:`BillingPeriodChangePointModel` (on bills).
Less explainable: :class:`SeasonalNaiveModel`, :class:`DailyETSModel`,
:class:`MonthlySARIMAModel`, :class:`MSTLETSModel`, :class:`GradientBoostingChallenger`.
"""

from engine.models.base import EnergyModel, ModelInputs
from engine.models.billing_change_point import BillingInputs, BillingPeriodChangePointModel
from engine.models.calendar_regression import CalendarRegressionModel
from engine.models.challenger import GradientBoostingChallenger, RefitNeeded
from engine.models.daily_change_point import DailyChangePointModel
from engine.models.daily_ets import DailyETSModel
from engine.models.monthly_sarima import MonthlySARIMAModel
from engine.models.mstl_ets import MSTLETSModel
from engine.models.registry import (
    BILL_FAMILIES,
    MODEL_FAMILIES,
    STORED_FAMILIES,
    model_from_dict,
)
from engine.models.seasonal_naive import SeasonalNaiveModel
from engine.models.time_of_week import TimeOfWeekTemperatureModel

__all__ = [
    "BILL_FAMILIES",
    "MODEL_FAMILIES",
    "STORED_FAMILIES",
    "BillingInputs",
    "BillingPeriodChangePointModel",
    "CalendarRegressionModel",
    "DailyChangePointModel",
    "DailyETSModel",
    "EnergyModel",
    "GradientBoostingChallenger",
    "MSTLETSModel",
    "ModelInputs",
    "MonthlySARIMAModel",
    "RefitNeeded",
    "SeasonalNaiveModel",
    "TimeOfWeekTemperatureModel",
    "model_from_dict",
]
