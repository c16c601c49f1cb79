"""The pair ledger: every residue pair with a non-negligible entry, sortable and filterable,
linked both ways with the map through the shared selection."""
from __future__ import annotations

from PySide6.QtCore import QItemSelectionModel, Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QCheckBox,
    QComboBox,
    QHeaderView,
    QLabel,
    QLineEdit,
    QVBoxLayout,
    QWidget,
)

from app.gui.models.pair_table import PairTableModel
from app.gui.views.flow_layout import FlowLayout
from app.gui.views.tables import fit_columns, record_table

ANY = ""


class PairLedgerView(QWidget):
    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.model = PairTableModel(self)
        self.model.units_in_header = False        # the count line names the units (narrow docks)
        self._syncing = False

        self.text = QLineEdit(); self.text.setObjectName("ledgerText")
        self.text.setPlaceholderText("Find residue, e.g. TRP or B:LYS")
        self.text.setClearButtonEnabled(True)
        self.chain = QComboBox(); self.chain.setObjectName("ledgerChain")
        self.between = QCheckBox("Only between"); self.between.setObjectName("ledgerBetween")
        self.chain_a = QComboBox(); self.chain_b = QComboBox()
        self.hide_self = QCheckBox("Hide within-residue"); self.hide_self.setObjectName("ledgerHideSelf")
        self.count = QLabel("")
        self.text.setMinimumWidth(self.text.fontMetrics().horizontalAdvance(self.text.placeholderText()) + 40)
        top = FlowLayout()
        top.add_group(self.text)
        top.add_group(QLabel("Chain"), self.chain)
        top.add_group(self.between, self.chain_a, QLabel("and"), self.chain_b)
        top.add_group(self.hide_self)
        top.add_group(self.count, right=True)

        self.table = record_table("ledgerTable", self.model)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        self.table.horizontalHeader().setResizeContentsPrecision(40)   # size columns from 40 rows
        lay = QVBoxLayout(self); lay.setContentsMargins(0, 0, 0, 0); lay.setSpacing(2)
        lay.addLayout(top); lay.addWidget(self.table, 1)

        self.text.textChanged.connect(self._refilter)
        for w in (self.chain, self.chain_a, self.chain_b):
            w.currentIndexChanged.connect(self._refilter)
        self.between.toggled.connect(self._refilter)
        self.hide_self.toggled.connect(self._refilter)
        self.table.selectionModel().currentRowChanged.connect(self._on_row)
        selection.pairChanged.connect(self._on_selection)

    def set_unit(self, factor: float, unit: str) -> None:
        self.model.set_unit(factor, unit)
        self.count.setText(f"{self.model.rowCount():,} pairs · energies in {unit}, distances in Å")

    def set_dataset(self, ds, keep_sort: bool = False) -> None:
        header = self.table.horizontalHeader()
        sort = (header.sortIndicatorSection(), header.sortIndicatorOrder())
        chosen = [box.currentData() for box in (self.chain, self.chain_a, self.chain_b)]
        self.model.set_dataset(ds)
        chains = [] if ds is None else sorted(set(ds.chains))
        for box, first in ((self.chain, "any"), (self.chain_a, None), (self.chain_b, None)):
            box.blockSignals(True)
            box.clear()
            if first:
                box.addItem(first, ANY)
            for c in chains:
                box.addItem(c or "(blank)", c)
            box.blockSignals(False)
        if len(chains) > 1:
            self.chain_b.setCurrentIndex(1)
        if keep_sort:     # the same system again (another frame): keep the filters as they were
            for box, value in zip((self.chain, self.chain_a, self.chain_b), chosen):
                k = box.findData(value)
                if k >= 0:
                    box.blockSignals(True); box.setCurrentIndex(k); box.blockSignals(False)
        enabled = len(chains) > 1
        for w in (self.between, self.chain_a, self.chain_b):
            w.setEnabled(enabled)
        if keep_sort and 0 <= sort[0] < self.model.columnCount():
            self.model.sort(*sort)
        elif ds is not None and ds.is_difference:
            size = self.model.column_of("|Change|")      # by the size of the change
            self.model.sort(size, Qt.SortOrder.DescendingOrder)
            self.table.horizontalHeader().setSortIndicator(size, Qt.SortOrder.DescendingOrder)
        else:
            self.table.horizontalHeader().setSortIndicator(-1, Qt.SortOrder.AscendingOrder)
        self._refilter()
        fit_columns(self.table)

    def set_between(self, a: str, b: str, on: bool = True) -> None:
        self.chain_a.setCurrentIndex(max(0, self.chain_a.findData(a)))
        self.chain_b.setCurrentIndex(max(0, self.chain_b.findData(b)))
        self.between.setChecked(on)

    def _refilter(self) -> None:
        between = None
        if self.between.isChecked() and self.between.isEnabled():
            between = (self.chain_a.currentData(), self.chain_b.currentData())
        self.model.apply_filter(self.text.text(), self.chain.currentData() or "", between,
                                self.hide_self.isChecked())
        self.count.setText(f"{self.model.rowCount():,} pairs · energies in {self.model.unit}, distances in Å")
        self._on_selection(self.selection.pair)

    def _on_row(self, current, _previous) -> None:
        if self._syncing or not current.isValid():
            return
        self.selection.set_pair(self.model.pair_of_row(current.row()))

    def _on_selection(self, pair) -> None:
        pair = pair or None
        row = self.model.row_of_pair(pair)
        self._syncing = True
        try:
            sm = self.table.selectionModel()
            if row < 0:
                sm.clearSelection()
                sm.setCurrentIndex(self.model.index(-1, -1), QItemSelectionModel.SelectionFlag.NoUpdate)
            else:
                idx = self.model.index(row, 0)
                sm.setCurrentIndex(idx, QItemSelectionModel.SelectionFlag.ClearAndSelect
                                   | QItemSelectionModel.SelectionFlag.Rows)
                self.table.scrollTo(idx, QAbstractItemView.ScrollHint.EnsureVisible)
        finally:
            self._syncing = False

    def selected_row(self) -> int:
        idx = self.table.selectionModel().currentIndex()
        return idx.row() if idx.isValid() else -1
