"""Tariffs and what energy costs under them.

A tariff is read from a rate card (``*.ratecard.toml``, a small TOML format of our own,
documented in :mod:`engine.tariffs._ratecard` and ``sample/tariffs/README.md``). It has
versions by effective date; each has a fixed charge per billing month, energy priced flat,
by time-of-use windows or by consumption blocks, demand charges on the month's peak kW
(optionally inside a window) and taxes in percent. Billing months are local calendar months.

Typical use::

    tariff = read_tariff("sample/tariffs/orrinvale-main-electric.ratecard.toml")
    monthly = cost(meter.values, meter.timezone, tariff, meter.interval)
    many = cost_paths(paths, index, meter.timezone, tariff)   # (paths, months, parts)

For accounts with bills only, :func:`effective_rate` gives the recent price per kWh.
"""

from engine.tariffs._bills import effective_rate
from engine.tariffs._cost import COST_PARTS, billing_months, cost, cost_paths
from engine.tariffs._ratecard import (
    RATECARD_SUFFIX,
    is_currency_code,
    read_tariff,
    tariff_from_dict,
)
from engine.tariffs._schema import (
    Block,
    DemandCharge,
    Tariff,
    TariffVersion,
    Tax,
    TimeOfUsePeriod,
    Window,
)

__all__ = [
    "COST_PARTS",
    "RATECARD_SUFFIX",
    "Block",
    "DemandCharge",
    "Tariff",
    "TariffVersion",
    "Tax",
    "TimeOfUsePeriod",
    "Window",
    "billing_months",
    "cost",
    "cost_paths",
    "effective_rate",
    "is_currency_code",
    "read_tariff",
    "tariff_from_dict",
]
