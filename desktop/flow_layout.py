"""A layout that lines its widgets up left to right and starts a new row when one is full.

Qt has none of its own: a row of long check boxes in a grid or a box layout asks for its
whole width, which kept the window wider than a laptop's screen. This one asks only for its
widest widget and takes as many rows as the width given needs (height for width).
"""

from __future__ import annotations

from PySide6.QtCore import QPoint, QRect, QSize, Qt
from PySide6.QtWidgets import QLayout, QLayoutItem, QWidget


class FlowLayout(QLayout):
    """Widgets in reading order, wrapped to the width the layout is given."""

    def __init__(self, parent: QWidget | None = None, across: int = 16, down: int = 2) -> None:
        super().__init__(parent)
        self._items: list[QLayoutItem] = []
        self._across, self._down = across, down

    def addItem(self, item: QLayoutItem) -> None:
        self._items.append(item)

    def count(self) -> int:
        return len(self._items)

    def itemAt(self, index: int) -> QLayoutItem | None:
        return self._items[index] if 0 <= index < len(self._items) else None

    def takeAt(self, index: int) -> QLayoutItem | None:
        return self._items.pop(index) if 0 <= index < len(self._items) else None

    def expandingDirections(self) -> Qt.Orientation:
        return Qt.Orientation(0)

    def hasHeightForWidth(self) -> bool:
        return True

    def heightForWidth(self, width: int) -> int:
        return self._arrange(QRect(0, 0, width, 0), place=False)

    def setGeometry(self, rect: QRect) -> None:
        super().setGeometry(rect)
        self._arrange(rect, place=True)

    def sizeHint(self) -> QSize:
        return self.minimumSize()

    def minimumSize(self) -> QSize:
        """The widest widget (and the tallest), plus the margins: never a whole row."""
        size = QSize()
        for item in self._items:
            size = size.expandedTo(item.minimumSize())
        margins = self.contentsMargins()
        return size + QSize(margins.left() + margins.right(), margins.top() + margins.bottom())

    def _arrange(self, rect: QRect, place: bool) -> int:
        """Lay the items out in ``rect`` (moving them when ``place``); the height used."""
        margins = self.contentsMargins()
        area = rect.adjusted(margins.left(), margins.top(), -margins.right(), -margins.bottom())
        x, y, row_height = area.x(), area.y(), 0
        for item in self._items:
            size = item.sizeHint()
            if row_height and x + size.width() > area.right() + 1:
                x, y, row_height = area.x(), y + row_height + self._down, 0
            if place:
                item.setGeometry(QRect(QPoint(x, y), size))
            x += size.width() + self._across
            row_height = max(row_height, size.height())
        return y + row_height - rect.y() + margins.bottom()
