"""The public holidays a campus calendar takes: a country and, where it has them, a region.

The choice is the reading setting ``ReadOptions.holidays`` ("US", "US-IL" or None), the same
text the command line's ``--holidays`` takes; the lists come from the engine.
"""

from __future__ import annotations

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QHBoxLayout, QWidget

from desktop.choices import ChoiceBox
from engine.calendar import holiday_countries, holiday_subdivisions

NO_HOLIDAYS = "no public holidays"
WHOLE_COUNTRY = "the whole country"


class HolidayPicker(QWidget):
    """A country box and a region box; ``chosen`` carries the new code (or None)."""

    chosen = Signal(object)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        countries = [(f"{name} ({code})", code) for code, name in holiday_countries().items()]
        self.country = ChoiceBox(((NO_HOLIDAYS, None), *countries))
        self.country.setMaximumWidth(260)
        self.region = ChoiceBox(((WHOLE_COUNTRY, None),))
        self.region.setMaximumWidth(220)
        self.country.activated.connect(self._country_picked)
        self.region.activated.connect(lambda _position: self.chosen.emit(self.code()))
        layout = QHBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.country)
        layout.addWidget(self.region)
        self._fill_regions()

    def code(self) -> str | None:
        """ "US-IL", "US" or None, as the reading settings take it."""
        country, region = self.country.value(), self.region.value()
        if country is None:
            return None
        return f"{country}-{region}" if region else country

    def choose(self, country: str | None, region: str | None = None) -> None:
        """Pick ``country`` and ``region`` (None: none, the whole country) as the user would."""
        self.country.set_value(country)
        self._fill_regions()
        self.region.set_value(region)
        self.chosen.emit(self.code())

    def _country_picked(self, _position: int) -> None:
        self._fill_regions()
        self.chosen.emit(self.code())

    def _fill_regions(self) -> None:
        country = self.country.value()
        regions = holiday_subdivisions(country) if country else {}
        self.region.clear()
        self.region.addItem(WHOLE_COUNTRY, None)
        for code, name in regions.items():
            self.region.addItem(name if name == code else f"{name} ({code})", code)
        self.region.setEnabled(bool(regions))
