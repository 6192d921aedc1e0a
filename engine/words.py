"""Small pieces of wording shared by the engine's messages and the window."""

from __future__ import annotations


def counted(count: int, noun: str) -> str:
    """``count`` and ``noun``, plural unless one: "1 meter", "2 meters", "1,204 values"."""
    return f"{count:,} {noun}" if count == 1 else f"{count:,} {noun}s"
