"""An adopted budget through its fiscal year: adopt it under a name, then track it.

Typical use::

    outcome = budget_project(project, request)
    adopt_budget(project, "FY2026", outcome, request)        # kept, never changed by later work
    report = track_budget(project, "FY2026", as_of=date(2026, 1, 15))

See :mod:`engine.tracking.track` for the variance split and its identity.
"""

from engine.tracking.adopt import adopt_budget, check_name
from engine.tracking.track import IDENTITY, track_budget

__all__ = ["IDENTITY", "adopt_budget", "check_name", "track_budget"]
