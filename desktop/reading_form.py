"""The reading settings of one file, where the user corrects what the importer decided."""

from __future__ import annotations

from PySide6.QtCore import Signal
from PySide6.QtWidgets import QFormLayout, QGroupBox, QLabel, QLineEdit, QPushButton, QWidget

from desktop.choices import ChoiceBox, ZoneBox
from engine.meters import UTILITIES
from engine.reading import ReadOptions
from engine.units import UNITS

DECIDE = "decide from the file"

DATE_ORDERS = (
    (DECIDE, None),
    ("day first (31/01/2025)", True),
    ("month first (01/31/2025)", False),
)
STAMP_MARKS = ((DECIDE, None), ("start of the interval", "start"), ("end of the interval", "end"))
VALUE_KINDS = (
    (DECIDE, None),
    ("energy in each interval", "interval"),
    ("register reads (running total)", "register"),
)
METER_UNITS = (
    (DECIDE, None),
    *((name, name) for name, unit in UNITS.items() if unit.kind != "temperature"),
)
TEMPERATURE_UNITS = ((DECIDE, None), ("°C", "°C"), ("°F", "°F"))
UTILITY_NAMES = ((DECIDE, None), *((name.replace("_", " "), name) for name in UTILITIES))


class ReadingForm(QGroupBox):
    """Edits a :class:`~engine.reading.ReadOptions`; "Read again" asks for a new read."""

    read_again = Signal()

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__("How to read the chosen file", parent)
        self.zone = ZoneBox("same as the site")
        self.date_order = ChoiceBox(DATE_ORDERS)
        self.stamps = ChoiceBox(STAMP_MARKS)
        self.unit = ChoiceBox(METER_UNITS)
        self.utility = ChoiceBox(UTILITY_NAMES)
        self.values = ChoiceBox(VALUE_KINDS)
        self.temperature_unit = ChoiceBox(TEMPERATURE_UNITS)
        self.sheet = QLineEdit()
        self.sheet.setPlaceholderText("the sheet holding the readings")
        self.date_label = QLabel("Dates")
        self.read_button = QPushButton("Read again with these settings")
        self.read_button.clicked.connect(self.read_again)
        form = QFormLayout(self)
        form.addRow("Time zone of the stamps", self.zone)
        form.addRow(self.date_label, self.date_order)
        form.addRow("Each stamp marks the", self.stamps)
        form.addRow("Values are", self.values)
        form.addRow("Unit", self.unit)
        form.addRow("Utility", self.utility)
        form.addRow("Temperature unit", self.temperature_unit)
        form.addRow("Sheet", self.sheet)
        form.addRow(self.read_button)
        self.setEnabled(False)

    def show_options(self, options: ReadOptions) -> None:
        """Fill the form from ``options``."""
        self.zone.set_zone(options.timezone)
        self.date_order.set_value(options.dayfirst)
        self.stamps.set_value(options.stamps)
        self.unit.set_value(options.unit)
        self.utility.set_value(options.utility)
        self.values.set_value(options.values)
        self.temperature_unit.set_value(options.temperature_unit)
        self.sheet.setText(options.sheet or "")
        self.setEnabled(True)

    def ask_for_date_order(self, asked: bool) -> None:
        """Draw the eye to the date order when the importer could not settle it."""
        self.date_label.setText("<b>Dates: choose the order</b>" if asked else "Dates")

    def options(self) -> ReadOptions:
        """The settings as the form shows them."""
        return ReadOptions(
            timezone=self.zone.zone(),
            dayfirst=self.date_order.value(),
            stamps=self.stamps.value(),
            sheet=self.sheet.text().strip() or None,
            unit=self.unit.value(),
            utility=self.utility.value(),
            values=self.values.value(),
            temperature_unit=self.temperature_unit.value(),
        )
