"""A job for worker processes that imports nothing of the engine, so that a worker which has
the modelling code imported got it from the server it was forked from (``test_parallel``)."""

from __future__ import annotations

import sys
from dataclasses import dataclass


@dataclass(frozen=True)
class ProbeJob:
    name: str
    size: int = 1


def modelling_code_imported(job: ProbeJob, progress: object = None) -> bool:
    """Whether this process had the fit wizard imported before the job arrived."""
    return "engine.wizard" in sys.modules
