"""Header words the importer recognises, in the languages meter exports commonly use.

Matching is on lower-cased header text; each tuple lists whole words or word stems.
"""

from __future__ import annotations

import re

TIME_WORDS = (
    "timestamp", "time", "date", "datetime", "read date", "reading time", "interval",
    "zeitstempel", "datum", "zeit", "uhrzeit", "fecha", "hora", "horodatage", "heure",
    "ora", "tijd", "tid", "dato", "aika", "period ending", "period end", "observation",
)  # fmt: skip
CLOCK_WORDS = ("time", "hour", "zeit", "uhrzeit", "hora", "heure", "ora", "tijd", "tid")
DATE_ONLY_WORDS = ("date", "datum", "fecha", "dato", "day", "tag", "día", "jour")
METER_WORDS = (
    "meter", "point", "channel", "device", "sensor", "name", "id", "building",
    "zähler", "zaehler", "messpunkt", "medidor", "contador", "compteur", "contatore", "meter id",
)  # fmt: skip
UNIT_COLUMN_WORDS = ("unit", "units", "uom", "einheit", "unidad", "unité", "unità")
REGISTER_WORDS = (
    "register", "reading", "cumulative", "index", "odometer", "meter read",
    "zählerstand", "zaehlerstand", "lectura", "relevé", "lettura", "totaliser",
    "totalizer",
)  # fmt: skip
TEMPERATURE_WORDS = (
    "temp", "temperature", "dry bulb", "drybulb", "dry-bulb", "oat", "outdoor air",
    "temperatur", "temperatura", "température", "lufttemperatur",
)  # fmt: skip
MAX_WORDS = ("max", "high", "maximum", "höchst", "máx")
MIN_WORDS = ("min", "low", "minimum", "tiefst", "mín")
PERIOD_START_WORDS = ("from", "start", "begin", "service from", "von", "desde", "du", "inicio")
PERIOD_END_WORDS = ("to", "end", "through", "thru", "until", "bis", "hasta", "au", "fin")
COST_WORDS = (
    "cost", "amount", "charge", "charges", "total", "bill", "$", "€", "£", "kosten",
    "betrag", "importe", "coste", "montant", "costo",
)  # fmt: skip
DEMAND_WORDS = ("demand", "peak", "max demand", "leistung", "demanda", "puissance")
UTILITY_WORDS = {
    "natural_gas": ("gas", "erdgas", "gaz"),
    "chilled_water": ("chilled", "chw", "cooling water", "kälte", "kaltwasser"),
    "steam": ("steam", "dampf", "vapor", "vapeur"),
    "hot_water": ("hot water", "hhw", "heating water", "fernwärme", "district heat"),
    "electricity": ("electric", "elec", "power", "strom", "electricidad", "électricité"),
}


def has_word(text: str, words: tuple[str, ...]) -> bool:
    """Whether ``text`` contains any of ``words`` as a whole word (case-insensitive)."""
    lowered = text.lower()
    return any(re.search(rf"(?<![a-zäöüéèáíóúà]){re.escape(w)}(?![a-zäöüéèáíóúà])", lowered)
               for w in words)  # fmt: skip


def utility_from_text(text: str) -> str | None:
    """The utility a header or file name names, if any."""
    for utility, words in UTILITY_WORDS.items():
        if has_word(text, words):
            return utility
    return None


GENERIC_VALUE_NAMES = (
    "reading", "meter reading", "readings", "usage", "consumption", "value", "values", "energy",
    "demand", "load", "kwh", "register", "total", "verbrauch", "zählerstand", "consumo",
    "lectura", "consommation", "ton-hours", "quantity",
)  # fmt: skip
