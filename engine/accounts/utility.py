"""Which utility a bill account is, from its bills' unit.

A module of its own, free of the modelling code, so that the command line's ``accounts``
listing names it without loading what budgets an account.
"""

from __future__ import annotations

import pandas as pd

from engine.units import utility_hint


def account_utility(bills: pd.DataFrame) -> str | None:
    """The utility the bills' unit usually measures (kWh: electricity, therm: natural gas)."""
    return utility_hint(str(bills["unit_found"].iloc[0]))
