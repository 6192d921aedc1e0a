"""Prices per kWh from a project's bills, per utility, for meters that have no rate card.

A budget without a rate card for a meter can still cost it: the utility's bills say what the
site paid per kWh over the last twelve months (:func:`engine.tariffs.effective_rate`, which
folds fixed and demand charges into the price). Each bill account's utility is the one its
unit usually measures (kWh → electricity, therm → natural gas, ton-hour → chilled water);
accounts whose unit serves several utilities (MMBtu, GJ) price nothing. Accounts of one
utility are pooled: their twelve newest months of cost over their kWh.
"""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from engine.errors import InputError
from engine.project import Project
from engine.tariffs import effective_rate
from engine.units import find_unit


@dataclass(frozen=True)
class BillPrice:
    """A utility's price per kWh from its bills, and where it came from."""

    utility: str
    rate: float  # currency per kWh
    accounts: tuple[str, ...]
    last_day: str  # ISO date of the newest bill's end

    def sentence(self, currency: str) -> str:
        names = ", ".join(f"'{account}'" for account in self.accounts)
        return (
            f"{self.rate:.4f} {currency} per kWh paid in the 12 months of bills to "
            f"{self.last_day} (account {names}; fixed and demand charges folded in)"
        )


def bill_prices(project: Project) -> dict[str, BillPrice]:
    """Per utility, the price per kWh its bills give; utilities without usable bills are left
    out (a bill account that cannot give a price is skipped, not an error)."""
    bills = project.load_bills()
    if bills.empty:
        return {}
    utility = bills["unit_found"].map(_utility_of)
    prices = {}
    for name, group in bills[utility.notna()].groupby(utility[utility.notna()]):
        try:
            rate = effective_rate(group)
        except InputError:
            continue
        prices[str(name)] = BillPrice(
            utility=str(name),
            rate=rate,
            accounts=tuple(sorted(group["account"].unique())),
            last_day=f"{pd.Timestamp(group['period_end'].max()):%Y-%m-%d}",
        )
    return prices


def _utility_of(unit_found: str) -> str | None:
    unit = find_unit(str(unit_found))
    return unit.utility_hint if unit is not None else None
