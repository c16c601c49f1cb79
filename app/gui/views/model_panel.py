"""Model comparison: clash severity under LJ 12-6 vs exp-6 for the top clashes, and the top
inter-chain pairs' Coulomb energy under each electrostatics model (one click, in a worker)."""
from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QHBoxLayout, QLabel, QPushButton, QSplitter, QTableView, QVBoxLayout, QWidget

from app.gui.models.array_table import ArrayTableModel, Column, format_energy
from app.gui.views.flow_layout import FlowLayout
from app.gui.views.tables import fit_columns, record_table
from energy.output.clash_report import atom_label
from energy.terms.registry import long_label

TOP_CLASHES = 10


def _table(name: str) -> QTableView:
    return record_table(name)


class ModelComparisonView(QWidget):
    compareRequested = Signal()

    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.clash_pairs = np.zeros((0, 2), np.intp)     # record -> (residue pair, atom pair)
        self.clash_atoms = np.zeros((0, 2), np.intp)
        self.elec_pairs = np.zeros((0, 2), np.intp)
        self.comparison = None

        self.severity_caption = QLabel("<b>Clash severity, LJ 12-6 vs exp-6</b> (top clashes of the clash check)")
        self.severity_caption.setWordWrap(True)
        self.severity_model = ArrayTableModel(self)
        self.severity = _table("severityTable"); self.severity.setModel(self.severity_model)
        self.severity.setTextElideMode(Qt.TextElideMode.ElideMiddle)   # both atom names stay in view

        self.compare_button = QPushButton("Compare electrostatics models")
        self.compare_button.setObjectName("compareElectrostatics")
        self.compare_button.setToolTip("Coulomb energy of the top inter-chain residue pairs under plain, "
                                       "ε = 4r, reaction-field and shifted electrostatics")
        self.elec_caption = QLabel("Top inter-chain pairs under each electrostatics model: press the button.")
        self.elec_caption.setObjectName("electrostaticsCaption"); self.elec_caption.setWordWrap(True)
        self.elec_model = ArrayTableModel(self)
        self.elec = _table("electrostaticsTable"); self.elec.setModel(self.elec_model)

        row = FlowLayout(margins=(0, 0, 0, 0))
        row.add_group(QLabel("<b>Electrostatics models</b>")); row.add_group(self.compare_button, right=True)
        left_w, right_w = QWidget(), QWidget()
        left = QVBoxLayout(left_w); left.setContentsMargins(0, 0, 2, 0)
        left.addWidget(self.severity_caption); left.addWidget(self.severity, 1)
        right = QVBoxLayout(right_w); right.setContentsMargins(2, 0, 0, 0)
        right.addLayout(row); right.addWidget(self.elec_caption); right.addWidget(self.elec, 1)
        self.splitter = QSplitter(Qt.Orientation.Horizontal)
        self.splitter.addWidget(left_w); self.splitter.addWidget(right_w)
        self.splitter.setStretchFactor(0, 4); self.splitter.setStretchFactor(1, 7)
        lay = QHBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2)
        lay.addWidget(self.splitter)

        self.compare_button.clicked.connect(self.compareRequested)
        self.severity.selectionModel().currentRowChanged.connect(self._on_severity_row)
        self.elec.selectionModel().currentRowChanged.connect(self._on_elec_row)

    def set_unit(self, factor: float, unit: str) -> None:
        self.factor, self.unit = float(factor), unit
        self.severity_model.set_unit(factor, unit)
        self.elec_model.set_unit(factor, unit)
        if getattr(self, "_severity_check", None) is not None:
            self._caption_severity()

    # -- LJ vs exp-6 -------------------------------------------------------------------------
    def set_clashes(self, system, check) -> None:
        if check is None or not len(check.report):
            self.severity_model.set_columns([], 0)
            self._severity_check = None
            self.severity_caption.setText("<b>Clash severity, LJ 12-6 vs exp-6</b>: no clash in this frame.")
            return
        rep = check.report
        n = min(TOP_CLASHES, len(rep))
        atoms = rep.pairs[:n]
        ri, rj = system.resindex[atoms[:, 0]], system.resindex[atoms[:, 1]]
        self.clash_atoms = atoms.copy()
        self.clash_pairs = np.stack([np.minimum(ri, rj), np.maximum(ri, rj)], axis=1)
        lj, e6 = rep.lj[:n], rep.exp6[:n]
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(e6 > 0, lj / e6, np.nan)
        pair_text = np.array([f"{atom_label(system, int(a))} – {atom_label(system, int(b))}"
                              for a, b in atoms], dtype=object)
        self.severity_model.set_columns([
            Column("Atom pair", pair_text),
            Column("Overlap", rep.overlap[:n], "distance"),
            Column("LJ 12-6", lj, "energy", f"force field {long_label('lj')}"),
            Column("exp-6", e6, "energy", f"exp-6, same Rmin and well depth, α = {rep.options.exp6_alpha:.3f}"),
            Column("LJ/exp-6", ratio, "number", "how many times harsher the 1/r¹² wall is")], n)
        self._severity_check = check
        self._caption_severity()
        fit_columns(self.severity)

    def _caption_severity(self) -> None:
        """The caption of the severity table, in the display unit."""
        check = self._severity_check
        rep = check.report
        n = min(TOP_CLASHES, len(rep))
        f, unit = getattr(self, "factor", 1.0), getattr(self, "unit", "kcal/mol")
        self.severity_caption.setText(
            f"<b>Clash severity, LJ 12-6 vs exp-6</b>: top {n} of {len(rep)} clash(es), frame "
            f"{check.frame_index}; exp-6 α = {rep.options.exp6_alpha:.3f}. Sum LJ "
            f"{format_energy(float(rep.lj.sum()) * f)}, sum exp-6 {format_energy(float(rep.exp6.sum()) * f)} {unit}.")

    def _on_severity_row(self, current, _prev) -> None:
        if not current.isValid():
            return
        k = self.severity_model.record(current.row())
        self.selection.set_residue_pair(tuple(int(v) for v in self.clash_pairs[k]))
        self.selection.set_atom_pair(tuple(int(v) for v in self.clash_atoms[k]))

    # -- electrostatics -------------------------------------------------------------------------
    def set_busy(self, busy: bool) -> None:
        self.compare_button.setEnabled(not busy)
        if busy:
            self.elec_caption.setText("computing the four models…")

    def show_message(self, text: str) -> None:
        self.elec_caption.setText(text)

    def set_comparison(self, comparison) -> None:
        self.comparison = comparison
        c = comparison
        n = len(c.pairs)
        self.elec_pairs = np.asarray(c.pairs, np.intp).reshape(-1, 2)
        cols = [Column("Residue pair", np.array(c.labels, dtype=object)),
                Column("Current", c.current, "energy", "Coulomb entry under the current settings")]
        for key, title in c.models:
            cols.append(Column(title, c.coulomb[key], "energy", c.settings[key]))
        self.elec_model.set_columns(cols, n)
        self.elec_caption.setText(
            f"Coulomb energy of the top {n} inter-chain pairs (by |Coulomb| now), every model with "
            f"cutoff {c.cutoff:g} Å; ε = 1 except ε = 4r. Pick a row to select the pair.")
        fit_columns(self.elec)

    def _on_elec_row(self, current, _prev) -> None:
        if not current.isValid():
            return
        k = self.elec_model.record(current.row())
        self.selection.set_residue_pair(tuple(int(v) for v in self.elec_pairs[k]))
