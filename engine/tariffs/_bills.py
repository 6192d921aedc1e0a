"""The average price per kWh of an account that only has monthly bills."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.errors import InputError

_NEEDED = ("period_end", "quantity_kwh", "cost")


def effective_rate(bills: pd.DataFrame) -> float:
    """Price per kWh paid over the newest twelve months of bills.

    The rate is Σ cost ÷ Σ kWh over the bills that end within the twelve months up to the
    newest bill's last day, which is each bill's own price per kWh weighted by its quantity.
    It folds fixed and demand charges into the energy price, so it suits meters that only
    have bills (budgets cost their forecast kWh at this rate), not tariff comparisons. Bills
    with no cost or no quantity are left out of both sums.

    Parameters
    ----------
    bills : pandas.DataFrame
        One row per billing period with ``period_end`` (last day), ``quantity_kwh`` and
        ``cost``, as read by :func:`engine.reading.read_bill_file` or stored in a project.

    Returns
    -------
    float
        Currency per kWh.

    Raises
    ------
    InputError
        When a column is missing or the newest twelve months hold no kWh with a cost.
    """
    missing = [column for column in _NEEDED if column not in bills.columns]
    if missing:
        raise InputError(
            f"the bills have no {', '.join(repr(c) for c in missing)} column.",
            hint="Import the account's bills with their billing-period ends, kWh and cost.",
        )
    ends = pd.to_datetime(bills["period_end"])
    quantity = bills["quantity_kwh"].to_numpy(dtype=float)
    paid = bills["cost"].to_numpy(dtype=float)
    recent = (ends > ends.max() - pd.DateOffset(years=1)).to_numpy()
    usable = recent & np.isfinite(quantity) & np.isfinite(paid)
    total_kwh = quantity[usable].sum()
    if not total_kwh > 0:
        raise InputError(
            "the newest twelve months of bills hold no kWh with a cost, so no price per kWh "
            "can be worked out.",
            hint="Check the bills' quantities and costs, or give the account a tariff.",
        )
    return float(paid[usable].sum() / total_kwh)
