"""The icon files the installers use: the sizes written into .ico and .icns are the sizes of the
PNG images inside them, read back with Qt's own PNG reader.

Layouts from memory: an .ico is a 6-byte header (0, 1, count) and 16-byte entries (width,
height, ..., byte length, offset), 0 meaning 256; an .icns is 'icns' with its total length, then
(type, length including the 8-byte head, data) elements.
"""

from __future__ import annotations

import importlib.util
import struct
from pathlib import Path

from PySide6.QtGui import QImage

ROOT = Path(__file__).resolve().parents[2]


def _icons_module():
    spec = importlib.util.spec_from_file_location("icons", ROOT / "installer" / "icons.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _png_size(data: bytes) -> int:
    image = QImage.fromData(data, "PNG")
    assert not image.isNull() and image.width() == image.height()
    return image.width()


def test_the_icon_files_hold_each_size_as_a_png(qapp, tmp_path):
    icons = _icons_module()
    icons.main(tmp_path)
    for size in icons.PNG_SIZES:
        assert _png_size((tmp_path / f"loadledger-{size}.png").read_bytes()) == size

    ico = (tmp_path / "loadledger.ico").read_bytes()
    reserved, kind, count = struct.unpack_from("<HHH", ico)
    assert (reserved, kind, count) == (0, 1, len(icons.ICO_SIZES))
    found = []
    for number in range(count):
        width, height, *_, length, offset = struct.unpack_from("<BBBBHHII", ico, 6 + 16 * number)
        assert width == height
        assert _png_size(ico[offset : offset + length]) == (width or 256)
        found.append(width or 256)
    assert found == list(icons.ICO_SIZES)

    icns = (tmp_path / "loadledger.icns").read_bytes()
    assert icns[:4] == b"icns" and struct.unpack_from(">I", icns, 4)[0] == len(icns)
    position, kinds = 8, {}
    while position < len(icns):
        kind = icns[position : position + 4]
        (length,) = struct.unpack_from(">I", icns, position + 4)
        kinds[kind] = _png_size(icns[position + 8 : position + length])
        position += length
    assert position == len(icns)
    assert kinds == {kind: size for size, kind in icons.ICNS_TYPES.items()}
