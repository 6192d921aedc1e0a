"""How the time-of-week-and-temperature regression is fitted: on a history, or many windows of it.

The least squares has one coefficient per (occupancy mode, time-of-week slot) group and one
slope per (mode, temperature segment). Sweeping out the group coefficients leaves normal
equations of only ``2 × (knots + 1)`` unknowns, and every number in them is a sum over the
rows: with knots ``B`` a temperature ``T`` in the bin between two knots has segments
``a + d·e`` (full widths of the segments below its bin, ``d = T − B`` in its own segment,
nothing above), so counts and the sums of ``d``, ``d²``, ``y`` and ``d·y`` per (cell, bin)
give every product of the design (a cell is a slot and, with calendar labels, the labels'
occupancy). The swept Gram matrix of a mode is ``Σ x xᵀ − Σ_groups S Sᵀ / n`` with ``S`` a
group's sum of ``x``; the slot coefficients are each group's mean of ``y − x·β``.

A backtest or a budget fits the model before each of many monthly cuts of one history:
:class:`WeekHistory` finds the local clock, the slot of every interval, the labels'
occupancy and which rows are usable once, and a window is the history's first usable rows.
The knots move with each window (they sit between quantiles of its own temperatures), so its
binned sums are taken afresh: one pass of counting over its rows, with no design matrix and
no large solve. What each window decides for itself, exactly as a fit on it alone: the
quantiles and knots, and with the data rule which slots are occupied. A test checks the
results equal fits from scratch, and another checks one fit against an ordinary least squares
on the explicit design.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models._inputs import (
    energy_values,
    labels_of,
    local_clock,
    require_interval_data,
    require_intervals,
    require_known_energy,
    step_of,
    temperature_values,
)
from engine.models.base import ModelInputs

if TYPE_CHECKING:
    from engine.models.time_of_week import TimeOfWeekTemperatureModel

WEEK = pd.Timedelta(weeks=1)
#: Occupancy modes: rows of the slot and temperature coefficients.
UNOCCUPIED, OCCUPIED = 0, 1
_MODES = 2


def slot_of_week(local: pd.DatetimeIndex, step: pd.Timedelta) -> np.ndarray:
    """Time-of-week slot of each local interval start (0 = Monday 00:00)."""
    since_monday = (local - local.normalize()) + pd.to_timedelta(local.day_of_week, unit="D")
    return np.asarray(since_monday // step, dtype=np.int64)


def temperature_segments(temps: np.ndarray, knots: np.ndarray) -> np.ndarray:
    """The piecewise-linear temperature components (one column more than knots); rows add to T."""
    lower = np.concatenate(([-np.inf], knots))
    upper = np.concatenate((knots, [np.inf]))
    segments = np.clip(np.asarray(temps, dtype=float)[:, None], lower, upper)
    segments[:, 1:] -= knots
    return segments


@dataclass(frozen=True)
class WeekFit:
    """What one fit learned: the model's fitted attributes."""

    interval: pd.Timedelta
    uses_temperature: bool
    occupancy_source: str
    knots: np.ndarray
    slot_coefficients: np.ndarray
    temperature_coefficients: np.ndarray
    occupied_slots: np.ndarray | None
    n_parameters: int


