"""Loadledger's own colours: one place for every colour the window draws with."""

from __future__ import annotations

import pyqtgraph as pg

#: Plot background, axis ink and grid.
PAPER = "#fbfaf7"
INK = "#2b2f36"

#: Series colours that stay apart for the common colour-vision deficiencies when paired.
DAY_TYPE_COLOURS = {
    "weekday": "#1f5f8b",
    "saturday": "#d08c2f",
    "sunday": "#7a4e9c",
    "holiday": "#2e8b57",
}
SEASON_COLOURS = {
    "winter": "#35618f",
    "spring": "#5f9a46",
    "summer": "#d9822b",
    "autumn": "#9c4f2f",
}
SERIES_CYCLE = ("#1f5f8b", "#d08c2f", "#2e8b57", "#7a4e9c", "#b23a48", "#4b8f8c", "#8c7a3a")
FIT_LINE = "#b23a48"

#: Notice tones: background, border.
TONES = {
    "problem": ("#fbe6dc", "#b5542c"),
    "info": ("#e6eef4", "#4f7594"),
    "done": ("#e5f1e3", "#4d8a48"),
}

#: The heat map runs from a deep slate at little use through teal and amber to a pale cream.
HEAT_STOPS = ((0.0, "#1d2b3f"), (0.35, "#2f7072"), (0.7, "#e0a458"), (1.0, "#fff4d8"))


def series_colour(name: str, position: int) -> str:
    """A group's own colour when it has one, else the ``position``-th of the cycle."""
    known = DAY_TYPE_COLOURS.get(name) or SEASON_COLOURS.get(name)
    return known or SERIES_CYCLE[position % len(SERIES_CYCLE)]


def heat_colour_map() -> pg.ColorMap:
    """The heat map's colour map (:data:`HEAT_STOPS`)."""
    positions = [stop for stop, _ in HEAT_STOPS]
    colours = [colour for _, colour in HEAT_STOPS]
    return pg.ColorMap(positions, colours, name="loadledger-heat")
