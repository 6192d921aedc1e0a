"""Which clock the stamps are on, and how to turn them into UTC instants."""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from engine import timestamps
from engine.meters import Finding
from engine.reading.stamps import ParsedTable
from engine.zone_names import require_zone


@dataclass
class SiteTime:
    """The site's zone and what the stamps were: local wall-clock, UTC, or carrying offsets."""

    timezone: str
    clock: str  # "local", "utc" or "offsets"
    note: str
    findings: list[Finding] = field(default_factory=list)

    def to_utc(self, stamps: pd.Series) -> tuple[pd.DatetimeIndex, list[Finding]]:
        """UTC instants for one meter's stamps in file order, with what localizing noticed."""
        index = pd.DatetimeIndex(stamps)
        if self.clock == "offsets":
            return _as_utc(index), []
        if self.clock == "utc":
            return index.tz_localize("UTC"), []
        localized = timestamps.localize(index, self.timezone)
        return localized.utc, localized_findings(localized)


def resolve_site_time(parsed: ParsedTable, timezone: str | None) -> SiteTime:
    """Decide the clock from the stamps and the user's setting; never guess silently."""
    if timezone is not None:
        require_zone(timezone)
    if parsed.has_offsets:
        zone = timezone or "UTC"
        note = "stamps carry UTC offsets" + (
            f"; site zone {zone}" if timezone else "; site zone not given (UTC used for display)"
        )
        return SiteTime(zone, "offsets", note)
    if timezone is None:
        return SiteTime(
            "UTC",
            "utc",
            "stamps have no offset and no time zone was given: read as UTC",
            [
                Finding(
                    kind="timezone_unknown",
                    message=(
                        "the stamps carry no time zone; they were read as UTC. If they are local "
                        "clock time, give the zone with --timezone (e.g. America/Chicago)."
                    ),
                )
            ],
        )
    if timezone in ("UTC", "Etc/UTC", "GMT"):
        return SiteTime(timezone, "utc", "stamps are UTC")
    return SiteTime(timezone, "local", f"stamps are local clock time in {timezone}")


def _as_utc(index: pd.DatetimeIndex) -> pd.DatetimeIndex:
    if index.tz is None:
        return index.tz_localize("UTC")
    return index.tz_convert("UTC")


def localized_findings(localized: timestamps.Localized) -> list[Finding]:
    """Findings for what localizing local clock stamps noticed (repeats, non-existent times)."""
    counts = {kind: count for kind, count in localized.counts().items() if count}
    return [
        Finding(kind=kind, message=f"{note}.", count=count)
        for (kind, count), note in zip(counts.items(), localized.notes(), strict=True)
    ]
