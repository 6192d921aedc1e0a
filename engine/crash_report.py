"""A report of an internal error that a person can send in: what failed, in which version, on
which system, for which command.

Reports go to the user's log folder (``platformdirs``: ``~/.local/state/Loadledger/log`` on
Linux, ``%LOCALAPPDATA%\\Loadledger\\Logs`` on Windows, ``~/Library/Logs/Loadledger`` on macOS).
They never hold readings: the traceback lists code locations only (no variable values), and
every number in an error's message is replaced by ``#``, since a message may quote a value.
"""

from __future__ import annotations

import platform
import re
import shlex
import sys
import traceback
from collections.abc import Iterator, Sequence
from datetime import UTC, datetime
from pathlib import Path

import platformdirs

import engine

APP_NAME = "Loadledger"
_NUMBER = re.compile(r"[-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?")


def log_folder() -> Path:
    """The folder this user's error reports go to."""
    return Path(platformdirs.user_log_dir(APP_NAME, appauthor=False))


def report_text(command: Sequence[str], error: BaseException) -> str:
    """The report of ``error`` raised while running ``loadledger COMMAND``."""
    lines = [
        f"{APP_NAME} internal error report",
        f"version: {engine.__version__}",
        f"written (UTC): {datetime.now(UTC):%Y-%m-%d %H:%M:%S}",
        f"platform: {platform.platform()} ({platform.machine()})",
        f"python: {platform.python_version()}"
        + (" (bundled)" if getattr(sys, "frozen", False) else ""),
        f"command: {shlex.join(['loadledger', *map(str, command)])}",
        "",
    ]
    for link in reversed(list(_chain(error))):
        lines.append("Traceback (most recent call last):")
        lines.extend(line.rstrip("\n") for line in traceback.format_tb(link.__traceback__))
        lines.append(f"{type(link).__module__}.{type(link).__qualname__}: {_masked(link)}")
        lines.append("")
    return "\n".join(lines)


def write_report(command: Sequence[str], error: BaseException) -> Path | None:
    """Write the report to a new file in :func:`log_folder`; its path, or None when the folder
    cannot be written (the caller then says so without a path)."""
    folder = log_folder()
    stamp = datetime.now(UTC).strftime("%Y%m%d-%H%M%S")
    text = report_text(command, error)
    try:
        folder.mkdir(parents=True, exist_ok=True)
        for number in range(1000):
            path = folder / f"error-{stamp}{f'-{number}' if number else ''}.txt"
            try:
                with path.open("x", encoding="utf-8") as file:
                    file.write(text)
                return path
            except FileExistsError:
                continue
    except OSError:
        return None
    return None


def _chain(error: BaseException) -> Iterator[BaseException]:
    """The error and the errors it was raised from or while handling, newest first."""
    seen: set[int] = set()
    link: BaseException | None = error
    while link is not None and id(link) not in seen:
        seen.add(id(link))
        yield link
        link = link.__cause__ or link.__context__


def _masked(error: BaseException) -> str:
    """The error's message with every number replaced by ``#``."""
    return " ".join(_NUMBER.sub("#", str(error)).split())
