"""Cleaning a meter of a project: replay its logged steps, review what is left, apply fixes.

The project file keeps the raw readings and the log of steps; the cleaned series is always
``apply_steps(raw, active steps)``, so reopening a project reproduces it exactly.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import pandas as pd

from engine.calendar import CampusCalendar
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.clock import find_clock_problems
from engine.cleaning.find import find_all
from engine.cleaning.findings import Finding
from engine.cleaning.quality import quality_summary, recommended_steps, rescaled_step
from engine.cleaning.replay import apply_steps
from engine.cleaning.settings import CleaningSettings
from engine.cleaning.steps import CleaningStep
from engine.meter_labels import naming_progress
from engine.meters import MeterSeries
from engine.progress import Progress, step
from engine.project import Project
from engine.steps.labels import meter_labels
from engine.steps.site_calendar import stored_calendar
from engine.steps.site_weather import site_temperatures
from engine.weather import fill_hourly


@dataclass
class MeterReview:
    """A meter's cleaned series as logged so far, and what the detectors still find in it."""

    meter: MeterSeries
    cleaned: CleanedSeries
    findings: list[Finding]
    steps: list[dict]  # the active logged steps, with their ids

    def quality(self) -> dict:
        return quality_summary(self.meter.values, self.cleaned)


def cleaned_meter(project: Project, name: str) -> tuple[MeterSeries, CleanedSeries]:
    """The raw meter and its cleaned series replayed from the project's active steps (with
    its campus calendar, which fills follow)."""
    meter = project.load_meter(name)
    steps = [CleaningStep.from_dict(s) for s in project.cleaning_steps(name)]
    cleaned = apply_steps(
        meter.values,
        steps,
        interval=meter.interval,
        timezone=meter.timezone,
        calendar=stored_calendar(project),
    )
    return meter, cleaned


def rescale_after_shift(
    project: Project, review: MeterReview, finding: Finding, factor: float
) -> int:
    """Log the step that multiplies the readings from ``finding``'s level shift to the meter's
    last reading by ``factor`` (its multiplier or unit changed); the step's id."""
    return project.add_cleaning_step(rescaled_step(finding, review.cleaned, factor).to_dict())


@dataclass(frozen=True)
class SiteDrivers:
    """What every meter of a project is judged with: the campus calendar and the weather
    (hourly °C, short gaps filled), each None when the project has none. Read once for a run
    over many meters."""

    calendar: CampusCalendar | None
    temperatures: pd.Series | None

    @classmethod
    def of(cls, project: Project) -> SiteDrivers:
        """The project's stored calendar and its site's temperatures (several stations
        combined, :func:`engine.steps.site_weather.site_temperatures`)."""
        temperatures = site_temperatures(project)
        hourly = None if temperatures is None else fill_hourly(temperatures).hourly
        return cls(stored_calendar(project), hourly)


def review_meter(
    project: Project,
    name: str,
    settings: CleaningSettings | None = None,
    progress: Progress | None = None,
    *,
    drivers: SiteDrivers | None = None,
) -> MeterReview:
    """Replay the log, then run every detector on the result (what is still to be done).

    The detectors get the project's campus calendar when it has one, so holidays, breaks and
    closures are compared with days of their own kind, and its weather when it has some, so a
    weather-driven meter is judged against the temperature (``drivers``: as read once for
    many meters; read here when not given).
    """
    progress = naming_progress(progress, meter_labels(project))
    drivers = drivers if drivers is not None else SiteDrivers.of(project)
    meter, cleaned = cleaned_meter(project, name)
    current = replace(meter, values=cleaned.values.dropna())
    findings = find_all(
        current,
        settings,
        progress,
        calendar=drivers.calendar,
        temperatures=drivers.temperatures,
    )
    raw = project.load_raw(name)
    if project.meter_settings(name).get("value_kind", "interval") == "interval":
        findings = find_clock_problems(raw[["t", "raw_value"]], meter.timezone, name) + findings
    steps = project.cleaning_steps(name)
    accepted = {s["params"].get("finding") for s in steps if s["kind"] == "accept"}
    findings = [finding for finding in findings if finding.id not in accepted]
    return MeterReview(meter, cleaned, findings, steps)


def apply_recommended(project: Project, review: MeterReview) -> list[int]:
    """Log the recommended fixes of ``review`` in one save; return the new step ids."""
    with project.transaction():
        return [
            project.add_cleaning_step(step.to_dict()) for step in recommended_steps(review.findings)
        ]


def apply_recommended_everywhere(
    project: Project, names: list[str] | None = None, progress: Progress | None = None
) -> dict[str, list[int]]:
    """Review each meter (all of them by default) and log its recommended fixes, every meter
    in one save; the new step ids by meter."""
    names = project.meter_names() if names is None else names
    progress = naming_progress(progress, meter_labels(project))
    drivers = SiteDrivers.of(project)
    applied: dict[str, list[int]] = {}
    with project.transaction():
        for number, name in enumerate(names):
            step(progress, number / max(len(names), 1), f"reviewing '{name}'")
            review = review_meter(project, name, drivers=drivers)
            applied[name] = apply_recommended(project, review)
    step(progress, 1.0, "recommended fixes logged")
    return applied