class WeekHistory:
    """One history's usable rows (energy, and temperature when given) in time order, with
    their slots and labelled occupancy, shared by the fits of its windows."""

    def __init__(self, model: TimeOfWeekTemperatureModel, inputs: ModelInputs) -> None:
        self.model = model
        self.step = step_of(inputs)
        require_interval_data(self.step, model.label)
        self.slots = int(WEEK // self.step)
        energy = energy_values(inputs, minimum=self.slots)
        temperature = temperature_values(inputs)
        usable = np.isfinite(energy)
        if temperature is not None:
            usable &= np.isfinite(temperature)
        self.source = model.occupancy
        if self.source == "auto":
            self.source = "labels" if inputs.labels is not None else "data"
        self.index = inputs.index
        self._known = np.concatenate([[0], np.cumsum(np.isfinite(energy))])
        self._times = inputs.index[usable]
        self.y = energy[usable]
        self.temps = None if temperature is None else temperature[usable]
        self.slot = slot_of_week(local_clock(inputs), self.step)[usable]
        # A cell is a slot and, when the labels decide, their occupancy.
        self.cell = self.slot
        if self.source == "labels":
            occupied = labels_of(inputs)["occupied"].to_numpy(dtype=bool)[usable]
            self.cell = occupied.astype(np.int64) * self.slots + self.slot

    def solve(self, cut: pd.Timestamp | None) -> WeekFit:
        """The fit of the usable rows before ``cut`` (UTC; None for all of them)."""
        rows = len(self.y)
        if cut is not None:
            before = int(self.index.searchsorted(cut))
            require_intervals(before)
            require_known_energy(int(self._known[before]), self.slots)
            rows = int(self._times.searchsorted(cut))
        y, slot, cell = self.y[:rows], self.slot[:rows], self.cell[:rows]
        temps = None if self.temps is None else self.temps[:rows]
        self._require_every_slot(slot, temps is not None)
        knots = self._knots(temps)
        if self.source == "labels":
            occupied_slots = None
            cell_mode = np.repeat([UNOCCUPIED, OCCUPIED], self.slots)
        else:
            occupied_slots = self._occupied_by_residuals(y, slot, temps)
            cell_mode = occupied_slots.astype(np.int64)
        sums = _binned_sums(cell, len(cell_mode), y, temps, knots)
        count, group_y = sums[0].sum(axis=1), sums[3].sum(axis=1)
        columns = len(knots) + 1 if temps is not None else 0
        by_mode, rank = np.zeros((_MODES, 0)), 0
        group_x = np.zeros((len(count), 0))
        if temps is not None:
            group_x, gram, moment = _swept_equations(sums, cell_mode, knots)
            beta, _, rank, _ = np.linalg.lstsq(gram, moment, rcond=None)
            by_mode = beta.reshape(_MODES, columns)
        with np.errstate(invalid="ignore", divide="ignore"):
            offsets = (group_y - np.einsum("cj,cj->c", group_x, by_mode[cell_mode])) / count
        coefficients = np.full((_MODES, self.slots), np.nan)
        coefficients[cell_mode, np.arange(len(cell_mode)) % self.slots] = offsets
        return WeekFit(
            interval=self.step,
            uses_temperature=temps is not None,
            occupancy_source=self.source,
            knots=knots,
            slot_coefficients=coefficients,
            temperature_coefficients=by_mode,
            occupied_slots=occupied_slots,
            n_parameters=int(np.isfinite(offsets).sum() + rank),
        )

    def _require_every_slot(self, slot: np.ndarray, with_temperature: bool) -> None:
        seen = np.bincount(slot, minlength=self.slots) > 0
        if not seen.all():
            raise InputError(
                f"{int((~seen).sum())} of the {self.slots} times of the week have no readings"
                + (" with temperatures" if with_temperature else "")
                + "; time-of-week regression needs each at least once.",
                hint="Fit on at least a few whole weeks of readings.",
            )

    def _knots(self, temps: np.ndarray | None) -> np.ndarray:
        if temps is None:
            return np.zeros(0)
        low, high = np.quantile(temps, self.model.knot_quantiles)
        if not high > low:
            raise InputError(
                f"the fit window's temperatures hardly vary ({low:.1f} to {high:.1f} °C), "
                "so no temperature knots can be placed.",
                hint="Fit on a longer window with a range of weather, or without temperature.",
            )
        return np.linspace(low, high, self.model.knots)

    def _occupied_by_residuals(
        self, y: np.ndarray, slot: np.ndarray, temps: np.ndarray | None
    ) -> np.ndarray:
        """The data rule: slots whose residual from a plain temperature line is mostly positive."""
        if temps is None:
            residual = y - y.mean()
        else:
            line = np.column_stack([np.ones_like(temps), temps])
            residual = y - line @ np.linalg.lstsq(line, y, rcond=None)[0]
        positive = np.bincount(slot, weights=residual > 0, minlength=self.slots)
        share = positive / np.bincount(slot, minlength=self.slots)
        return share > self.model.occupied_share


def _binned_sums(
    cell: np.ndarray, cells: int, y: np.ndarray, temps: np.ndarray | None, knots: np.ndarray
) -> np.ndarray:
    """Count and sums of ``d``, ``d²``, ``y`` and ``d·y`` per (cell, temperature bin), shape
    5 × cells × bins, where a row's bin is how many knots lie below its temperature and ``d``
    its temperature less the knot below (its own temperature in the lowest bin)."""
    bins = len(knots) + 1
    if temps is None:
        key, d = cell, np.zeros(len(cell))
    else:
        in_bin = np.searchsorted(knots, temps, side="left")
        key = cell * bins + in_bin
        d = temps - np.concatenate(([0.0], knots))[in_bin]
    size = cells * bins
    weights = (None, d, d * d, y, d * y)
    sums = [np.bincount(key, weights=w, minlength=size) for w in weights]
    return np.array(sums, dtype=float).reshape(5, cells, bins)


def _swept_equations(
    sums: np.ndarray, cell_mode: np.ndarray, knots: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The normal equations of the segment slopes with the group coefficients swept out.

    Returns each cell's sum of its segments, and the Gram matrix and right-hand side (the
    modes' columns side by side). A row in bin ``i`` has segments ``base[i] + d·e_i``, with
    ``base[i]`` the segments at the knot below the bin (zero in the lowest bin).
    """
    count_bins, d = sums[0], sums[1]
    count, group_y = count_bins.sum(axis=1), sums[3].sum(axis=1)
    base = np.vstack([np.zeros(len(knots) + 1), temperature_segments(knots, knots)])
    group_x = count_bins @ base + d
    columns = base.shape[1]
    gram = np.zeros((_MODES * columns, _MODES * columns))
    moment = np.zeros(_MODES * columns)
    for mode in (UNOCCUPIED, OCCUPIED):
        cells = cell_mode == mode
        n, sd, sdd, sy, sdy = (part[cells].sum(axis=0) for part in sums)
        cross = base.T * sd
        block = base.T @ (n[:, None] * base) + cross + cross.T + np.diag(sdd)
        right = base.T @ sy + sdy
        groups = cells & (count > 0)
        block -= (group_x[groups].T / count[groups]) @ group_x[groups]
        right -= group_x[groups].T @ (group_y[groups] / count[groups])
        at = slice(mode * columns, (mode + 1) * columns)
        gram[at, at], moment[at] = block, right
    return group_x, gram, moment
