"""Spreadsheet containers written by hand, so the fuzzer can damage any part of them.

``xlsx_parts`` returns the parts of a minimal, valid Office Open XML workbook (ECMA-376) as a
dict of member name → bytes; ``zip_parts`` packs (possibly damaged) parts into a zip. The
same for a minimal OpenDocument spreadsheet (``ods_parts``).
"""

from __future__ import annotations

import io
import re
import zipfile
from xml.sax.saxutils import escape

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
RELS = "http://schemas.openxmlformats.org/package/2006/relationships"
OFFICE_RELS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
SHEET_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
BOOK_TYPE = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"
HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
FIXED_DATE = (2024, 1, 1, 0, 0, 0)


def column_letters(number: int) -> str:
    """1 → A, 27 → AA, 16384 → XFD."""
    letters = ""
    while number:
        number, rest = divmod(number - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def cell_xml(row: int, column: int, value: object) -> str:
    """One ``<c>``: numbers as numbers, anything else as an inline string."""
    ref = f"{column_letters(column)}{row}"
    if value is None:
        return ""
    if isinstance(value, int | float) and not isinstance(value, bool):
        return f'<c r="{ref}"><v>{value!r}</v></c>'
    return f'<c r="{ref}" t="inlineStr"><is><t>{escape(str(value))}</t></is></c>'


def sheet_xml(rows: list[list[object]], *, dimension: str | None = None, tail: str = "") -> str:
    """A worksheet holding ``rows`` from A1, with optional extra XML after the last row."""
    body = "".join(
        f'<row r="{r}">' + "".join(cell_xml(r, c, v) for c, v in enumerate(row, 1)) + "</row>"
        for r, row in enumerate(rows, 1)
    )
    dim = f'<dimension ref="{dimension}"/>' if dimension else ""
    return f'{HEAD}<worksheet xmlns="{MAIN}">{dim}<sheetData>{body}{tail}</sheetData></worksheet>'


def xlsx_parts(sheets: dict[str, str]) -> dict[str, bytes]:
    """The parts of a workbook whose sheets (name → worksheet XML) come in order."""
    names = list(sheets)
    overrides = "".join(
        f'<Override PartName="/xl/worksheets/sheet{i}.xml" ContentType="{SHEET_TYPE}"/>'
        for i in range(1, len(names) + 1)
    )
    parts = {
        "[Content_Types].xml": (
            f'{HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
            '<Default Extension="rels" '
            'ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            f'<Override PartName="/xl/workbook.xml" ContentType="{BOOK_TYPE}"/>{overrides}</Types>'
        ),
        "_rels/.rels": (
            f'{HEAD}<Relationships xmlns="{RELS}"><Relationship Id="rId1" '
            f'Type="{OFFICE_RELS}/officeDocument" Target="xl/workbook.xml"/></Relationships>'
        ),
        "xl/workbook.xml": (
            f'{HEAD}<workbook xmlns="{MAIN}" xmlns:r="{OFFICE_RELS}"><sheets>'
            + "".join(
                f'<sheet name="{escape(n)}" sheetId="{i}" r:id="rId{i}"/>'
                for i, n in enumerate(names, 1)
            )
            + "</sheets></workbook>"
        ),
        "xl/_rels/workbook.xml.rels": (
            f'{HEAD}<Relationships xmlns="{RELS}">'
            + "".join(
                f'<Relationship Id="rId{i}" Type="{OFFICE_RELS}/worksheet" '
                f'Target="worksheets/sheet{i}.xml"/>'
                for i in range(1, len(names) + 1)
            )
            + "</Relationships>"
        ),
    }
    for i, name in enumerate(names, 1):
        parts[f"xl/worksheets/sheet{i}.xml"] = sheets[name]
    return {name: text.encode("utf-8") if isinstance(text, str) else text
            for name, text in parts.items()}  # fmt: skip


def ods_parts(content_xml: str) -> dict[str, bytes]:
    """The parts of an OpenDocument spreadsheet with the given ``content.xml``."""
    manifest = (
        f'{HEAD}<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:'
        'manifest:1.0"><manifest:file-entry manifest:full-path="/" manifest:media-type='
        '"application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry '
        'manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>'
    )
    return {
        "mimetype": b"application/vnd.oasis.opendocument.spreadsheet",
        "META-INF/manifest.xml": manifest.encode(),
        "content.xml": content_xml.encode("utf-8"),
    }


def ods_content(rows: list[list[object]], *, repeat_rows: int = 1, repeat_columns: int = 1) -> str:
    """``content.xml`` of one table; the last row and column may be repeated many times."""
    ns = (
        'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"'
    )

    def cell(value: object, repeat: int = 1) -> str:
        rep = f' table:number-columns-repeated="{repeat}"' if repeat > 1 else ""
        if isinstance(value, int | float):
            return (f'<table:table-cell office:value-type="float" office:value="{value}"{rep}>'
                    f"<text:p>{value}</text:p></table:table-cell>")  # fmt: skip
        return (f'<table:table-cell office:value-type="string"{rep}><text:p>{escape(str(value))}'
                "</text:p></table:table-cell>")  # fmt: skip

    body = []
    for index, row in enumerate(rows):
        last = index == len(rows) - 1
        cells = [cell(v) for v in row[:-1]] + [cell(row[-1], repeat_columns if last else 1)]
        rep = f' table:number-rows-repeated="{repeat_rows}"' if last and repeat_rows > 1 else ""
        body.append(f"<table:table-row{rep}>{''.join(cells)}</table:table-row>")
    return (
        f"{HEAD}<office:document-content {ns}><office:body><office:spreadsheet>"
        f'<table:table table:name="Data">{"".join(body)}</table:table>'
        "</office:spreadsheet></office:body></office:document-content>"
    )


def zip_parts(parts: dict[str, bytes], *, stored: bool = False) -> bytes:
    """Pack parts into a zip (deflated unless ``stored``), in the given order, with a fixed
    date on every part so that the same parts always give the same bytes."""
    buffer = io.BytesIO()
    method = zipfile.ZIP_STORED if stored else zipfile.ZIP_DEFLATED
    with zipfile.ZipFile(buffer, "w", method) as archive:
        for name, data in parts.items():
            archive.writestr(zipfile.ZipInfo(name, date_time=FIXED_DATE), data, method)
    return buffer.getvalue()


def repack(data: bytes) -> bytes:
    """A zip written by another program, repacked with fixed dates (also inside its
    ``docProps/core.xml``), so that it is the same on every run."""
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        parts = {name: archive.read(name) for name in archive.namelist()}
    if "docProps/core.xml" in parts:
        parts["docProps/core.xml"] = re.sub(
            rb">\d{4}-\d\d-\d\dT[\d:.]+Z?<", b">2024-01-01T00:00:00Z<", parts["docProps/core.xml"]
        )
    return zip_parts(parts)
