"""Drop-down lists whose entries carry the engine value behind the words shown."""

from __future__ import annotations

import zoneinfo
from collections.abc import Sequence
from functools import cache
from typing import Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QComboBox, QCompleter, QWidget

Choice = tuple[str, Any]


class ChoiceBox(QComboBox):
    """A combo box of (words, value) pairs; ``value()`` is the value of the chosen words."""

    def __init__(self, choices: Sequence[Choice], parent: QWidget | None = None) -> None:
        super().__init__(parent)
        for words, value in choices:
            self.addItem(words, value)

    def value(self) -> Any:
        return self.currentData()

    def set_value(self, value: Any) -> None:
        """Choose the entry holding ``value``; the first entry when none holds it."""
        position = next((i for i in range(self.count()) if self.itemData(i) == value), 0)
        self.setCurrentIndex(position)


@cache
def zone_names() -> tuple[str, ...]:
    """IANA zone names for places (Region/City) with UTC first; legacy aliases left out."""
    legacy = (
        "Etc/",
        "SystemV/",
        "posix/",
        "right/",
        "US/",
        "Canada/",
        "Mexico/",
        "Brazil/",
        "Chile/",
    )
    places = sorted(
        name
        for name in zoneinfo.available_timezones()
        if "/" in name and not name.startswith(legacy)
    )
    return ("UTC", *places)


class ZoneBox(QComboBox):
    """An IANA time zone, typed with completion or picked from the list.

    ``blank`` is the words of the first entry, which stands for "no zone chosen" (None).
    ``zone_chosen`` carries the new zone (or None) when the user picks or types another one.
    """

    zone_chosen = Signal(object)

    def __init__(self, blank: str, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.blank = blank
        self.setEditable(True)
        self.setInsertPolicy(QComboBox.InsertPolicy.NoInsert)
        self.addItem(blank)
        self.addItems(list(zone_names()))
        completer = QCompleter(list(zone_names()), self)
        completer.setFilterMode(Qt.MatchFlag.MatchContains)
        completer.setCaseSensitivity(Qt.CaseSensitivity.CaseInsensitive)
        self.setCompleter(completer)
        self.setMinimumContentsLength(22)
        self._shown: str | None = None
        self.activated.connect(self._user_changed)
        self.lineEdit().editingFinished.connect(self._user_changed)

    def zone(self) -> str | None:
        text = self.currentText().strip()
        return None if text in ("", self.blank) else text

    def set_zone(self, name: str | None) -> None:
        """Show ``name`` without announcing it as the user's choice."""
        self._shown = name
        self.setCurrentText(name or self.blank)

    def _user_changed(self) -> None:
        if self.zone() != self._shown:
            self._shown = self.zone()
            self.zone_chosen.emit(self._shown)
