"""Run every detector over a meter: the findings an energy manager reviews before cleaning."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar
from engine.cleaning.clock import find_clock_problems
from engine.cleaning.findings import Finding
from engine.cleaning.gaps import find_gaps
from engine.cleaning.level_shifts import find_level_shifts
from engine.cleaning.negatives import find_negatives
from engine.cleaning.outliers import find_spikes_and_dips
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.settings import CleaningSettings
from engine.cleaning.stuck import find_flat_lines, find_zero_runs
from engine.meters import MeterSeries
from engine.progress import Progress, step

Detector = Callable[[PreparedMeter, np.ndarray], list[Finding]]

#: Detectors in the order they run. Each marks the intervals it reports as claimed so a later
#: one does not report them again (a gap is not also a dip; a catch-up is not also a spike).
DETECTORS: tuple[tuple[str, Detector], ...] = (
    ("gaps and catch-up readings", find_gaps),
    ("negative readings and register resets", find_negatives),
    ("zero runs", find_zero_runs),
    ("flat lines", find_flat_lines),
    ("spikes and dips", find_spikes_and_dips),
    ("level shifts", find_level_shifts),
)


def find_all(
    meter: MeterSeries,
    settings: CleaningSettings | None = None,
    progress: Progress | None = None,
    *,
    calendar: CampusCalendar | None = None,
    temperatures: pd.Series | None = None,
) -> list[Finding]:
    """Every problem the detectors find in a meter's readings, in time order.

    Parameters
    ----------
    meter : MeterSeries
        The meter's canonical series. Repeated stamps are reported (as by
        :func:`engine.cleaning.clock.find_clock_problems`) and the first copy is used for the
        other detectors.
    settings : CleaningSettings, optional
        Thresholds; the defaults when not given.
    progress : Progress, optional
        Told which detector runs; cancelling stops at the next detector.
    calendar : CampusCalendar, optional
        The campus calendar. With it, readings are compared with days of the same kind (term,
        summer session, break or closure; see :mod:`engine.cleaning.like_days`), and a
        holiday, break or closure day that changed as a whole is not reported. Without it, such
        a day shows as one "low_day" finding (see :mod:`engine.cleaning.day_level`).
    temperatures : pandas.Series, optional
        The site's hourly outdoor temperatures (°C, UTC index on the hour). With them a meter
        whose daily energy follows the weather is judged against it: a reading against its
        typical week plus its response to that interval's temperature, a level shift on daily
        energy normalised to the average weather (see
        :mod:`engine.cleaning.weather_response`). Other meters are judged as without them.

    Returns
    -------
    list of Finding
        Sorted by start, end and kind.

    Examples
    --------
    >>> findings = find_all(meter)                            # doctest: +SKIP
    >>> steps = recommended_steps(findings)                   # doctest: +SKIP
    """
    settings = settings if settings is not None else CleaningSettings()
    readings = meter.values
    found: list[Finding] = []
    if not readings.index.is_unique:
        frame = pd.DataFrame({"t": readings.index, "raw_value": readings.to_numpy()})
        found += find_clock_problems(frame, meter.timezone, meter.name)
        readings = readings[~readings.index.duplicated(keep="first")]
    step(progress, 0.0, f"Preparing {meter.name}")
    prepared = PreparedMeter.build(
        meter.name,
        readings.sort_index(),
        meter.interval,
        meter.timezone,
        settings,
        calendar,
        temperatures,
    )
    claimed = np.zeros(len(prepared), dtype=bool)
    for number, (label, detect) in enumerate(DETECTORS):
        step(progress, (number + 1) / (len(DETECTORS) + 1), f"Looking for {label} in {meter.name}")
        found += detect(prepared, claimed)
    step(progress, 1.0, f"Checked {meter.name}")
    return sorted(found, key=lambda finding: (finding.start, finding.end, finding.kind))
