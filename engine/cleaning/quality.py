"""Data-quality figures for a cleaned meter, and the steps applied on the user's say-so."""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd

from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.findings import Finding
from engine.cleaning.steps import CleaningStep

#: Finding kinds whose fixes "apply recommended" applies without asking: gaps, catch-up spreads,
#: and spikes and flat lines when serious: a spike beyond what the meter plausibly uses (one
#: merely unusual for its hour may be real use), one non-zero reading repeated for a day and at
#: least 24 readings (a stuck meter or logger; a shorter repeat may be a quiet building on a
#: coarse register, see :data:`engine.cleaning.stuck.MIN_SERIOUS_REPEATS`).
#: Everything else (zero runs, dips, negatives, resets, level shifts and clock problems) needs a
#: person who knows the building.
RECOMMENDED_KINDS: frozenset[str] = frozenset({"gap", "catch_up", "spike", "flat_line"})
#: Of those, the kinds applied only when serious.
SERIOUS_ONLY: frozenset[str] = frozenset({"spike", "flat_line"})


def quality_summary(raw: pd.Series, cleaned: CleanedSeries) -> dict[str, float | int]:
    """Coverage, estimated share and energy accounting of a cleaning run, as plain numbers.

    Shares are fractions of the grid's intervals (``estimated_share`` is a fraction of the
    values present after cleaning). ``energy_added_kwh`` and ``energy_removed_kwh`` sum the
    increases and decreases interval by interval, counting a missing value as zero, so a spread
    catch-up shows the same energy added and removed.
    """
    index = cleaned.values.index
    before = raw.reindex(index).to_numpy(dtype="float64")
    after = cleaned.values.to_numpy(dtype="float64")
    estimated = cleaned.estimated.to_numpy(dtype=bool)
    excluded = cleaned.excluded.to_numpy(dtype=bool)
    intervals = len(index)
    present_after = int(np.isfinite(after).sum())
    change = np.nan_to_num(after) - np.nan_to_num(before)
    return {
        "intervals": intervals,
        "coverage_before": float(np.isfinite(before).sum() / intervals),
        "coverage_after": float(present_after / intervals),
        "estimated_intervals": int(estimated.sum()),
        "estimated_share": float(estimated.sum() / present_after) if present_after else 0.0,
        "estimated_kwh": float(np.nansum(after[estimated])),
        "excluded_share": float(excluded.sum() / intervals),
        "energy_before_kwh": float(np.nansum(before)),
        "energy_after_kwh": float(np.nansum(after)),
        "energy_added_kwh": float(change[change > 0].sum()),
        "energy_removed_kwh": float(-change[change < 0].sum()),
    }


def recommended_steps(findings: Iterable[Finding]) -> list[CleaningStep]:
    """The fixes of findings in :data:`RECOMMENDED_KINDS`, in time order (never level shifts)."""
    chosen = [f for f in findings if _applies_unasked(f)]
    chosen.sort(key=lambda finding: (finding.start, finding.end))
    return [finding.fix for finding in chosen if finding.fix is not None]


def _applies_unasked(finding: Finding) -> bool:
    if finding.kind not in RECOMMENDED_KINDS or finding.fix is None:
        return False
    return finding.kind not in SERIOUS_ONLY or finding.severity == "serious"


def accepted_step(finding: Finding, note: str = "") -> CleaningStep:
    """The step that keeps ``finding``'s readings as they are and leaves it out of reviews."""
    return CleaningStep(
        "accept",
        finding.meter,
        {
            "finding": finding.id,
            "finding_kind": finding.kind,
            "start": finding.start.isoformat(),
            "end": finding.end.isoformat(),
        },
        note or "accepted as expected",
    )


#: Factors a meter's readings are commonly off by when its multiplier or unit changed: current
#: transformer ratios that doubled or halved, and decimal unit slips (Wh, kWh, MWh). Common
#: practice; the person confirms the factor from the meter's records.
_USUAL_FACTORS = (1000.0, 100.0, 10.0, 5.0, 4.0, 3.0, 2.0, 0.5, 1 / 3, 0.25, 0.2, 0.1, 0.01, 0.001)


def likely_factor(finding: Finding) -> float:
    """The factor that would undo a level shift: the usual one nearest the shift's inverse
    ratio when within 10 % of it, else that inverse rounded to two significant digits."""
    inverse = 1.0 / float(finding.measures["ratio"])
    usual = min(_USUAL_FACTORS, key=lambda factor: abs(np.log(factor / inverse)))
    if abs(usual / inverse - 1.0) <= 0.10:
        return usual
    return float(f"{inverse:.2g}")


def rescaled_step(
    finding: Finding, cleaned: CleanedSeries, factor: float, note: str = ""
) -> CleaningStep:
    """The step that multiplies ``finding``'s readings by ``factor`` from the interval its
    level shift began (:func:`changed_at`) to the last reading of ``cleaned``."""
    if finding.kind != "level_shift":
        raise ValueError("only a level shift is corrected by rescaling its readings")
    index = cleaned.values.index
    start = changed_at(cleaned.values, finding.start, factor)
    return CleaningStep(
        "rescale",
        finding.meter,
        {
            "start": start.isoformat(),
            "end": (index[-1] + cleaned.interval).isoformat(),
            "factor": float(factor),
        },
        note or f"readings from the level shift multiplied by {factor:g}",
    )


def changed_at(values: pd.Series, day_start: pd.Timestamp, factor: float) -> pd.Timestamp:
    """The interval of the shift's first day from which the readings changed: of the splits
    of that day, the one whose readings, multiplied by ``factor`` after it, come nearest the
    same intervals a week before (a level shift is found day by day; a meter's multiplier
    changes at one moment)."""
    inside = (values.index >= day_start) & (values.index < day_start + pd.Timedelta(days=1))
    day = values[inside]
    before = values.reindex(day.index - pd.Timedelta(days=7)).to_numpy(dtype=np.float64)
    now = day.to_numpy(dtype=np.float64)
    if len(now) < 2 or not np.isfinite(before).any():
        return day_start
    cost = [
        np.nansum(np.abs(np.r_[now[:split], now[split:] * factor] - before))
        for split in range(len(now))
    ]
    return day.index[int(np.argmin(cost))]
