"""Table views shared by the panels: one look and behaviour for every record table."""
from __future__ import annotations

from PySide6.QtCore import QEvent, QItemSelectionModel, QObject, Qt
from PySide6.QtWidgets import QAbstractItemView, QMenu, QTableView, QToolTip

#: Text columns are narrowed to fit the table's width, but not below this (px); number columns
#: keep the width of their contents (an elided number would read as another number).
MIN_TEXT_COLUMN = 56


def record_table(name: str, model=None, size_from_rows: int | None = None) -> QTableView:
    """A sortable, single-row-selection table with alternating rows and no row numbers.

    ``size_from_rows``: size columns to their contents from that many rows only (fast on big
    tables).
    """
    t = QTableView()
    t.setObjectName(name)
    if model is not None:
        t.setModel(model)
    t.setSortingEnabled(True)
    t.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)
    t.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    t.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
    t.setAlternatingRowColors(True)
    t.verticalHeader().setVisible(False)
    t.verticalHeader().setDefaultSectionSize(22)
    t.horizontalHeader().setStretchLastSection(True)
    if size_from_rows is not None:
        t.horizontalHeader().setResizeContentsPrecision(size_from_rows)
    t.setTextElideMode(Qt.TextElideMode.ElideRight)
    t.setWordWrap(False)      # one line a cell: a narrowed label is elided, not cut into two lines
    t.viewport().installEventFilter(ElidedCellTips(t))
    t.viewport().installEventFilter(_RefitOnResize(t))
    header = t.horizontalHeader()
    header.setContextMenuPolicy(Qt.ContextMenuPolicy.CustomContextMenu)
    header.customContextMenuRequested.connect(lambda pos: column_menu(t).exec(header.mapToGlobal(pos)))
    # columns are sized from the first rows: after a sort those are other rows
    t.horizontalHeader().sortIndicatorChanged.connect(
        lambda *_: fit_columns(t) if t.property("naturalWidths") is not None else None)
    return t


def _is_number_column(table: QTableView, column: int) -> bool:
    """Right-aligned cells are numbers (ArrayTableModel aligns every non-text column right)."""
    model = table.model()
    if model is None or model.rowCount() == 0:
        return False
    align = model.data(model.index(0, column), Qt.ItemDataRole.TextAlignmentRole)
    return align is not None and bool(int(align) & int(Qt.AlignmentFlag.AlignRight))


def _column_title(model, column: int) -> str:
    if hasattr(model, "column_title"):
        return model.column_title(column)
    text = model.headerData(column, Qt.Orientation.Horizontal, Qt.ItemDataRole.DisplayRole)
    return str(text or "").replace("\n", " ")


def column_menu(table: QTableView) -> QMenu:
    """The header's column menu: one checkable entry per column (shown or hidden).  A choice is
    kept (by column title) when the table's contents change."""
    menu = QMenu(table)
    menu.setObjectName("columnMenu")
    model, header = table.model(), table.horizontalHeader()
    if model is None:
        return menu
    for c in range(model.columnCount()):
        action = menu.addAction(_column_title(model, c))
        action.setCheckable(True)
        action.setChecked(not header.isSectionHidden(c))
        action.toggled.connect(lambda on, c=c: set_column_shown(table, c, on))
    return menu


def set_column_shown(table: QTableView, column: int, shown: bool) -> None:
    """Show or hide one column and remember the choice for that column title."""
    model = table.model()
    chosen = dict(table.property("columnChoices") or {})
    chosen[_column_title(model, column)] = bool(shown)
    table.setProperty("columnChoices", chosen)
    table.horizontalHeader().setSectionHidden(column, not shown)
    if table.property("naturalWidths") is not None:
        fit_columns(table, recompute=False)


def apply_hidden_columns(table: QTableView) -> None:
    """Hide the columns the model hides by default, unless the user chose otherwise."""
    model, header = table.model(), table.horizontalHeader()
    if model is None:
        return
    chosen = table.property("columnChoices") or {}
    for c in range(model.columnCount()):
        default = bool(getattr(model, "hidden_by_default", lambda _c: False)(c))
        header.setSectionHidden(c, not chosen.get(_column_title(model, c), not default))


def _size_to_contents(table: QTableView) -> None:
    """What ``resizeColumnsToContents`` does (the wider of the header and the widest cell,
    plus the grid line), asking the delegate only about the rows
    :meth:`~app.gui.models.array_table.ArrayTableModel.widest_rows` names: a table of thousands
    of rows is sized in a few calls instead of one per cell."""
    model, header = table.model(), table.horizontalHeader()
    if not hasattr(model, "widest_rows"):
        table.resizeColumnsToContents()
        return
    grid = 1 if table.showGrid() else 0
    for c in range(model.columnCount()):
        if header.isSectionHidden(c):
            continue
        cells = [table.sizeHintForIndex(model.index(r, c)).width() + grid for r in model.widest_rows(c)]
        header.resizeSection(c, max([header.sectionSizeHint(c), *cells]))


