"""The window's state without Qt: which project is open. Screens subscribe to its changes."""

from __future__ import annotations

from collections.abc import Callable

from engine.project import Project

Listener = Callable[["Project | None"], None]


class Session:
    """Holds the open project (or None) and tells subscribers whenever it changes."""

    def __init__(self) -> None:
        self.project: Project | None = None
        self._listeners: list[Listener] = []

    def subscribe(self, listener: Listener) -> None:
        """Call ``listener(project)`` after every change of the open project."""
        self._listeners.append(listener)

    def open(self, project: Project) -> None:
        """Make ``project`` the open one, closing the one open before."""
        if self.project is not None and self.project is not project:
            self.project.close()
        self.project = project
        self._announce()

    def close(self) -> None:
        """Close the open project, if any."""
        if self.project is None:
            return
        self.project.close()
        self.project = None
        self._announce()

    def _announce(self) -> None:
        for listener in self._listeners:
            listener(self.project)
