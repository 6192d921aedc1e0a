"""The thresholds the cleaning detectors use, with defaults an energy manager can adjust.

Every finding states the thresholds that produced it, so a changed setting is always visible
in the explanation the user reads.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import pandas as pd

from engine.errors import InputError


@dataclass(frozen=True)
class CleaningSettings:
    """Detector thresholds; every field has a default and is stated in the findings it drives.

    Durations are plain numbers of hours or days so that settings store and type easily; the
    properties of the same name without the unit give them as ``pd.Timedelta``.

    Parameters
    ----------
    short_gap_hours : float
        Gaps up to this long are filled by a straight line, longer ones from the meter's typical
        week.
    serious_gap_days : float
        Gaps at least this long are rated serious.
    pattern_weeks : int
        Weeks in the rolling window that defines "typical for this hour of the week"; short enough
        that seasons do not mislead, long enough for robust statistics.
    spike_z : float
        Robust z (deviations of 1.4826·MAD) beyond which a reading is a spike or a dip.
    spread_floor_share : float
        The robust spread is never taken below this share of the meter's median reading, so a
        very steady meter does not turn every small wobble into a spike.
    implausible_factor : float
        A spike above this many times the meter's 99.5th-percentile reading is rated serious.
    catch_up_ratio : float
        A reading after a gap is a catch-up when its excess over typical is within this factor of
        the energy the gap is missing.
    flat_floor_hours, flat_multiple, flat_quantile
        A repeated reading is a flat line when it lasts longer than ``flat_multiple`` times the
        ``flat_quantile`` of the meter's own repeat-run lengths, and never shorter than
        ``flat_floor_hours``.
    near_zero_share : float
        A reading at or below this share of typical counts as near zero.
    busy_share : float
        An hour is busy when its typical reading is at least this share of the meter's median.
    zero_min_hours : float
        Near-zero runs are reported when they cover at least this much busy time.
    serious_run_days : float
        Flat lines and zero runs at least this long are rated serious.
    reset_factor : float
        A negative reading larger in size than this many times the meter's 99.5th-percentile
        reading is read as a register reset or rollover.
    level_window_days, level_persist_days, level_ratio
        Daily energy is compared over ``level_window_days`` before and after each day; a change
        of at least ``level_ratio`` (or its inverse) that still holds over
        ``level_persist_days`` is a level shift.
    """

    short_gap_hours: float = 2.0
    serious_gap_days: float = 7.0
    pattern_weeks: int = 9
    spike_z: float = 6.0
    spread_floor_share: float = 0.05
    implausible_factor: float = 2.0
    catch_up_ratio: float = 2.0
    flat_floor_hours: float = 3.0
    flat_multiple: float = 2.0
    flat_quantile: float = 0.99
    near_zero_share: float = 0.1
    busy_share: float = 0.25
    zero_min_hours: float = 1.0
    serious_run_days: float = 1.0
    reset_factor: float = 10.0
    level_window_days: float = 28.0
    level_persist_days: float = 56.0
    level_ratio: float = 1.4

    @property
    def short_gap(self) -> pd.Timedelta:
        return pd.Timedelta(hours=self.short_gap_hours)

    @property
    def serious_gap(self) -> pd.Timedelta:
        return pd.Timedelta(days=self.serious_gap_days)

    @property
    def flat_floor(self) -> pd.Timedelta:
        return pd.Timedelta(hours=self.flat_floor_hours)

    @property
    def zero_min_duration(self) -> pd.Timedelta:
        return pd.Timedelta(hours=self.zero_min_hours)

    @property
    def serious_run(self) -> pd.Timedelta:
        return pd.Timedelta(days=self.serious_run_days)

    @property
    def level_window(self) -> pd.Timedelta:
        return pd.Timedelta(days=self.level_window_days)

    @property
    def level_persist(self) -> pd.Timedelta:
        return pd.Timedelta(days=self.level_persist_days)

    def __post_init__(self) -> None:
        for item in fields(self):
            value = getattr(self, item.name)
            if not value > 0:
                raise InputError(
                    f"cleaning setting '{item.name}' must be positive, not {value}.",
                    hint="Enter a number above zero.",
                )
        shares = ("spread_floor_share", "near_zero_share", "busy_share", "flat_quantile")
        for name in shares:
            if getattr(self, name) >= 1:
                raise InputError(
                    f"cleaning setting '{name}' is a share and must be below 1.",
                    hint="Enter a value such as 0.1 for ten per cent.",
                )
        for name in ("catch_up_ratio", "level_ratio", "implausible_factor", "flat_multiple"):
            if getattr(self, name) <= 1:
                raise InputError(
                    f"cleaning setting '{name}' is a ratio and must be above 1.",
                    hint="Enter a value such as 2.",
                )
        if not isinstance(self.pattern_weeks, int):
            raise InputError(
                f"cleaning setting 'pattern_weeks' must be whole, not {self.pattern_weeks}.",
                hint="Enter a number of weeks such as 9.",
            )
        if self.level_persist_days < self.level_window_days:
            raise InputError(
                "cleaning setting 'level_persist_days' must be at least 'level_window_days'.",
                hint="A level shift has to last at least as long as the window it is seen in.",
            )
