"""Residue roster: chains and residues with per-residue totals, and the A / B group fields
(MDAnalysis selection syntax) whose interaction energy is computed in the background."""
from __future__ import annotations

import numpy as np
from PySide6.QtCore import QItemSelectionModel, Signal
from PySide6.QtWidgets import QFormLayout, QHBoxLayout, QLabel, QLineEdit, QPushButton, QVBoxLayout, QWidget

from app.gui.models.array_table import ArrayTableModel, Column, format_energy
from app.gui.views.tables import fit_columns, record_table
from energy.terms.registry import short_label


class ResidueRosterView(QWidget):
    groupsRequested = Signal(str, str)

    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.model = ArrayTableModel(self)
        self._syncing = False
        self.dataset = None
        self.table = record_table("rosterTable", self.model, size_from_rows=40)
        self.model.units_in_header = False        # the caption names the unit (narrow panel)
        self.units = QLabel(""); self.units.setObjectName("rosterUnits")
        self.units.setWordWrap(True)  # a caption sets no least width for its narrow dock
        self.find = QLineEdit(); self.find.setPlaceholderText("Filter residues")
        self.find.setClearButtonEnabled(True)

        self.group_a = QLineEdit(); self.group_a.setObjectName("groupA")
        self.group_b = QLineEdit(); self.group_b.setObjectName("groupB")
        for w, ph in ((self.group_a, "e.g. segid A"), (self.group_b, "e.g. segid B and resid 20-40")):
            w.setPlaceholderText(ph)
        self.apply = QPushButton("Group interaction"); self.apply.setObjectName("groupApply")
        self.apply.setToolTip("Group interaction: the nonbonded energy between group A and group B (Ctrl+I)")
        self.result = QLabel("—"); self.result.setObjectName("groupResult"); self.result.setWordWrap(True)
        form = QFormLayout(); form.setContentsMargins(2, 2, 2, 2)
        form.addRow("Group A", self.group_a)
        form.addRow("Group B", self.group_b)
        row = QHBoxLayout(); row.addWidget(self.apply); row.addStretch(1)
        form.addRow(row)
        form.addRow(self.result)
        lay = QVBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2)
        lay.addWidget(self.find); lay.addWidget(self.units); lay.addWidget(self.table, 1); lay.addLayout(form)
        self.set_unit(1.0, "kcal/mol")

        self.find.textChanged.connect(self._refilter)
        self.apply.clicked.connect(self._request)
        self.group_a.returnPressed.connect(self._request)
        self.group_b.returnPressed.connect(self._request)
        self.table.selectionModel().currentRowChanged.connect(self._on_row)
        selection.pairChanged.connect(self._on_pair)

    def set_dataset(self, ds) -> None:
        self.dataset = ds
        if ds is None:
            self.model.set_columns([], 0)
            return
        rp = ds.pairs
        pre = "Δ " if ds.is_difference else ""
        # the chain is in the residue label (A:ALA25): its own column starts hidden (column menu)
        cols = [Column("Residue", ds.labels, sort_key=np.arange(ds.n)), Column("Chain", ds.chains, hidden=True),
                Column(f"{pre}Total", rp.per_residue("total"), "energy",
                       "half of every pair entry with another residue plus the within-residue entry"),
                Column(f"{pre}{short_label('coulomb')}", rp.per_residue("coulomb"), "energy"),
                Column(f"{pre}{short_label('lj')}", rp.per_residue("lj"), "energy"),
                Column(f"{pre}Bonded", rp.per_residue("bonded"), "energy")]
        self.model.set_columns(cols, ds.n)
        self._lower = np.array([s.lower() for s in ds.labels], dtype=str)
        self._refilter()
        fit_columns(self.table)

    def set_unit(self, factor: float, unit: str) -> None:
        self.model.set_unit(factor, unit)
        self.units.setText(f"Per-residue energies (half of each pair entry), {unit}")

    def set_groups_text(self, a: str, b: str) -> None:
        self.group_a.setText(a); self.group_b.setText(b)

    def show_group_result(self, text: str) -> None:
        self.result.setText(text)

    def _request(self) -> None:
        self.groupsRequested.emit(self.group_a.text().strip(), self.group_b.text().strip())

    def _refilter(self) -> None:
        t = self.find.text().strip().lower()
        if self.dataset is None:
            return
        self.model.set_mask(None if not t else np.char.find(self._lower, t) >= 0)

    def _on_row(self, current, _prev) -> None:
        if self._syncing or not current.isValid():
            return
        i = self.model.record(current.row())
        p = self.selection.pair
        if p is not None and i in p:
            return
        self.selection.set_pair((i, i))

    def _on_pair(self, pair) -> None:
        pair = pair or None
        if pair is None:
            return
        row = self.model.row_of(pair[0])
        self._syncing = True
        try:
            if row >= 0:
                idx = self.model.index(row, 0)
                self.table.selectionModel().setCurrentIndex(
                    idx, QItemSelectionModel.SelectionFlag.ClearAndSelect | QItemSelectionModel.SelectionFlag.Rows)
                self.table.scrollTo(idx)
        finally:
            self._syncing = False


def describe_interaction(d: dict, factor: float, unit: str) -> str:
    return (f"Group interaction: <b>{format_energy(d['total'] * factor)} {unit}</b> "
            f"(Coulomb {format_energy(d['coulomb'] * factor)}, LJ {format_energy(d['lj'] * factor)}; "
            f"{d['n_pairs']:,} atom pairs, {d['n_atoms_a']} × {d['n_atoms_b']} atoms)")
