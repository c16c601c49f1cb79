"""Table views shared by the panels: one look and behaviour for every record table."""
from __future__ import annotations

from PySide6.QtCore import QItemSelectionModel, Qt
from PySide6.QtWidgets import QAbstractItemView, QTableView


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
    return t


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
