"""Guided cleaning: detectors that explain what is wrong, fixes, and a reversible log.

Typical use::

    findings = find_all(meter, calendar=campus_calendar, temperatures=hourly_c)  # both optional
    steps = recommended_steps(findings)
    cleaned = apply_steps(meter.values, steps, interval=meter.interval)
    summary = quality_summary(meter.values, cleaned)

The raw readings are never changed: the cleaned series is always a replay of the logged steps.
"""

from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.clock import find_clock_problems
from engine.cleaning.find import find_all
from engine.cleaning.findings import FINDING_KINDS, SEVERITIES, Finding
from engine.cleaning.fixes import FIXES
from engine.cleaning.quality import (
    RECOMMENDED_KINDS,
    accepted_step,
    likely_factor,
    quality_summary,
    recommended_steps,
    rescaled_step,
)
from engine.cleaning.replay import apply_steps
from engine.cleaning.settings import CleaningSettings
from engine.cleaning.steps import STEP_KINDS, CleaningStep

__all__ = [
    "FINDING_KINDS",
    "FIXES",
    "RECOMMENDED_KINDS",
    "SEVERITIES",
    "STEP_KINDS",
    "CleanedSeries",
    "CleaningSettings",
    "CleaningStep",
    "Finding",
    "accepted_step",
    "apply_steps",
    "find_all",
    "find_clock_problems",
    "likely_factor",
    "quality_summary",
    "recommended_steps",
    "rescaled_step",
]
