"""Words the Cleaning screen shows for the engine's findings, steps and quality figures.

Plain formatting only, without Qt: the engine decides what is wrong and what to do about it;
this module decides how that reads on screen (short names, site-local times, units).
"""

from __future__ import annotations

from collections.abc import Mapping

import pandas as pd

from engine.cleaning import FINDING_KINDS, STEP_KINDS, Finding, recommended_steps
from engine.steps.cleaning import MeterReview
from engine.words import counted

#: Short names for the kinds of finding (the engine's own descriptions go in tooltips).
FINDING_NAMES: dict[str, str] = {
    "gap": "gap",
    "catch_up": "catch-up after a gap",
    "duplicate": "stamp repeated, same value",
    "conflict": "stamp repeated, values differ",
    "dst_hole": "hour skipped by the clock change",
    "dst_repeat": "hour repeated by the clock change",
    "dst_nonexistent": "readings in a skipped hour",
    "dst_single": "repeated hour read once",
    "flat_line": "stuck reading",
    "zero_run": "zeros while busy",
    "spike": "spike",
    "dip": "dip",
    "negative": "negative readings",
    "register_reset": "register reset or rollover",
    "level_shift": "lasting level change",
    "low_day": "low day",
    "high_day": "high day",
}

#: Short names for the kinds of cleaning step.
STEP_NAMES: dict[str, str] = {
    "interpolate": "straight-line fill",
    "profile_fill": "typical-week fill",
    "spread": "share over the stretch",
    "remove": "remove readings",
    "cap": "cap readings",
    "exclude": "leave out of fitting",
    "rescale": "rescale readings",
    "accept": "accepted as expected",
}

DECIDE = "for you to decide"
RECOMMENDED = "recommended"
NOTHING_TO_FIX = "nothing to fix"


def finding_name(kind: str) -> str:
    """A finding kind in a few words; kinds added to the engine later read from their key."""
    return FINDING_NAMES.get(kind, kind.replace("_", " "))


def finding_meaning(kind: str) -> str:
    """The engine's one-line description of a finding kind."""
    return FINDING_KINDS.get(kind, finding_name(kind))


def step_name(kind: str) -> str:
    return STEP_NAMES.get(kind, kind.replace("_", " "))


def step_meaning(kind: str) -> str:
    return STEP_KINDS.get(kind, step_name(kind))


def is_recommended(finding: Finding) -> bool:
    """Whether "Apply all recommended" would log this finding's fix (the engine's rule)."""
    return bool(recommended_steps([finding]))


def fix_words(finding: Finding) -> str:
    """The fix column: what the fix does, and whether it is applied unasked or left to the user."""
    if finding.fix is None:
        return NOTHING_TO_FIX
    verdict = RECOMMENDED if is_recommended(finding) else DECIDE
    return f"{step_name(finding.fix.kind)} — {verdict}"


_DAY = pd.Timedelta(days=1)


def local_time(stamp: pd.Timestamp, timezone: str, interval: pd.Timedelta) -> str:
    """A UTC instant on the site's clock; the date alone for daily or coarser readings."""
    local = stamp.tz_convert(timezone)
    return local.strftime("%a %Y-%m-%d" if interval >= _DAY else "%a %Y-%m-%d %H:%M")


def local_range(
    start: pd.Timestamp, end: pd.Timestamp, timezone: str, interval: pd.Timedelta
) -> str:
    """``[start, end)`` on the site's clock.

    Within a day the end is the clock time the range stops at ("09:00 to 15:15"). A range of
    whole local days (daily readings, or midnight to midnight) reads as the days it covers,
    last day included, as people count days.
    """
    local_start, local_end = start.tz_convert(timezone), end.tz_convert(timezone)
    if interval >= _DAY or (_is_midnight(local_start) and _is_midnight(local_end)):
        first = local_start.strftime("%a %Y-%m-%d")
        last = (local_end.tz_localize(None) - _DAY).strftime("%a %Y-%m-%d")
        return first if last == first else f"{first} to {last}"
    first = local_time(start, timezone, interval)
    last = local_time(end, timezone, interval)
    same_day = first[:14] == last[:14]
    return f"{first} to {last[15:] if same_day else last}"


def _is_midnight(stamp: pd.Timestamp) -> bool:
    return stamp == stamp.normalize()


def step_range_words(params: Mapping, timezone: str, interval: pd.Timedelta) -> str:
    """The range a logged step acts on, on the site's clock (or "–" when it has none)."""
    try:
        start, end = pd.Timestamp(params["start"]), pd.Timestamp(params["end"])
    except (KeyError, TypeError, ValueError):
        return "–"
    if start.tzinfo is None or end.tzinfo is None:
        return "–"
    return local_range(start, end, timezone, interval)


def energy_words(kwh: float) -> str:
    """Energy in kWh with digits a reader can take in; "–" when unknown."""
    if not pd.notna(kwh):
        return "–"
    kwh = float(kwh) + 0.0  # no "-0"
    if abs(kwh) >= 100:
        return f"{kwh:,.0f} kWh"
    return f"{kwh:,.1f} kWh"


def share_words(share: float) -> str:
    """A fraction as a percentage with two decimals: coverage near 100 % is what matters."""
    return f"{100.0 * share:.2f} %"


#: The quality summary as the screen lists it: engine key, words, how the number reads.
QUALITY_ROWS: tuple[tuple[str, str, str], ...] = (
    ("coverage_before", "Coverage before cleaning", "share"),
    ("coverage_after", "Coverage after cleaning", "share"),
    ("estimated_intervals", "Estimated intervals", "count"),
    ("estimated_share", "Estimated share of values", "share"),
    ("estimated_kwh", "Energy in estimated values", "energy"),
    ("energy_added_kwh", "Energy added by fixes", "energy"),
    ("energy_removed_kwh", "Energy removed by fixes", "energy"),
    ("energy_before_kwh", "Energy as recorded", "energy"),
    ("energy_after_kwh", "Energy after cleaning", "energy"),
    ("excluded_share", "Left out of model fitting", "share"),
)


def quality_words(key: str, value: float) -> str:
    """One quality figure in words, by how :data:`QUALITY_ROWS` says it reads."""
    reads = next((how for name, _, how in QUALITY_ROWS if name == key), "energy")
    if reads == "share":
        return share_words(value)
    if reads == "count":
        return f"{int(value):,}"
    return energy_words(value)


def nothing_recommended(review: MeterReview | None) -> str:
    """Why "Apply all recommended" has nothing to do for ``review``, in a few words."""
    if review is None:
        return ""
    if not review.findings:
        return "No findings: nothing to apply."
    kinds = sorted({finding_name(f.kind) for f in review.findings})
    one = len(review.findings) == 1
    return (
        f"Nothing recommended: the {counted(len(review.findings), 'finding')} "
        f"({', '.join(kinds)}) {'is' if one else 'are'} for you to decide"
        f"{'' if one else ' one by one'}."
    )
