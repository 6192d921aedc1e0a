"""Have LibreOffice convert a workbook (recalculated, or printed to PDF) and read a PDF's pages
back as text (poppler), for the workbook tests and ``tests/benchmarks/print_pages.py``."""

from __future__ import annotations

import subprocess
from pathlib import Path


def libreoffice_convert(
    book: Path, folder: Path, target: str, *, out: Path | None = None, timeout: float = 300
) -> Path:
    """``book`` converted by LibreOffice Calc (``soffice``) to ``target`` ("pdf", "xlsx")
    into ``out`` (default ``folder``), with its user profile in ``folder``; the new file."""
    out = folder if out is None else out
    subprocess.run(
        [
            "soffice",
            f"-env:UserInstallation={(folder / 'profile').as_uri()}",
            "--headless",
            "--calc",
            "--convert-to",
            target,
            "--outdir",
            str(out),
            str(book),
        ],
        check=True,
        capture_output=True,
        timeout=timeout,
    )
    return out / f"{book.stem}.{target}"


def print_to_pdf(book: Path, folder: Path, timeout: float = 300) -> Path:
    """``book`` printed by LibreOffice to a PDF in ``folder``; its path."""
    return libreoffice_convert(book, folder, "pdf", timeout=timeout)


def page_texts(pdf: Path) -> list[str]:
    """The text of each page of ``pdf`` in its layout (``pdftotext -layout``)."""
    text = subprocess.run(
        ["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True, text=True
    ).stdout
    return text.split("\f")[:-1]
