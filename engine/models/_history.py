"""The past a forecasting benchmark works from: stored with the model, gaps bridged honestly.

Recursive benchmarks (seasonal naive, ETS, SARIMA, MSTL) forecast from their own history, so
they keep it: :class:`StoredSeries` is a regular series saved as plain numbers. ETS and MSTL
cannot skip missing values, so :func:`bridged_stretch` keeps the part of the history after
its last long gap and fills the short gaps left in it, from the same point one season earlier
where there is one and by linear interpolation otherwise.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models._family import float_array, float_list

#: Seasons back that a missing value may be copied from before interpolation takes over.
_SEASONS_BACK = 3


@dataclass(frozen=True)
class StoredSeries:
    """A regular series: first time stamp, fixed pandas frequency ("h", "D" …) and values."""

    start: pd.Timestamp
    freq: str
    values: np.ndarray

    @property
    def index(self) -> pd.DatetimeIndex:
        return pd.date_range(self.start, periods=len(self.values), freq=self.freq)

    def positions(self, stamps: pd.DatetimeIndex) -> np.ndarray:
        """Whole steps from the start to each stamp (negative before it); raises off the grid."""
        step = pd.Timedelta(pd.tseries.frequencies.to_offset(self.freq))
        steps = np.asarray((stamps - self.start) / step, dtype=float)
        if np.any(steps != np.round(steps)):
            raise InputError(
                "the times to predict are not on the grid of the model's history.",
                hint="Predict at the interval and alignment the model was fitted on.",
            )
        return steps.astype(np.int64)

    def continued(self, stamps: pd.DatetimeIndex, path: Callable[[int], np.ndarray]) -> np.ndarray:
        """Values at ``stamps`` of a model's path over and beyond the history.

        ``path(horizon)`` gives one value per history step (the in-sample fit) followed by
        ``horizon`` forecasts; it is asked for just enough steps to reach the last stamp.
        """
        positions = self.positions(stamps)
        if positions.min() < 0:
            raise InputError(
                f"the model's history starts {self.start:%Y-%m-%d %H:%M}; it cannot predict "
                f"{stamps[positions.argmin()]:%Y-%m-%d %H:%M}, which is earlier.",
                hint="Predict the fit window or later, or fit on a window that starts earlier.",
            )
        horizon = max(int(positions.max()) - len(self.values) + 1, 0)
        return np.asarray(path(horizon))[positions]

    def to_dict(self) -> dict[str, Any]:
        return {
            "start": self.start.isoformat(),
            "freq": self.freq,
            "values": float_list(self.values),
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> StoredSeries:
        return cls(pd.Timestamp(data["start"]), str(data["freq"]), float_array(data["values"]))


def bridged_stretch(
    values: np.ndarray, longest_gap: int, season: int, minimum: int, what: str
) -> tuple[int, np.ndarray]:
    """The history after its last gap longer than ``longest_gap`` steps, short gaps filled.

    Returns the position where the kept stretch starts and its filled values. Raises
    :class:`InputError` when fewer than ``minimum`` steps remain.
    """
    known = np.isfinite(values)
    if not known.any():
        raise InputError(f"there are no readings to fit the {what}.", hint="Import readings.")
    first, last = np.flatnonzero(known)[[0, -1]]
    missing = ~known[first : last + 1]
    edges = np.diff(np.concatenate(([0], missing.astype(np.int8), [0])))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    long_gaps = ends[(ends - starts) > longest_gap]
    if long_gaps.size:
        first += int(long_gaps[-1])
    kept = values[first : last + 1].astype(float)
    if len(kept) < minimum:
        raise InputError(
            f"the {what} needs at least {minimum} steps of history without long gaps; "
            f"only {len(kept)} follow the last gap longer than {longest_gap} steps.",
            hint="Fill the long gaps in the cleaning step or choose a fit window without them.",
        )
    for back in range(1, _SEASONS_BACK + 1):
        lag = back * season
        if lag >= len(kept):
            break
        earlier = np.concatenate((np.full(lag, np.nan), kept[:-lag]))
        kept = np.where(np.isnan(kept), earlier, kept)
    kept = pd.Series(kept).interpolate(limit_direction="both").to_numpy()
    return int(first), kept
