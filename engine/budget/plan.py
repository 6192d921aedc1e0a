"""What the budget needs to know about one meter: its fitted model, history, calendar and price."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, OccupancyRule
from engine.errors import InputError
from engine.meters import UTILITIES
from engine.models.base import EnergyModel, ModelInputs
from engine.tariffs import Tariff


@dataclass
class MeterPlan:
    """One meter in a budget run.

    Attributes
    ----------
    name, utility : str
        The meter's name and utility (see :data:`engine.meters.UTILITIES`).
    model : EnergyModel
        A fitted model (the :mod:`engine.models.base` contract).
    history : ModelInputs
        The meter's energy and drivers at the model's interval; readings before the as-of
        cut give the actual energy to date and (without ``residuals``) the model's errors.
    calendar, occupancy : optional
        Label the budget months as the history was labelled (``label_intervals``); needed
        when ``history.labels`` is given.
    residuals : pandas.Series, optional
        The model's out-of-sample errors, actual − predicted kWh per interval on UTC interval
        starts (see :func:`engine.budget.rolling_refits`); better than the fit period's residuals,
        which understate a forecast's error.
    tariff : Tariff, optional
        Cost every path under this tariff (each path's own peaks).
    rate, currency : optional
        For a meter with bills only: price per kWh (:func:`engine.tariffs.effective_rate`)
        and its currency.
    scores : dict
        The model's backtest scorecard, passed through to the result.
    """

    #: Where the meter's figures come from (bill accounts say "bills", see engine.accounts).
    source: ClassVar[str] = "readings"
    #: Meters always count in roll-ups; a bill account its meters measure does not.
    in_roll_ups: ClassVar[bool] = True
    metered_by: ClassVar[tuple[str, ...]] = ()

    name: str
    utility: str
    model: EnergyModel
    history: ModelInputs
    calendar: CampusCalendar | None = None
    occupancy: OccupancyRule | None = None
    residuals: pd.Series | None = None
    tariff: Tariff | None = None
    rate: float | None = None
    currency: str | None = None
    scores: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.utility not in UTILITIES:
            raise InputError(
                f"meter '{self.name}' has utility {self.utility!r}, which is not known.",
                hint=f"Choose one of: {', '.join(UTILITIES)}.",
            )
        if self.history.energy is None:
            raise InputError(
                f"meter '{self.name}' has no energy history for the budget.",
                hint="Give the readings the model was fitted on.",
            )
        if self.history.labels is not None and self.calendar is None:
            raise InputError(
                f"meter '{self.name}' was modelled with campus-calendar labels, but its "
                "budget plan has no calendar to label the budget months with.",
                hint="Give the plan the campus calendar (and occupancy rule) used in fitting.",
            )
        if self.tariff is not None and self.rate is not None:
            raise InputError(
                f"meter '{self.name}' has both a tariff and a price per kWh.",
                hint="Give a tariff for metered accounts, a price per kWh for bill-only ones.",
            )
        if self.rate is not None and (not self.currency or not np.isfinite(self.rate)):
            raise InputError(
                f"meter '{self.name}' has a price per kWh of {self.rate} without a currency.",
                hint="Give the price per kWh as a number with its currency.",
            )

    @property
    def timezone(self) -> str:
        return self.history.timezone

    @property
    def uses_temperature(self) -> bool:
        return self.history.temperature is not None

    @property
    def price_currency(self) -> str | None:
        if self.tariff is not None:
            return self.tariff.currency
        return self.currency if self.rate is not None else None
