"""Replaying the cleaning log: raw readings plus ordered steps give the cleaned series.

The raw readings are never changed; undoing a step is replaying the log without it.
"""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from engine.calendar import CampusCalendar
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.fixes import FIXES
from engine.cleaning.grid import infer_interval, to_grid
from engine.cleaning.steps import CleaningStep
from engine.errors import InputError


def apply_steps(
    raw: pd.Series,
    steps: Sequence[CleaningStep],
    *,
    interval: pd.Timedelta | None = None,
    timezone: str | None = None,
    calendar: CampusCalendar | None = None,
) -> CleanedSeries:
    """Replay ``steps`` in order on a meter's raw readings.

    Parameters
    ----------
    raw : pd.Series
        The meter's canonical readings (kWh per interval, sorted unique UTC interval starts).
        It is not modified.
    steps : sequence of CleaningStep
        The active steps for this meter, oldest first.
    interval : pd.Timedelta, optional
        The meter's interval; inferred from the readings when not given.
    timezone : str, optional
        The site's zone; needed for daily meters, whose intervals are local calendar days.
    calendar : CampusCalendar, optional
        The site's campus calendar: fills from the meter's typical week then take each day's
        typical value from days of its own kind (term, break, closure, summer session).

    Returns
    -------
    CleanedSeries
        Values on the full interval grid from the first to the last reading, with the estimated
        and excluded marks.

    Raises
    ------
    InputError
        When the readings cannot be put on a grid or a step cannot be applied; the message names
        the step by its number in the log.
    """
    meter = str(raw.name) if raw.name is not None else "meter"
    step_interval = interval if interval is not None else infer_interval(raw.index)
    grid = to_grid(raw, step_interval, meter, timezone)
    state = CleanedSeries.start(grid, step_interval, calendar)
    for number, step in enumerate(steps, start=1):
        try:
            state = FIXES[step.kind](state, step.params)
        except InputError as error:
            raise InputError(
                f"cleaning step {number} ('{step.kind}' on meter '{step.meter}'): {error.problem}",
                hint=error.hint or "Edit or remove the step.",
            ) from error
    return state
