"""Realistic meter-data faults laid over clean interval data, with a record of each one.

Faults are specified on the site's local wall clock and applied to a wide frame of interval
energy on a UTC index of interval starts (one column per meter, as the file will show it).
Each applied fault comes back as a :class:`Fault`, the ground truth for ``faults.json``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

DESCRIPTIONS = {
    "comms_gap_with_catch_up": "The gateway lost contact; the cells are blank and the first "
    "reading after the gap holds the missed energy on top of its own.",
    "stuck_value": "The meter flat-lined: every interval repeats the last good reading.",
    "zero_run": "Meter outage: zeros recorded although the building was using energy.",
    "spike": "One interval recorded at a multiple of the true value.",
    "multiplier_change": "From this interval on the recorded values are the true values times "
    "a factor (the meter's multiplier was changed and the gateway kept the old one).",
    "missing_rows": "No rows at all in the file for this stretch.",
    "duplicate_rows": "The rows for this stretch appear twice, identically.",
    "register_rollover": "The cumulative register passed its highest reading and restarted "
    "from zero; the read on this day is lower than the day before.",
    "meter_replacement": "A new meter was fitted at the start of this day; its register "
    "starts from a small number.",
}


@dataclass(frozen=True)
class FaultSpec:
    """A fault to lay over interval data.

    ``start`` and ``end`` are naive local wall-clock times of interval starts, end exclusive;
    ``end=None`` means to the end of the data (a spike covers one interval whatever ``end``
    says). ``meters`` names columns; empty means every column (whole rows).
    """

    kind: str
    start: str
    end: str | None = None
    meters: tuple[str, ...] = ()
    factor: float = 1.0


@dataclass(frozen=True)
class Fault:
    """A fault as applied: which file and meters, which intervals (UTC, end exclusive)."""

    file: str
    kind: str
    meters: tuple[str, ...]
    start: pd.Timestamp
    end: pd.Timestamp
    detail: dict = field(default_factory=dict)

    def to_dict(self, timezone: str) -> dict:
        """Plain JSON: times as ISO 8601 local wall clock with the UTC offset."""
        return {
            "file": self.file,
            "kind": self.kind,
            "meters": list(self.meters),
            "start": self.start.tz_convert(timezone).isoformat(),
            "end": self.end.tz_convert(timezone).isoformat(),
            "description": DESCRIPTIONS[self.kind],
            **self.detail,
        }


Change = tuple[pd.DataFrame, dict]
Handler = Callable[[pd.DataFrame, np.ndarray, list[str], FaultSpec], Change]


def _comms_gap(
    frame: pd.DataFrame, inside: np.ndarray, columns: list[str], spec: FaultSpec
) -> Change:
    after = np.flatnonzero(inside)[-1] + 1
    missed = frame.loc[inside, columns].sum()
    frame.loc[inside, columns] = np.nan
    frame.iloc[after, frame.columns.get_indexer(columns)] += missed.to_numpy()
    return frame, {"missed_energy": {name: round(float(v), 3) for name, v in missed.items()}}


def _stuck(frame: pd.DataFrame, inside: np.ndarray, columns: list[str], spec: FaultSpec) -> Change:
    before = np.flatnonzero(inside)[0] - 1
    repeated = frame.iloc[before, frame.columns.get_indexer(columns)].round(3)
    frame.loc[inside, columns] = repeated.to_numpy()
    return frame, {"repeated_value": {name: float(v) for name, v in repeated.items()}}


def _zero_run(
    frame: pd.DataFrame, inside: np.ndarray, columns: list[str], spec: FaultSpec
) -> Change:
    frame.loc[inside, columns] = 0.0
    return frame, {}


def _scaled(frame: pd.DataFrame, inside: np.ndarray, columns: list[str], spec: FaultSpec) -> Change:
    frame.loc[inside, columns] = frame.loc[inside, columns] * spec.factor
    return frame, {"factor": spec.factor}


def _missing_rows(
    frame: pd.DataFrame, inside: np.ndarray, columns: list[str], spec: FaultSpec
) -> Change:
    return frame.loc[~inside], {}


def _duplicate_rows(
    frame: pd.DataFrame, inside: np.ndarray, columns: list[str], spec: FaultSpec
) -> Change:
    doubled = pd.concat([frame, frame.loc[inside]]).sort_index(kind="stable")
    return doubled, {}


HANDLERS: dict[str, Handler] = {
    "comms_gap_with_catch_up": _comms_gap,
    "stuck_value": _stuck,
    "zero_run": _zero_run,
    "spike": _scaled,
    "multiplier_change": _scaled,
    "missing_rows": _missing_rows,
    "duplicate_rows": _duplicate_rows,
}


def apply_faults(
    frame: pd.DataFrame, specs: tuple[FaultSpec, ...], timezone: str, file: str
) -> tuple[pd.DataFrame, list[Fault]]:
    """Lay ``specs`` over ``frame`` in order and record what was done.

    Parameters
    ----------
    frame : pandas.DataFrame
        Interval energy (or any per-interval values) on an evenly spaced UTC index of interval
        starts; not modified.
    specs : tuple of FaultSpec
        Non-overlapping faults whose local times are unambiguous (not in a DST change hour).
    timezone : str
        Zone of the specs' wall-clock times.
    file : str
        File name recorded with each fault.

    Returns
    -------
    (pandas.DataFrame, list of Fault)
        The faulted copy and the records, in the order given.
    """
    step = frame.index[1] - frame.index[0]
    data_end = frame.index[-1] + step
    faulted = frame.copy()
    records = []
    for spec in specs:
        start = pd.Timestamp(spec.start).tz_localize(timezone).tz_convert("UTC")
        if spec.kind == "spike":
            end = start + step
        elif spec.end is None:
            end = data_end
        else:
            end = pd.Timestamp(spec.end).tz_localize(timezone).tz_convert("UTC")
        inside = np.asarray((faulted.index >= start) & (faulted.index < end))
        if not inside.any():
            raise ValueError(f"{spec.kind} at {spec.start} falls outside the data")
        columns = list(spec.meters) or list(faulted.columns)
        faulted, detail = HANDLERS[spec.kind](faulted, inside, columns, spec)
        records.append(Fault(file, spec.kind, tuple(columns), start, end, detail))
    return faulted, records
