"""Every model family by its stored identifier, and loading any stored model."""

from __future__ import annotations

from typing import Any

from engine.errors import ProjectError
from engine.models._family import ModelFamily
from engine.models.billing_change_point import BillingPeriodChangePointModel
from engine.models.calendar_regression import CalendarRegressionModel
from engine.models.challenger import GradientBoostingChallenger
from engine.models.daily_change_point import DailyChangePointModel
from engine.models.daily_ets import DailyETSModel
from engine.models.last_year_adjusted import LastYearAdjustedModel
from engine.models.monthly_sarima import MonthlySARIMAModel
from engine.models.mstl_ets import MSTLETSModel
from engine.models.seasonal_naive import SeasonalNaiveModel
from engine.models.time_of_week import TimeOfWeekTemperatureModel

#: Family identifier → class for every family on the contract's inputs (:class:`ModelInputs`),
#: the ones a meter's models are chosen from: explainable families first, then benchmarks and the
#: challenger.
MODEL_FAMILIES: dict[str, type[ModelFamily]] = {
    family.family: family
    for family in (
        CalendarRegressionModel,
        TimeOfWeekTemperatureModel,
        DailyChangePointModel,
        LastYearAdjustedModel,
        SeasonalNaiveModel,
        DailyETSModel,
        MonthlySARIMAModel,
        MSTLETSModel,
        GradientBoostingChallenger,
    )
}
#: Families fitted on other inputs: billing periods (:class:`BillingInputs`), for bill accounts.
BILL_FAMILIES: dict[str, type[ModelFamily]] = {
    BillingPeriodChangePointModel.family: BillingPeriodChangePointModel
}
#: Every family a project may have stored.
STORED_FAMILIES: dict[str, type[ModelFamily]] = {**MODEL_FAMILIES, **BILL_FAMILIES}


def model_from_dict(data: dict[str, Any]) -> ModelFamily:
    """Rebuild any stored model from its ``to_dict`` form.

    Raises :class:`~engine.errors.ProjectError` for an unknown family or version, and
    :class:`~engine.models.challenger.RefitNeeded` for a fitted challenger.
    """
    family = data.get("family")
    if family not in STORED_FAMILIES:
        raise ProjectError(
            f"stored model has unknown family {family!r}; known: {', '.join(STORED_FAMILIES)}."
        )
    return STORED_FAMILIES[family].from_dict(data)
