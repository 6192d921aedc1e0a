"""Data-quality figures for a cleaned meter, and the steps applied on the user's say-so."""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd

from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.findings import Finding
from engine.cleaning.steps import CleaningStep

#: Finding kinds whose fixes "apply recommended" applies without asking: gaps, catch-up spreads
#: and spikes, the latter only when serious (beyond what the meter plausibly uses; a spike that
#: is merely unusual for its hour may be real use). Everything else (flat lines, zero runs, dips,
#: negatives, resets, level shifts and clock problems) needs a person who knows the building.
RECOMMENDED_KINDS: frozenset[str] = frozenset({"gap", "catch_up", "spike"})


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
    return finding.kind != "spike" or finding.severity == "serious"


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
