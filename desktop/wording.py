"""Small pieces of wording shared by the screens."""

from __future__ import annotations


def counted(count: int, noun: str) -> str:
    """``count`` and ``noun``, plural unless one: "1 meter", "2 meters", "1,204 values"."""
    return f"{count:,} {noun}{'s' * (count != 1)}"
