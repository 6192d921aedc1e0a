"""How many pages a workbook prints, sheet by sheet, as LibreOffice lays it out for a PDF.

Run with ``.venv/bin/python tests/benchmarks/print_pages.py BOOK.xlsx [BOOK2.xlsx ...]`` (not
collected by pytest; needs ``soffice`` and ``pdfinfo``, e.g. the Debian packages
``libreoffice-calc-nogui`` and ``poppler-utils``). Each sheet is printed alone from a copy of
the workbook in which every other sheet is hidden (hidden sheets do not print), so the counts
are those of "print this sheet"; the whole book is printed once more for the total.
When every page's header names its sheet (our workbooks' page setup does), the counts are read
from the whole book's pages instead. With
``--png FOLDER`` the pages of the whole book are also drawn as PNG files (``pdftoppm``) for
reading by eye.
"""

from __future__ import annotations

import argparse
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from openpyxl import load_workbook

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from tests.pdf_support import page_texts, print_to_pdf


def pdf_pages(book: Path, folder: Path) -> tuple[int, Path]:
    """Print ``book`` to a PDF in ``folder`` with LibreOffice; (page count, the PDF)."""
    pdf = print_to_pdf(book, folder)
    info = subprocess.run(["pdfinfo", str(pdf)], check=True, capture_output=True, text=True)
    return int(re.search(r"^Pages:\s+(\d+)", info.stdout, re.MULTILINE).group(1)), pdf


def sheet_pages(book: Path, folder: Path, pdf: Path) -> dict[str, int]:
    """Pages of each sheet: read from the page headers when every page names its sheet."""
    names = load_workbook(book, read_only=True).sheetnames
    return _pages_by_header(pdf, names) or _pages_alone(book, folder, names)


def _pages_by_header(pdf: Path, names: list[str]) -> dict[str, int] | None:
    out = dict.fromkeys(names, 0)
    by_length = sorted(names, key=len, reverse=True)
    for page in page_texts(pdf):
        header = next((line for line in page.splitlines() if re.search(r"Page \d+ of", line)), "")
        found = next((name for name in by_length if f" {name} " in f" {header} "), None)
        if found is None:
            return None
        out[found] += 1
    return out


def _pages_alone(book: Path, folder: Path, names: list[str]) -> dict[str, int]:
    """Each sheet printed from a copy with the others hidden (works only without print areas:
    LibreOffice prints a hidden sheet that has one)."""
    out = {}
    for number, name in enumerate(names):
        copy = load_workbook(book)
        for sheet in copy.worksheets:
            sheet.sheet_state = "visible" if sheet.title == name else "hidden"
        copy.active = number
        alone = folder / f"sheet{number}.xlsx"
        copy.save(alone)
        out[name], _ = pdf_pages(alone, folder)
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("books", nargs="+", type=Path)
    parser.add_argument("--png", type=Path, help="draw the whole book's pages here")
    args = parser.parse_args()
    if shutil.which("soffice") is None:
        raise SystemExit("LibreOffice (soffice) is not installed")
    for book in args.books:
        with tempfile.TemporaryDirectory() as folder:
            work = Path(folder)
            total, pdf = pdf_pages(book, work)
            per_sheet = sheet_pages(book, work, pdf)
            print(f"{book}: {total} pages")
            for name, pages in per_sheet.items():
                print(f"  {name:<24} {pages:>4}")
            if args.png:
                args.png.mkdir(parents=True, exist_ok=True)
                prefix = args.png / book.stem.replace(" ", "-")
                subprocess.run(["pdftoppm", "-png", "-r", "60", str(pdf), str(prefix)], check=True)


if __name__ == "__main__":
    main()
