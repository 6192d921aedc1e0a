"""Errors the user can act on.

Every problem with the user's input is raised as :class:`InputError`, which names the place
(file, sheet, row, column) and says what to do. The command line prints it as one line and
exits with status 2; the window shows it in a message box. Nothing else should reach a user
as a traceback.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class Place:
    """Where in the user's files a problem sits; every part is optional."""

    file: str | None = None
    sheet: str | None = None
    row: int | None = None
    column: str | None = None

    def describe(self) -> str:
        parts = []
        if self.file:
            parts.append(Path(self.file).name)
        if self.sheet:
            parts.append(f"sheet '{self.sheet}'")
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column:
            parts.append(f"column '{self.column}'")
        return ", ".join(parts)


class InputError(Exception):
    """A problem with the user's input, with its place and a hint on what to do."""

    def __init__(
        self,
        problem: str,
        *,
        hint: str = "",
        file: str | Path | None = None,
        sheet: str | None = None,
        row: int | None = None,
        column: str | None = None,
    ) -> None:
        self.problem = problem
        self.hint = hint
        self.place = Place(
            file=str(file) if file is not None else None, sheet=sheet, row=row, column=column
        )
        super().__init__(self.message)

    @property
    def message(self) -> str:
        where = self.place.describe()
        text = f"{where}: {self.problem}" if where else self.problem
        return f"{text} {self.hint}".strip() if self.hint else text

    def at_file(self, file: str | Path) -> InputError:
        """Return the same error with the file filled in where it was not known yet."""
        if self.place.file:
            return self
        return InputError(
            self.problem,
            hint=self.hint,
            file=file,
            sheet=self.place.sheet,
            row=self.place.row,
            column=self.place.column,
        )


class ProjectError(Exception):
    """A project file that cannot be opened or saved (damaged, too new, not a project)."""
