"""Render the application icon (desktop/loadledger.svg) to the sizes each system wants.

Writes into the folder given (default build/icons): ``loadledger-N.png`` for the freedesktop
sizes, ``loadledger.ico`` for Windows and ``loadledger.icns`` for macOS. Both container formats
hold PNG images as they are (Windows Vista and later, macOS 10.7 and later read those), so no
imaging library beyond Qt's SVG renderer is needed.

    python installer/icons.py [OUT_FOLDER]
"""

from __future__ import annotations

import os
import struct
import sys
from pathlib import Path

from PySide6.QtCore import QBuffer, QByteArray, QIODevice, Qt
from PySide6.QtGui import QGuiApplication, QImage, QPainter
from PySide6.QtSvg import QSvgRenderer

SOURCE = Path(__file__).resolve().parent.parent / "desktop" / "loadledger.svg"
#: The hicolor theme's usual application sizes.
PNG_SIZES = (16, 24, 32, 48, 64, 128, 256, 512)
ICO_SIZES = (16, 24, 32, 48, 64, 256)
#: icns element types holding PNG data, by pixel size (Apple's icns layout, from memory).
ICNS_TYPES = {16: b"icp4", 32: b"icp5", 64: b"icp6", 128: b"ic07", 256: b"ic08", 512: b"ic09"}


def render(renderer: QSvgRenderer, size: int) -> bytes:
    """The icon as PNG bytes, ``size`` pixels square, on a transparent background."""
    image = QImage(size, size, QImage.Format.Format_ARGB32_Premultiplied)
    image.fill(Qt.GlobalColor.transparent)
    painter = QPainter(image)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    renderer.render(painter)
    painter.end()
    data = QByteArray()
    buffer = QBuffer(data)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    image.save(buffer, "PNG")
    return bytes(data)


def ico(pngs: dict[int, bytes]) -> bytes:
    """A Windows .ico: a header, one 16-byte entry per image, then the PNG images."""
    offset = 6 + 16 * len(pngs)
    head, body = [struct.pack("<HHH", 0, 1, len(pngs))], []
    for size, png in pngs.items():
        edge = 0 if size >= 256 else size  # 0 means 256 in an icon entry
        head.append(struct.pack("<BBBBHHII", edge, edge, 0, 0, 1, 32, len(png), offset))
        body.append(png)
        offset += len(png)
    return b"".join(head + body)


def icns(pngs: dict[int, bytes]) -> bytes:
    """A macOS .icns: 'icns' and the total length, then (type, length, PNG) elements."""
    elements = b"".join(
        kind + struct.pack(">I", 8 + len(pngs[size])) + pngs[size]
        for size, kind in ICNS_TYPES.items()
    )
    return b"icns" + struct.pack(">I", 8 + len(elements)) + elements


def main(out: Path) -> None:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # no display needed
    app = QGuiApplication.instance() or QGuiApplication(sys.argv[:1])  # noqa: F841 (Qt needs it)
    renderer = QSvgRenderer(str(SOURCE))
    if not renderer.isValid():
        raise SystemExit(f"cannot read the icon source {SOURCE}")
    out.mkdir(parents=True, exist_ok=True)
    pngs = {size: render(renderer, size) for size in sorted({*PNG_SIZES, *ICO_SIZES})}
    for size in PNG_SIZES:
        (out / f"loadledger-{size}.png").write_bytes(pngs[size])
    (out / "loadledger.ico").write_bytes(ico({size: pngs[size] for size in ICO_SIZES}))
    (out / "loadledger.icns").write_bytes(icns(pngs))
    print(f"icons: {len(PNG_SIZES)} PNG sizes, .ico and .icns in {out}")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path("build/icons"))
