"""What the window remembers between runs: its size and layout, the recent projects and the
folder each kind of file dialog was last pointed at.

Everything lives in one INI file of the user's (``QSettings`` with our own organisation and
application names), so a person can read or delete it; tests point ``QSettings.setPath`` at a
temporary folder.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QSettings

ORGANISATION = "Loadledger"
APPLICATION = "Loadledger window"
RECENT_KEY = "recent/projects"
RECENT_LIMIT = 8


def stored_settings() -> QSettings:
    """The user's settings file for the window (INI format, user scope)."""
    return QSettings(
        QSettings.Format.IniFormat, QSettings.Scope.UserScope, ORGANISATION, APPLICATION
    )


def _text_list(settings: QSettings, key: str) -> list[str]:
    """A stored list of text; INI files give a lone entry back as text, not a list."""
    value = settings.value(key, [])
    if isinstance(value, str):
        return [value] if value else []
    return [str(item) for item in value or []]


class RecentProjects:
    """The project files opened last, newest first, at most :data:`RECENT_LIMIT`."""

    def __init__(self, settings: QSettings) -> None:
        self.settings = settings

    def paths(self) -> list[Path]:
        """The remembered files, newest first (missing ones included: see :meth:`drop_missing`)."""
        return [Path(text) for text in _text_list(self.settings, RECENT_KEY)]

    def remember(self, path: str | Path) -> None:
        """Put ``path`` first, once, dropping the oldest beyond the limit."""
        first = Path(path).absolute()
        kept = [first] + [p for p in self.paths() if p != first]
        self._store(kept[:RECENT_LIMIT])

    def forget(self, path: str | Path) -> None:
        """Take ``path`` off the list."""
        gone = Path(path).absolute()
        self._store([p for p in self.paths() if p != gone])

    def drop_missing(self) -> list[Path]:
        """Take files that no longer exist off the list; the ones taken off."""
        paths = self.paths()
        missing = [p for p in paths if not p.is_file()]
        if missing:
            self._store([p for p in paths if p not in missing])
        return missing

    def _store(self, paths: list[Path]) -> None:
        self.settings.setValue(RECENT_KEY, [str(p) for p in paths])


def last_folder(settings: QSettings, purpose: str) -> str:
    """The folder the dialog for ``purpose`` last chose in ("" before the first time)."""
    folder = str(settings.value(f"folders/{purpose}", ""))
    return folder if folder and Path(folder).is_dir() else ""


def remember_folder(settings: QSettings, purpose: str, chosen: str | Path) -> None:
    """Remember the folder of the file ``chosen`` for the next dialog for ``purpose``."""
    settings.setValue(f"folders/{purpose}", str(Path(chosen).absolute().parent))
