"""Turn the Budget screen's choices into an engine budget request and run it — without Qt.

The choices mirror the command line's budget options: the period through
:func:`engine.budget.budget_months`, the rest checked and read by
:func:`engine.steps.budgeting.budget_request`, so a bad file fails with the engine's own message
naming it. The run is kept in the project file as the command line keeps it.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from datetime import date

from engine.budget import budget_months
from engine.budget.periods import DEFAULT_FISCAL_START
from engine.budget.summary import PEAK_CAUTION
from engine.defaults import DEFAULT_PATHS, DEFAULT_WEATHER
from engine.errors import InputError
from engine.export.finance_workbook import DESIGN_LOAD_CAUTION
from engine.progress import Progress
from engine.project import Project
from engine.steps.adopting import adopt_budget
from engine.steps.budgeting import (
    BudgetRequest,
    ProjectBudget,
    budget_project,
    budget_request,
    keep_budget,
)

#: Budget periods the screen offers: the value behind each one's words.
PERIODS: dict[str, str] = {
    "next": "next month",
    "months": "next months",
    "quarter": "a fiscal quarter",
    "fiscal": "a fiscal year",
}
#: The weather choice that reads a temperature file instead of the project's history.
WEATHER_FILE = "file"
#: The project setting holding the Budget screen's last choices (the window's own).
FORM_SETTING = "window.budget_form"


@dataclass(frozen=True)
class BudgetChoices:
    """What the Budget screen's controls ask for.

    ``start`` ("YYYY-MM") and ``months`` serve the "next" and "months" periods;
    ``fiscal_year`` (named by the year it ends in), ``quarter`` and ``fiscal_start_month`` the
    "quarter" and "fiscal" ones. ``weather`` is one of :data:`WEATHER_CHOICES` or
    :data:`WEATHER_FILE` (then ``weather_file`` names the file); ``tariff_file`` may be empty.
    ``scheduler`` is the address of a Dask scheduler to model the meters on; empty: this
    computer's cores.
    """

    period: str
    as_of: date
    start: str
    months: int = 1
    fiscal_year: int = 0
    quarter: int = 1
    fiscal_start_month: int = DEFAULT_FISCAL_START
    weather: str = DEFAULT_WEATHER
    weather_file: str = ""
    tariff_file: str = ""
    paths: int = DEFAULT_PATHS
    scheduler: str = ""


def choices_setting(choices: BudgetChoices) -> dict:
    """The choices as a JSON setting."""
    return {**asdict(choices), "as_of": choices.as_of.isoformat()}


def kept_choices(project: Project) -> BudgetChoices | None:
    """The choices of the project's last budget from this window; None when there are none
    (or they were kept in a shape this version does not know, when the defaults serve)."""
    stored = project.get_setting(FORM_SETTING)
    try:
        return BudgetChoices(**{**stored, "as_of": date.fromisoformat(stored["as_of"])})
    except (KeyError, TypeError, ValueError):
        return None


def period_months(choices: BudgetChoices) -> list[str]:
    """The budget months the choices describe (the engine checks them)."""
    if choices.period == "next":
        return budget_months(start=choices.start, months=1)
    if choices.period == "months":
        return budget_months(start=choices.start, months=choices.months)
    quarter = choices.quarter if choices.period == "quarter" else None
    return budget_months(
        fiscal_year=choices.fiscal_year,
        fiscal_start_month=choices.fiscal_start_month,
        quarter=quarter,
    )


def request_for(project: Project, choices: BudgetChoices) -> BudgetRequest:
    """The engine's checked request for ``choices``; files are read now, so their problems
    show before any work starts."""
    weather = choices.weather
    if weather == WEATHER_FILE:
        if not choices.weather_file:
            raise InputError(
                "the weather assumption is a temperature file, but no file is chosen.",
                hint="Choose the file, or pick typical or past years' weather.",
            )
        weather = choices.weather_file
    return budget_request(
        project,
        period_months(choices),
        as_of=choices.as_of,
        weather=weather,
        paths=choices.paths,
        tariff_file=choices.tariff_file or None,
    )


def run_budget(
    project: Project, choices: BudgetChoices, progress: Progress | None = None
) -> ProjectBudget:
    """Budget every meter of the project; keep the run, and the choices it was run with, in
    the project file (one save)."""
    outcome = budget_project(
        project,
        request_for(project, choices),
        scheduler=choices.scheduler or None,
        progress=progress,
    )
    with project.transaction():
        keep_budget(project, outcome)
        project.set_setting(FORM_SETTING, choices_setting(choices))
    return outcome


def adopt_shown(
    project: Project,
    name: str,
    budget: ProjectBudget,
    choices: BudgetChoices,
    replace: bool = False,
    progress: Progress | None = None,
) -> str:
    """Adopt ``budget`` (run with ``choices``) under ``name``; the name as kept."""
    adopt_budget(project, name, budget, request_for(project, choices), replace=replace)
    return name.strip()


def meters_without_model(project: Project) -> list[str]:
    """Meters the budget would first have to fit a model for (with the wizard's defaults)."""
    models = project.result_counts("model")
    return [name for name in project.meter_names() if not models.get(name)]


def period_words(budget: ProjectBudget) -> str:
    """The budget's months in words: "2026-11" or "2026-11 to 2027-01"."""
    months = budget.run.months
    return months[0] if len(months) == 1 else f"{months[0]} to {months[-1]}"


def budget_cautions(budget: ProjectBudget) -> list[str]:
    """The run's own cautions, which include that a forecast is not a design load; a budget
    kept before every run said so gets the caution here."""
    cautions = list(budget.run.cautions)
    if PEAK_CAUTION not in cautions:
        cautions.append(DESIGN_LOAD_CAUTION)
    return cautions
