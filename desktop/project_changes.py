"""The changes a person makes to a project, each with the engine calls that make it and take it
back — without Qt. The window's undo stack (:mod:`desktop.undo`) runs them; the domain work
is the engine's (:mod:`engine.meter_labels`, :mod:`engine.steps.calendar_edit`,
:mod:`engine.steps.cleaning_changes`, :mod:`engine.steps.fitting`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import partial

from desktop.cleaning_jobs import Change, review_after
from desktop.model_jobs import ModelReport, use_model_report
from engine.calendar import CampusCalendar
from engine.meters import utility_words
from engine.progress import Progress
from engine.project import Project
from engine.steps import calendar_edit
from engine.steps.account_membership import meter_accounts, set_meter_accounts
from engine.steps.cleaning import MeterReview
from engine.steps.cleaning_changes import LogChange, make_again, take_back
from engine.steps.fitting import choice_since, keep_choice_again, newest_model_id, take_back_choice
from engine.steps.labels import (
    meter_label,
    relabelled,
    set_temperature_unit,
    store_label,
    temperature_unit,
)

#: Kinds of change, for the screens to know whether to look again after an undo or a redo.
CLEANING, LABELS, TEMPERATURE, CALENDAR, MODEL, ACCOUNTS = (
    "cleaning",
    "labels",
    "temperature",
    "calendar",
    "model",
    "accounts",
)


@dataclass(frozen=True)
class Reversible:
    """A change to ``project`` in words ("apply fix 'fill gap' on Library"), the engine calls
    that make it and take it back, its kind and the meters it touched."""

    project: Project
    words: str
    do: Callable[[], object]
    undo: Callable[[], object]
    kind: str
    meters: tuple[str, ...] = ()


def cleaning_change(project: Project, logged: LogChange, words: str) -> Reversible:
    """A change already made to the cleaning log (see :func:`logged_change`)."""
    return Reversible(
        project,
        words,
        partial(make_again, project, logged),
        partial(take_back, project, logged),
        CLEANING,
        logged.meters,
    )


def cleaning_change_remembered(
    remember: Callable[[Reversible], None],
    project: Project,
    meter: str,
    change: Change | None,
    words: str,
    progress: Progress | None = None,
) -> MeterReview:
    """:func:`review_after`, then hand ``remember`` the change it made, to undo (on the worker,
    so a change saved is remembered even when the screen has moved on to another meter)."""
    review, logged = review_after(project, meter, change, progress)
    if logged:
        remember(cleaning_change(project, logged, words))
    return review


def label_change(
    project: Project,
    name: str,
    *,
    display_name: str | None = None,
    utility: str | None = None,
    read_unit: str | None = None,
) -> Reversible | None:
    """Give meter ``name`` another display name, utility or unit read in; None when that is
    what it has. Refused in words (:class:`InputError`) before anything is stored."""
    before = meter_label(project, name)
    after = relabelled(
        project, name, display_name=display_name, utility=utility, read_unit=read_unit
    )
    if after == before:
        return None
    if after.shown != before.shown:
        words = f"show meter {before.shown} as '{after.shown}'"
    elif after.utility != before.utility:
        words = f"file {before.shown} under {utility_words(after.utility)}"
    else:
        words = f"show {before.shown} in {after.read_unit}"
    return Reversible(
        project,
        words,
        partial(store_label, project, after),
        partial(store_label, project, before),
        LABELS,
        (name,),
    )


def account_change(project: Project, meter: str, account: str | None) -> Reversible | None:
    """Say that ``meter`` belongs to bill ``account`` (None: to no account), so the budget's
    totals count the meter and not the account's bills as well; None when nothing changes."""
    before = meter_accounts(project).get(meter)
    if account == before:
        return None
    words = (
        f"count {meter} under bill account '{account}'"
        if account
        else f"take {meter} out of bill account '{before}'"
    )
    return Reversible(
        project,
        words,
        partial(_belong, project, meter, account),
        partial(_belong, project, meter, before),
        ACCOUNTS,
        (meter,),
    )


def _belong(project: Project, meter: str, account: str | None) -> None:
    if account:
        set_meter_accounts(project, {meter: account})
    else:
        set_meter_accounts(project, {}, clear=[meter])


def temperature_change(project: Project, unit: str) -> Reversible | None:
    """Show temperatures in ``unit`` (°C or °F); None when they already are."""
    before = temperature_unit(project)
    if unit == before:
        return None
    return Reversible(
        project,
        f"show temperatures in {unit}",
        partial(set_temperature_unit, project, unit),
        partial(set_temperature_unit, project, before),
        TEMPERATURE,
    )


def calendar_change(
    project: Project, edit: Callable[[CampusCalendar], CampusCalendar], words: str
) -> Reversible | None:
    """Store ``edit`` of the project's campus calendar; None when it changes nothing."""
    before = calendar_edit.current(project)
    after = edit(before)
    if after == before:
        return None
    return Reversible(
        project,
        words,
        partial(calendar_edit.store, project, after),
        partial(calendar_edit.store, project, before),
        CALENDAR,
    )


def use_model_remembered(
    remember: Callable[[Reversible], None],
    project: Project,
    meter: str,
    model: str,
    words: str,
    progress: Progress | None = None,
) -> ModelReport | None:
    """:func:`use_model_report`, then hand ``remember`` the change to undo (on the worker)."""
    before = newest_model_id(project, meter)
    report = use_model_report(project, meter, model, progress)
    kept = choice_since(project, meter, before)
    if kept is not None:
        remember(
            Reversible(
                project,
                words,
                partial(keep_choice_again, project, kept),
                partial(take_back_choice, project, kept),
                MODEL,
                (meter,),
            )
        )
    return report
