"""Track an adopted budget and write its workbook for the Track step — without Qt.

The figures are the engine's own (:func:`engine.tracking.track_budget`), and the month table
is the tracking workbook's (:func:`engine.export.tracking_workbook.month_frame`), so the step,
the workbook and ``loadledger track`` always show the same numbers under the same headers.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date
from pathlib import Path

import pandas as pd

from engine.errors import InputError
from engine.export.tracking_workbook import month_frame, write_tracking_workbook
from engine.progress import Progress
from engine.project import Project
from engine.steps.budgeting import last_reading_day
from engine.steps.tracking import NOT_BEGUN, UNDER_WAY, track_budget

#: Prefix of the headers of the month table's cost columns (the workbook's).
COST_PREFIX = "cost:"
#: Columns both halves of the month table start with.
LEAD_COLUMNS = ("month", "status")
#: How the step names the month under way: its actual is only to the as-of date.
UNDER_WAY_WORDS = "under way, incomplete"
#: Characters a suggested file name keeps; others become "-".
_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def run_tracking(
    project: Project, name: str, as_of: date, progress: Progress | None = None
) -> dict:
    """The engine's tracking report of the budget adopted as ``name`` on ``as_of``."""
    return track_budget(project, name, as_of=as_of, progress=progress)


def write_tracking(path: Path, report: dict, progress: Progress | None = None) -> Path:
    """Write ``report`` as the engine's tracking workbook at ``path``; the path written."""
    return write_tracking_workbook(path, report)


def default_as_of(project: Project) -> date | None:
    """The tracking's default as-of date: the last day with a reading, never after today
    (None without meters)."""
    try:
        return min(last_reading_day(project), date.today())
    except InputError:
        return None


def workbook_name(budget: str) -> str:
    """A file name to suggest for the tracking workbook of the budget named ``budget``."""
    return f"tracking-{_UNSAFE.sub('-', budget).strip('-') or 'budget'}.xlsx"


@dataclass(frozen=True)
class Tracked:
    """One thing the report tracks: the campus, a utility roll-up or a meter."""

    scope: str  # "campus", "utility" or "meter"
    key: str  # the meter's name or the roll-up's group
    meters: int
    group: dict  # the report's block for it

    @property
    def months(self) -> list[dict]:
        return self.group["months"]


def tracked(report: dict) -> list[Tracked]:
    """Everything the report tracks, the campus first, then utilities, then meters."""
    found = []
    if report.get("campus"):
        campus = report["campus"]
        found.append(Tracked("campus", campus["group"], len(campus["meters"]), campus))
    found += [Tracked("utility", g["group"], len(g["meters"]), g) for g in report["utilities"]]
    found += [Tracked("meter", m["name"], 1, m) for m in report["meters"]]
    return found


def levels(report: dict) -> list[str]:
    """The report's P-levels as the keys of its quantiles ("10", "50", "90")."""
    return [str(level) for level in report["levels"]]


def month_table(report: dict, item: Tracked) -> pd.DataFrame:
    """The month rows of ``item`` as the tracking workbook writes them, the month under way
    named as incomplete."""
    frame = month_frame(item.group, levels(report), report.get("currency"))
    frame["status"] = frame["status"].replace({UNDER_WAY: UNDER_WAY_WORDS})
    return frame


def split_columns(frame: pd.DataFrame) -> tuple[list[str], list[str]]:
    """The energy half and the cost half of a month table (each with the lead columns; the
    cost half empty when the budget was not priced)."""
    cost = [column for column in frame.columns if column.startswith(COST_PREFIX)]
    energy = [column for column in frame.columns if column not in cost]
    return energy, ([*LEAD_COLUMNS, *cost] if cost else [])


def not_begun(frame: pd.DataFrame) -> pd.Series:
    """Which rows of a month table are months not begun on the as-of date."""
    return frame["status"] == NOT_BEGUN


@dataclass(frozen=True)
class YearEnd:
    """The year-end outlook of one tracked thing beside its adopted total.

    ``adopted`` and ``outlook`` hold the P-levels (keys "10", "50", ...) of energy in kWh,
    ``*_cost`` the same in money where the budget was priced; ``outlook`` is None when the
    outlook could not be made (the report's cautions say why). ``over``: every month is
    complete, so the outlook is the actual.
    """

    adopted: dict[str, float]
    outlook: dict[str, float] | None
    actual_to_date: float | None
    adopted_cost: dict[str, float] | None
    outlook_cost: dict[str, float] | None
    over: bool

    @property
    def change(self) -> float | None:
        """Outlook P50 − adopted P50 in kWh."""
        return None if self.outlook is None else self.outlook["50"] - self.adopted["50"]


def year_end(item: Tracked) -> YearEnd:
    """The outlook of ``item`` beside its adopted total, as the report gives them."""
    adopted, outlook = item.group["adopted_total"], item.group.get("outlook")
    return YearEnd(
        adopted=dict(adopted["quantiles"]),
        outlook=dict(outlook["quantiles"]) if outlook else None,
        actual_to_date=outlook["actual_to_date"] if outlook else None,
        adopted_cost=_cost_levels(adopted),
        outlook_cost=_cost_levels(outlook) if outlook else None,
        over=all(month["complete"] for month in item.months),
    )


def _cost_levels(spread: dict) -> dict[str, float] | None:
    cost = spread.get("cost")
    return dict(cost["quantiles"]) if cost else None
