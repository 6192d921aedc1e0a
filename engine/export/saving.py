"""Save a workbook so that a kill or a full disk never leaves a broken file in its place.

The workbook is written to a temporary file beside the target and renamed over it only when
complete (a rename within one folder replaces the file in one step), so the target is always
either the previous workbook or the new one.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

from openpyxl import Workbook

from engine.errors import InputError


def save_workbook(book: Workbook, path: str | Path, what: str) -> Path:
    """Save ``book`` at ``path`` whole or not at all; ``what`` names it in messages."""
    path = Path(path)
    temporary = None
    try:
        handle, name = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=".xlsx", dir=path.parent)
        os.close(handle)
        temporary = Path(name)
        book.save(temporary)
        os.replace(temporary, path)
    except OSError as error:
        if temporary is not None:
            with contextlib.suppress(OSError):
                temporary.unlink()
        raise InputError(
            f"the {what} could not be saved ({error.strerror or error}).",
            hint="Close it if a spreadsheet program has it open, or choose another folder.",
            file=path,
        ) from error
    return path
