"""Atom contributions: every atom pair and bonded term behind the selected residue pair."""
from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from app.gui.models.atom_table import AtomTableModel
from app.gui.views.tables import fit_columns, record_table, show_row


class AtomContributionsView(QWidget):
    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.model = AtomTableModel(self)
        self.model.units_in_header = False        # the caption names the units (narrow panel)
        self._caption = ""
        self._syncing = False
        self.caption = QLabel("Select a residue pair in the map or the ledger.")
        self.caption.setObjectName("atomCaption")
        self.caption.setWordWrap(True)
        self.table = record_table("atomTable", self.model, size_from_rows=40)
        # a narrowed label keeps its end, the atom name ("…P33 CZ3"; the caption names the pair)
        self.table.setTextElideMode(Qt.TextElideMode.ElideLeft)
        lay = QVBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2)
        lay.addWidget(self.caption); lay.addWidget(self.table, 1)
        self.table.selectionModel().currentRowChanged.connect(self._on_row)
        selection.atomPairChanged.connect(self._on_atom_pair)

    def show_contributions(self, system, contrib, caption: str) -> None:
        self.model.set_contributions(system, contrib)
        self._caption = caption
        self._show_caption()
        fit_columns(self.table)

    def set_unit(self, factor: float, unit: str) -> None:
        self.model.set_unit(factor, unit)
        self._show_caption()

    def _show_caption(self) -> None:
        if self.model.contrib is None:
            self.caption.setText(self._caption)
            return
        self.caption.setText(f"{self._caption} · energies in {self.model.unit}, distances in Å")

    def _on_row(self, current, _prev) -> None:
        if self._syncing or not current.isValid():
            return
        pair = self.model.atom_pair_of_row(current.row())
        self.selection.set_atom_pair(pair)

    def _on_atom_pair(self, pair) -> None:
        pair = pair or None
        row = self.model.row_of_atom_pair(pair)
        self._syncing = True
        try:
            show_row(self.table, row)
        finally:
            self._syncing = False
