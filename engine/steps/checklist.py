"""Where a project stands on the way to a budget: what each step found and what to do next.

The window shows it beside the steps so a first-time user always sees the one next thing to
do. Only cheap facts of the project file are read (meter names, logged steps, stored models
and budgets), so it can be asked on every change of step.
"""

from __future__ import annotations

from dataclasses import dataclass

from engine.project import Project
from engine.words import counted


@dataclass(frozen=True)
class StepState:
    """One step of the path: whether it is ``done``, what it ``found`` and the ``next`` thing."""

    step: str
    done: bool
    found: str
    next: str


def checklist(project: Project | None) -> list[StepState]:
    """The state of each step (Files, Cleaning, Patterns, Models, Budget, Export, Track)."""
    if project is None:
        return [
            StepState(
                "Files",
                False,
                "No project is open.",
                "Add your meter exports (and weather, calendar, bills), then create a project.",
            ),
            *(
                StepState(step, False, "", "Open or create a project first.")
                for step in ("Cleaning", "Patterns", "Models", "Budget", "Export", "Track")
            ),
        ]
    meters = project.meter_names()
    steps = project.cleaning_steps()
    models = project.result_counts("model")
    modelled = [name for name in meters if models.get(name)]
    budgets = sum(project.result_counts("budget").values())
    adopted = project.adopted_budget_names()
    missing = len(meters) - len(modelled)
    return [
        StepState(
            "Files",
            bool(meters),
            f"{counted(len(meters), 'meter')} in the project.",
            "Review the readings on the Cleaning step.",
        ),
        StepState(
            "Cleaning",
            bool(steps),
            f"{counted(len(steps), 'cleaning step')} logged.",
            "Review each meter's findings; 'Apply all recommended' logs the safe fixes."
            if not steps
            else "Look at the patterns, or go on to the models.",
        ),
        StepState(
            "Patterns",
            bool(meters),
            "Typical days, seasons and weather response.",
            "Optional: check each meter's shape, then fit models.",
        ),
        StepState(
            "Models",
            bool(meters) and missing == 0,
            f"{len(modelled)} of {counted(len(meters), 'meter')} "
            f"{'has' if len(modelled) == 1 else 'have'} a chosen model.",
            f"Fit and compare the {counted(missing, 'meter')} without one (or let the budget "
            "fit the default models)."
            if missing
            else "Budget the next month, quarter or fiscal year.",
        ),
        StepState(
            "Budget",
            bool(budgets),
            f"{counted(budgets, 'budget')} kept in the project.",
            "Choose the period and press 'Budget'."
            if not budgets
            else "Write it for finance; adopt it ('Adopt…') to track the year against it.",
        ),
        StepState("Export", False, "", "Write the finance workbook."),
        _track_state(adopted),
    ]


def _track_state(adopted: list[str]) -> StepState:
    """Tracking needs an adopted budget; it keeps nothing, so the step is never ticked."""
    if not adopted:
        return StepState(
            "Track",
            False,
            "No budget adopted yet: nothing to track.",
            "Adopt a budget on the Budget step ('Adopt…'), then track it here.",
        )
    return StepState(
        "Track",
        False,
        f"{counted(len(adopted), 'adopted budget')}: {', '.join(adopted)}.",
        "Choose the budget and the readings' date, then press 'Track'.",
    )
