"""Which bill account a meter belongs to: the user says so, and then only the meter counts.

A campus's main electric account and the meters under it measure the same supply; summing both
would count that energy twice. The project setting :data:`SETTING` maps meter names to account
names (``loadledger accounts PROJECT --meter-account METER=ACCOUNT``, or the same option on
``new`` and the one-shot ``budget``). An account with a meter stays in the budget's list, marked
as measured by its meters, but leaves the roll-ups to them.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence

from engine.errors import InputError
from engine.project import Project

#: Project setting: {meter name: account name}.
SETTING = "accounts.meter_account"


def parse_pairs(texts: Iterable[str]) -> dict[str, str]:
    """``METER=ACCOUNT`` texts as a mapping; :class:`InputError` on a malformed one."""
    pairs = {}
    for text in texts:
        meter, sign, account = text.partition("=")
        if not sign or not meter.strip() or not account.strip():
            raise InputError(
                f"--meter-account '{text}' is not METER=ACCOUNT.",
                hint="e.g. --meter-account 'Main switchboard=electric-bills'",
            )
        pairs[meter.strip()] = account.strip()
    return pairs


def meter_accounts(project: Project) -> dict[str, str]:
    """The stored mapping of meters to the accounts they belong to."""
    stored = project.get_setting(SETTING, {})
    return {str(meter): str(account) for meter, account in dict(stored).items()}


def account_names(project: Project) -> list[str]:
    """The project's bill accounts, in name order."""
    return sorted(project.load_bills()["account"].unique())


def set_meter_accounts(
    project: Project, pairs: Mapping[str, str], clear: Sequence[str] = ()
) -> dict[str, str]:
    """Store that each meter of ``pairs`` belongs to its account and forget the meters in
    ``clear``; every name is checked first, so a wrong one stores nothing."""
    meters, accounts = set(project.meter_names()), set(account_names(project))
    for meter in [*pairs, *clear]:
        if meter not in meters:
            raise InputError(
                f"the project has no meter '{meter}'.",
                hint=f"Choose one of: {', '.join(sorted(meters)) or 'none'}.",
                file=project.path,
            )
    for account in pairs.values():
        if account not in accounts:
            raise InputError(
                f"the project has no bill account '{account}'.",
                hint=f"Choose one of: {', '.join(sorted(accounts)) or 'none (import bills)'}.",
                file=project.path,
            )
    mapping = {m: a for m, a in meter_accounts(project).items() if m not in clear}
    mapping.update(pairs)
    project.set_setting(SETTING, dict(sorted(mapping.items())))
    return mapping


def metered_by(mapping: Mapping[str, str], meters: Iterable[str]) -> dict[str, tuple[str, ...]]:
    """Per account, the meters among ``meters`` that belong to it."""
    found: dict[str, list[str]] = {}
    for meter in meters:
        if meter in mapping:
            found.setdefault(mapping[meter], []).append(meter)
    return {account: tuple(sorted(names)) for account, names in found.items()}
