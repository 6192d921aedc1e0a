"""The Cleaning screen's engine calls, without Qt: change the log, review, preview a fix.

Every change to a meter's cleaning log is saved in the project file by the engine at once and
followed by a fresh review, so the screen always shows what the engine says about the log as
it now stands. A preview replays the logged steps plus one more on a copy; nothing is saved.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import pandas as pd

from engine.cleaning import CleanedSeries, CleaningStep, Finding, apply_steps
from engine.meter_labels import naming_progress
from engine.progress import Progress, step
from engine.project import Project
from engine.steps.cleaning import MeterReview
from engine.steps.cleaning import review_meter as engine_review
from engine.steps.cleaning_changes import LogChange, logged_change
from engine.steps.labels import meter_labels

#: A change to the project's cleaning log, such as ``partial(Project.remove_cleaning_step, …)``.
Change = Callable[[Project], object]

#: How much of the readings either side of a finding its preview shows: the finding's own
#: length, but at least a day (or 24 intervals) and at most two weeks (or 120 intervals).
CONTEXT_LIMITS = (pd.Timedelta(days=1), pd.Timedelta(days=14))
CONTEXT_INTERVALS = (24, 120)


def review_after(
    project: Project, meter: str, change: Change | None = None, progress: Progress | None = None
) -> tuple[MeterReview, LogChange | None]:
    """Make ``change`` (saved at once by the engine), then review ``meter`` afresh; the review
    and what the change did to the log (to undo it), None without a change."""
    progress = naming_progress(progress, meter_labels(project))
    done = None
    if change is not None:
        step(progress, 0.0, "saving the change in the project")
        done = logged_change(project, change)
    step(progress, 0.0, f"reviewing meter '{meter}'")
    return engine_review(project, meter, progress=progress), done


@dataclass(frozen=True)
class FixPreview:
    """One finding's surroundings before and after its fix.

    ``before`` is the readings as recorded on the interval grid (NaN where none). ``after`` is
    the same stretch replayed from the logged steps plus the finding's fix, or None when the
    finding has no fix.
    """

    finding: Finding
    before: pd.Series
    after: CleanedSeries | None
    timezone: str
    logged_steps: int


def preview_window(finding: Finding, interval: pd.Timedelta) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The UTC stretch a finding's preview shows, per :data:`CONTEXT_LIMITS`."""
    low = max(CONTEXT_LIMITS[0], CONTEXT_INTERVALS[0] * interval)
    high = max(CONTEXT_LIMITS[1], CONTEXT_INTERVALS[1] * interval)
    margin = min(max(finding.end - finding.start, low), high)
    return finding.start - margin, finding.end + margin


def preview_fix(review: MeterReview, finding: Finding) -> FixPreview:
    """Replay the meter's active steps and ``finding``'s fix on a copy, around the finding.

    Raises
    ------
    InputError
        When the fix cannot be applied (the engine's message says why).
    """
    meter = review.meter
    logged = [CleaningStep.from_dict(stored) for stored in review.steps]
    first, stop = preview_window(finding, meter.interval)
    after = None
    if finding.fix is not None:
        replayed = apply_steps(
            meter.values,
            [*logged, finding.fix],
            interval=meter.interval,
            timezone=meter.timezone,
            calendar=review.cleaned.calendar,
        )
        after = _between(replayed, first, stop)
    grid = _between(review.cleaned, first, stop).values.index
    before = meter.values.reindex(grid).rename("kwh")
    return FixPreview(finding, before, after, meter.timezone, len(logged))


def _between(series: CleanedSeries, first: pd.Timestamp, stop: pd.Timestamp) -> CleanedSeries:
    index = series.values.index
    inside = slice(index.searchsorted(first), index.searchsorted(stop))
    return CleanedSeries(
        values=series.values.iloc[inside],
        estimated=series.estimated.iloc[inside],
        excluded=series.excluded.iloc[inside],
        interval=series.interval,
    )
