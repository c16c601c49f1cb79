"""Atom contributions: every atom pair and bonded term behind the selected residue pair.

For a solute residue with a solvent block the panel lists the block's members instead (each
water or ion the residue interacts with, strongest first); double-clicking one shows its atom
pairs, and "Back to the solvent list" returns.
"""
from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QLabel, QPushButton, QStackedWidget, QVBoxLayout, QWidget

from app.gui.models.array_table import ArrayTableModel, Column
from app.gui.models.atom_table import AtomTableModel
from app.gui.views.tables import fit_columns, record_table, show_row
from energy.terms.registry import NONBONDED_TERMS, short_label


class AtomContributionsView(QWidget):
    #: (solute residue, solvent residue) double-clicked in the solvent list
    memberActivated = Signal(int, int)

    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.model = AtomTableModel(self)
        self.contacts_model = ArrayTableModel(self)
        self.contacts = None
        self._contacts_caption = ""
        self.model.units_in_header = False        # the caption names the units (narrow panel)
        self._caption = ""
        self._syncing = False
        self.caption = QLabel("Select a residue pair in the map or the ledger.")
        self.caption.setObjectName("atomCaption")
        self.caption.setWordWrap(True)
        self.back = QPushButton("Back to the solvent list")
        self.back.setObjectName("solventBack")
        self.back.setVisible(False)
        self.back.clicked.connect(self.show_contacts_again)
        self.table = record_table("atomTable", self.model, size_from_rows=40)
        # a narrowed label keeps its end, the atom name ("…P33 CZ3"; the caption names the pair)
        self.table.setTextElideMode(Qt.TextElideMode.ElideLeft)
        self.contacts_table = record_table("solventContactTable", self.contacts_model, size_from_rows=40)
        self.contacts_table.doubleClicked.connect(self._on_member)
        self.pages = QStackedWidget()
        self.pages.addWidget(self.table)
        self.pages.addWidget(self.contacts_table)
        lay = QVBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2)
        lay.addWidget(self.caption); lay.addWidget(self.back); lay.addWidget(self.pages, 1)
        self.table.selectionModel().currentRowChanged.connect(self._on_row)
        selection.atomPairChanged.connect(self._on_atom_pair)

    def set_unit(self, factor: float, unit: str) -> None:
        self.model.set_unit(factor, unit)
        self.contacts_model.set_unit(factor, unit)
        if not self.showing_contacts():
            self._show_caption()

    def show_contributions(self, system, contrib, caption: str, from_solvent_list: bool = False) -> None:
        """The atom pairs and bonded terms of one residue pair (``contrib`` None: empty);
        ``from_solvent_list`` keeps the solvent list one click away."""
        self.model.set_contributions(system, contrib)
        self._caption = caption
        self._show_caption()
        self.pages.setCurrentWidget(self.table)
        if not from_solvent_list:
            self.contacts = None
        self.back.setVisible(self.contacts is not None)
        fit_columns(self.table)

    def show_solvent_contacts(self, residues, contacts, caption: str) -> None:
        """The members of a solvent block that interact with one solute residue
        (:class:`energy.decomposition.blocks.SolventContacts`); ``residues`` the ResidueTable
        that names them."""
        self.contacts, self._contacts_caption = contacts, caption
        lab = residues.label
        cols = [Column("Residue", np.array([lab(int(k)) for k in contacts.residues], dtype=object),
                       sort_key=contacts.residues),
                Column("Total", contacts.total, "energy", "all terms of this residue with the solute residue")]
        # Coulomb and LJ always; the solvation terms only when computed (implicit solvent), so that
        # the residue names keep their width in a narrow dock
        cols += [Column(short_label(t), contacts.values[t], "energy") for t in NONBONDED_TERMS
                 if t in ("coulomb", "lj") or np.any(contacts.values[t])]
        cols.append(Column("Closest heavy atoms", contacts.min_heavy_distance, "distance",
                           "shortest heavy-atom distance between the two residues, Å"))
        self.contacts_model.set_columns(cols, len(contacts))
        self.caption.setText(caption)
        self.back.setVisible(False)
        self.pages.setCurrentWidget(self.contacts_table)
        fit_columns(self.contacts_table)

    def show_contacts_again(self) -> None:
        if self.contacts is not None:
            self.caption.setText(self._contacts_caption)
            self.back.setVisible(False)
            self.pages.setCurrentWidget(self.contacts_table)

    def showing_contacts(self) -> bool:
        return self.pages.currentWidget() is self.contacts_table

    def _on_member(self, index) -> None:
        if self.contacts is None or not index.isValid():
            return
        member = int(self.contacts.residues[self.contacts_model.record(index.row())])
        self.memberActivated.emit(self.contacts.residue, member)

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
