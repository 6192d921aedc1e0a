"""Settings the user can give the importer where the file cannot settle a question."""

from __future__ import annotations

from dataclasses import asdict, dataclass

STAMP_CONVENTIONS = ("start", "end")
VALUE_KINDS = ("interval", "register")


@dataclass(frozen=True)
class ReadOptions:
    """What the user told the importer; ``None`` means "decide from the data and say so".

    Stored with every import in the project file so that reopening reproduces every figure.
    """

    timezone: str | None = None
    dayfirst: bool | None = None
    stamps: str | None = None
    sheet: str | None = None
    unit: str | None = None
    utility: str | None = None
    values: str | None = None
    temperature_unit: str | None = None
    holidays: str | None = None  # country code, optionally "-" subdivision, e.g. "US-IL"

    def __post_init__(self) -> None:
        if self.stamps not in (None, *STAMP_CONVENTIONS):
            raise ValueError(f"stamps must be one of {STAMP_CONVENTIONS}")
        if self.values not in (None, *VALUE_KINDS):
            raise ValueError(f"values must be one of {VALUE_KINDS}")

    def to_dict(self) -> dict:
        return asdict(self)
