"""A layout that places its items left to right and wraps onto a new line when the width runs
out: the control bars of the panels, so that a narrow screen gets two short rows instead of a
window that cannot be made narrower than its widest bar."""
from __future__ import annotations

from PySide6.QtCore import QPoint, QRect, QSize, Qt
from PySide6.QtWidgets import QLayout, QSizePolicy, QWidget, QWidgetItem


class FlowLayout(QLayout):
    """Left-to-right rows that wrap.  ``add_group(*widgets)`` keeps widgets together on one row
    (a label with its field); a stretch item (``addStretch``) is not needed: rows are packed
    to the left, and the last widget added with ``right=True`` goes to the end of its row."""

    def __init__(self, parent: QWidget | None = None, spacing: int = 6, margins=(4, 2, 4, 2)):
        super().__init__(parent)
        self._items: list = []          # QLayoutItem
        self._groups: list[int] = []    # group id of each item
        self._right: set[int] = set()   # group ids pushed to the right end of their row
        self._next_group = 0
        self.setSpacing(spacing)
        self.setContentsMargins(*margins)

    # -- building ---------------------------------------------------------------------------
    def addItem(self, item) -> None:  # noqa: N802 (Qt's name)
        self._items.append(item)
        self._groups.append(self._next_group)
        self._next_group += 1

    def add_group(self, *widgets: QWidget, right: bool = False) -> None:
        """Add ``widgets`` as one unit that never breaks across rows."""
        group = self._next_group
        for w in widgets:
            self.addChildWidget(w)
            self._items.append(QWidgetItem(w))
            self._groups.append(group)
        if right:
            self._right.add(group)
        self._next_group += 1
        self.invalidate()

    def addWidget(self, w: QWidget) -> None:  # noqa: N802
        self.add_group(w)

    def count(self) -> int:
        return len(self._items)

    def itemAt(self, index: int):  # noqa: N802
        return self._items[index] if 0 <= index < len(self._items) else None

    def takeAt(self, index: int):  # noqa: N802
        if 0 <= index < len(self._items):
            self._groups.pop(index)
            return self._items.pop(index)
        return None

    # -- geometry ---------------------------------------------------------------------------
    def expandingDirections(self):  # noqa: N802
        return Qt.Orientation(0)

    def hasHeightForWidth(self) -> bool:  # noqa: N802
        return True

    def heightForWidth(self, width: int) -> int:  # noqa: N802
        return self._place(QRect(0, 0, width, 0), apply=False)

    def setGeometry(self, rect: QRect) -> None:  # noqa: N802
        super().setGeometry(rect)
        self._place(rect, apply=True)

    def sizeHint(self) -> QSize:  # noqa: N802
        """One row of everything."""
        m = self.contentsMargins()
        units = self._units()
        w = sum(u[0] for u in units) + self.spacing() * max(0, len(units) - 1)
        h = max((u[1] for u in units), default=0)
        return QSize(w + m.left() + m.right(), h + m.top() + m.bottom())

    def minimumSize(self) -> QSize:  # noqa: N802
        """The widest unit: every unit on its own row."""
        m = self.contentsMargins()
        units = self._units()
        w = max((u[0] for u in units), default=0)
        h = max((u[1] for u in units), default=0)
        return QSize(w + m.left() + m.right(), h + m.top() + m.bottom())

    def _visible(self):
        for item, g in zip(self._items, self._groups):
            w = item.widget()
            if w is None or not w.isHidden():
                yield item, g

    def _units(self) -> list[tuple[int, int, list, bool]]:
        """(width, height, items, right) of each group of visible items."""
        units: dict[int, list] = {}
        for item, g in self._visible():
            units.setdefault(g, []).append(item)
        gap = self.spacing()
        out = []
        for g, items in units.items():
            hints = [it.sizeHint() for it in items]
            w = sum(h.width() for h in hints) + gap * (len(items) - 1)
            out.append((w, max(h.height() for h in hints), items, g in self._right))
        return out

    def _place(self, rect: QRect, apply: bool) -> int:
        m = self.contentsMargins()
        area = rect.adjusted(m.left(), m.top(), -m.right(), -m.bottom())
        gap = self.spacing()
        rows: list[list] = [[]]
        x = 0
        for unit in self._units():
            w = unit[0]
            if rows[-1] and x + w > area.width():
                rows.append([])
                x = 0
            rows[-1].append(unit)
            x += w + gap
        y = area.y()
        for row in rows:
            if not row:
                continue
            height = max(u[1] for u in row)
            if apply:
                x = area.x()
                for k, (_w, _h, items, right) in enumerate(row):
                    if right:
                        rest = sum(u[0] for u in row[k:]) + gap * (len(row) - k - 1)
                        x = max(x, area.x() + area.width() - rest)
                    for it in items:
                        hint = it.sizeHint()
                        grow = it.widget() is not None and it.widget().sizePolicy().verticalPolicy() \
                            != QSizePolicy.Policy.Fixed
                        hh = height if grow else hint.height()
                        it.setGeometry(QRect(QPoint(x, y + (height - hh) // 2), QSize(hint.width(), hh)))
                        x += hint.width() + gap
            y += height + gap
        return y - gap - rect.y() + m.bottom()


def compact_combo(box, chars: int) -> None:
    """Let ``box`` be as narrow as ``chars`` characters (longer entries are elided in the box,
    shown whole in its list and in its tool tip) instead of as wide as its longest entry."""
    from PySide6.QtWidgets import QComboBox
    box.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
    box.setMinimumContentsLength(chars)
    box.setToolTip(box.currentText())
    box.currentTextChanged.connect(box.setToolTip)
