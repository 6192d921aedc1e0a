"""The project file: one SQLite database per project, extension ``.loadledger``.

It holds the raw readings exactly as read with their import settings, the canonical interval
energy, bills, weather, settings and the cleaning log. Saves are transactions, the format is
versioned and older files are upgraded on open; nothing is ever pickled.

Typical use (``meter`` a MeterSeries, ``raw`` its readings as read)::

    with Project.create("campus.loadledger", timezone="America/Denver") as project:
        source = project.add_source("meters", "hall.csv", settings={}, findings=[])
        project.add_meter(meter, raw, source_id=source, settings={})
"""

from engine.project.migrations import MIGRATIONS
from engine.project.project import Project
from engine.project.schema import APPLICATION_ID, FORMAT_VERSION, SOURCE_KINDS

__all__ = ["APPLICATION_ID", "FORMAT_VERSION", "MIGRATIONS", "SOURCE_KINDS", "Project"]
