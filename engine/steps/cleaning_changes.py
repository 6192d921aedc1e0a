"""Changes to a project's cleaning log that can be taken back and made again.

A change (apply a fix, accept a finding, switch or remove a step, log every recommended fix)
is recorded as the steps it touched, as stored before and after it. Taking it back stores the
"before" rows again (same ids, places and times), making it again stores the "after" rows, so
undo and redo give back exactly the log a person saw, whatever the change was.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from engine.project import Project

#: Where a step's meter sits in a stored row (see ``cleaning_table.ROW_COLUMNS``).
_METER = 1


@dataclass(frozen=True)
class LogChange:
    """The steps one change touched: each as stored before and after it (None: absent)."""

    before: Mapping[int, tuple | None]
    after: Mapping[int, tuple | None]

    @property
    def meters(self) -> tuple[str, ...]:
        """The meters whose logs the change touched, in step order."""
        rows = [row for row in (*self.before.values(), *self.after.values()) if row]
        return tuple(dict.fromkeys(row[_METER] for row in rows if row[_METER] is not None))

    def __bool__(self) -> bool:
        return bool(self.before)


def logged_change(project: Project, change: Callable[[Project], object]) -> LogChange:
    """Make ``change`` to the cleaning log and record what it did, in one save."""
    with project.transaction():
        before = project.stored_steps()
        change(project)
        after = project.stored_steps()
    touched = sorted(i for i in before.keys() | after.keys() if before.get(i) != after.get(i))
    return LogChange({i: before.get(i) for i in touched}, {i: after.get(i) for i in touched})


def take_back(project: Project, change: LogChange) -> None:
    """Undo ``change``: its steps as they were before it."""
    project.put_stored_steps(dict(change.before))


def make_again(project: Project, change: LogChange) -> None:
    """Redo ``change``: its steps as it left them."""
    project.put_stored_steps(dict(change.after))
