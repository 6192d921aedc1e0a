"""Weather scenarios: the hourly temperatures each simulated path of a budget runs on.

Kept apart from :mod:`engine.budget.weather_paths`, which makes them, so that the modules
which only read scenarios (the meter grid, simulation, tracking) need not import the maker.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: The name of the one scenario of typical weather.
TYPICAL = "typical"


@dataclass(frozen=True, eq=False)
class WeatherScenarios:
    """Hourly °C per scenario on the window's hours (``hourly`` is None without weather).

    ``drawn_days`` (past years only) holds, per scenario and budget day, the past local day
    whose departures the day took (``datetime64[D]``); ``memory`` says in words whether the
    paths start from the site's recent weather anomaly (:mod:`engine.budget.weather_memory`).
    """

    names: tuple[str, ...]
    hourly: np.ndarray | None
    description: str
    drawn_days: np.ndarray | None = None
    memory: str | None = None

    @property
    def count(self) -> int:
        return len(self.names)

    @property
    def is_typical_year(self) -> bool:
        """Whether every path has the typical year's weather (no weather spread)."""
        return self.names == (TYPICAL,)