def fit_columns(table: QTableView, recompute: bool = True) -> None:
    """Columns sized to their contents, then the text columns narrowed (widest first, down to
    :data:`MIN_TEXT_COLUMN`) so that the table fits its width without scrolling; narrowed cells
    are elided and show their full text as a tool tip.  Only the leading columns (up to the last
    energy column of an :class:`~app.gui.models.array_table.ArrayTableModel`) are made to fit;
    the less used ones after them keep their width and may scroll.  Text columns are never
    narrowed below :data:`MIN_TEXT_COLUMN`."""
    header = table.horizontalHeader()
    model = table.model()
    if model is None or model.columnCount() == 0:
        return
    if recompute or table.property("naturalWidths") is None:
        apply_hidden_columns(table)
        _size_to_contents(table)
        table.setProperty("naturalWidths", [header.sectionSize(c) for c in range(model.columnCount())])
    natural = list(table.property("naturalWidths") or [])
    if len(natural) != model.columnCount():
        return
    room = table.viewport().width()
    # the columns that must fit: up to the last energy column (the less used ones after it scroll)
    lead = min(len(natural), int(getattr(model, "leading_columns", lambda: len(natural))()))
    text = [c for c in range(lead) if not _is_number_column(table, c) and not header.isSectionHidden(c)]
    fixed = sum(w for c, w in enumerate(natural[:lead]) if c not in text and not header.isSectionHidden(c))
    widths = {c: natural[c] for c in text}
    budget = room - fixed
    if sum(widths.values()) > budget and text:
        # (below MIN_TEXT_COLUMN each, the text columns stay at that width and the table scrolls
        # a little: the energies come first, the text keeps its last characters)
        # the largest cap L with sum(min(w, max(L, MIN))) <= budget (water-filling)
        lo, hi = MIN_TEXT_COLUMN, max(widths.values())
        while lo < hi:
            mid = (lo + hi + 1) // 2
            if sum(min(w, mid) for w in widths.values()) <= budget:
                lo = mid
            else:
                hi = mid - 1
        widths = {c: min(w, lo) for c, w in widths.items()}
    last = len(natural) - 1
    for c, w in widths.items():
        if c != last or not header.stretchLastSection():
            header.resizeSection(c, w)
    for c, w in enumerate(natural):
        if c not in widths and (c != last or not header.stretchLastSection()):
            header.resizeSection(c, w)


class _RefitOnResize(QObject):
    """Refit a table's columns (:func:`fit_columns`) when its width changes."""

    def __init__(self, table: QTableView):
        super().__init__(table)
        self.table = table

    def eventFilter(self, obj, ev) -> bool:  # noqa: N802 (Qt's name)
        if ev.type() == QEvent.Type.Resize and ev.oldSize().width() != ev.size().width() \
                and self.table.property("naturalWidths") is not None:
            fit_columns(self.table, recompute=False)
        return False


class ElidedCellTips(QObject):
    """A cell whose text does not fit its column shows the whole text as a tool tip (cells with
    a tool tip of their own keep it)."""

    def __init__(self, table: QTableView):
        super().__init__(table)
        self.table = table

    def eventFilter(self, obj, ev) -> bool:  # noqa: N802
        if ev.type() != QEvent.Type.ToolTip:
            return False
        index = self.table.indexAt(ev.pos())
        if not index.isValid() or index.data(Qt.ItemDataRole.ToolTipRole):
            return False
        text = index.data(Qt.ItemDataRole.DisplayRole)
        if text is None:
            return False
        if elided(self.table, index):
            QToolTip.showText(ev.globalPos(), str(text), self.table.viewport(), self.table.visualRect(index))
        else:
            QToolTip.hideText()
        return True


def elided(table: QTableView, index) -> bool:
    """Whether the cell at ``index`` is too narrow for its text."""
    text = index.data(Qt.ItemDataRole.DisplayRole)
    if text is None:
        return False
    margin = 2 * (table.style().pixelMetric(table.style().PixelMetric.PM_FocusFrameHMargin, None, table) + 1)
    return table.fontMetrics().horizontalAdvance(str(text)) + margin > table.visualRect(index).width()


def show_row(table: QTableView, row: int) -> None:
    """Make ``row`` the selected, current and visible row (clear the selection if ``row`` < 0)."""
    sm = table.selectionModel()
    if row < 0:
        sm.clearSelection()
        return
    idx = table.model().index(row, 0)
    sm.setCurrentIndex(idx, QItemSelectionModel.SelectionFlag.ClearAndSelect
                       | QItemSelectionModel.SelectionFlag.Rows)
    table.scrollTo(idx)
