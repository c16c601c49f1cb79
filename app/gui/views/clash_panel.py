"""Clash check: ranked steric clashes of the frame on screen and per-residue clash counts.

The search itself is :func:`energy.analysis.clashes.find_clashes` (run by the window in a worker); this
panel shows the report.  Picking a clash selects its residue pair and its atom pair in the shared
selection, so the map, the ledger, the atom table and the distance profile all go to it.
"""
from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QDoubleSpinBox,
    QLabel,
    QSplitter,
    QTableView,
    QVBoxLayout,
    QWidget,
)

from app.gui.models.array_table import ArrayTableModel, Column
from app.gui.views.flow_layout import FlowLayout
from app.gui.views.tables import fit_columns, record_table, show_row
from energy.analysis.clashes import DEFAULT_OVERLAP, ClashOptions
from energy.output.clash_report import atom_label
from energy.terms.registry import long_label, short_label

RADII = {"bondi": "Bondi (1964) by element", "forcefield": "Force field (pair Rmin)"}


def _table(name: str) -> QTableView:
    return record_table(name)


class ClashCheckView(QWidget):
    optionsChanged = Signal(object)     # ClashOptions
    overlayToggled = Signal(bool)

    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.check = None                # energy.analysis.model_checks.ClashCheck
        self.system = None
        self._syncing = False
        self._debounce = QTimer(self, singleShot=True, interval=300)
        self._debounce.timeout.connect(self._emit_options)

        self.overlap = QDoubleSpinBox(); self.overlap.setObjectName("clashOverlap")
        self.overlap.setRange(0.0, 3.0); self.overlap.setSingleStep(0.1); self.overlap.setDecimals(2)
        self.overlap.setSuffix(" Å"); self.overlap.setValue(DEFAULT_OVERLAP)
        self.overlap.setToolTip("Flag atom pairs whose spheres overlap by at least this much "
                                "(0.4 Å: common practice in structure validation)")
        self.radii = QComboBox(); self.radii.setObjectName("clashRadii")
        for key, text in RADII.items():
            self.radii.addItem(text, key)
        self.hydrogens = QCheckBox("Include hydrogens"); self.hydrogens.setObjectName("clashHydrogens")
        self.mark = QCheckBox("Ring on map"); self.mark.setObjectName("clashMark"); self.mark.setChecked(True)
        self.summary = QLabel("No structure checked yet."); self.summary.setObjectName("clashSummary")
        self.summary.setWordWrap(True)

        self.model = ArrayTableModel(self)
        self.model.units_in_header = False        # the summary names the units (narrow panel)
        self.table = _table("clashTable"); self.table.setModel(self.model)
        self.table.setTextElideMode(Qt.TextElideMode.ElideLeft)   # "…P33 CZ3": the atom name stays
        self.counts_model = ArrayTableModel(self)
        self.counts = _table("clashCounts"); self.counts.setModel(self.counts_model)

        top = FlowLayout()
        top.add_group(QLabel("Flag overlaps from"), self.overlap)
        top.add_group(QLabel("Radii"), self.radii)
        top2 = FlowLayout(margins=(4, 0, 4, 2))
        top2.add_group(self.hydrogens); top2.add_group(self.mark)
        split = QSplitter(Qt.Orientation.Vertical)
        split.addWidget(self.table)
        box = QWidget(); bl = QVBoxLayout(box); bl.setContentsMargins(0, 0, 0, 0); bl.setSpacing(1)
        bl.addWidget(QLabel("Clashes per residue")); bl.addWidget(self.counts, 1)
        split.addWidget(box)
        split.setStretchFactor(0, 3); split.setStretchFactor(1, 2)
        lay = QVBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2); lay.setSpacing(2)
        lay.addLayout(top); lay.addLayout(top2); lay.addWidget(self.summary); lay.addWidget(split, 1)

        self.overlap.valueChanged.connect(lambda: self._debounce.start())
        self.radii.currentIndexChanged.connect(lambda: self._debounce.start())
        self.hydrogens.toggled.connect(lambda: self._debounce.start())
        self.mark.toggled.connect(self.overlayToggled)
        self.table.selectionModel().currentRowChanged.connect(self._on_row)
        self.counts.selectionModel().currentRowChanged.connect(self._on_count_row)
        selection.atomPairChanged.connect(self._on_atom_pair)

    # -- options ------------------------------------------------------------------------------
    def options(self) -> ClashOptions:
        return ClashOptions(overlap=self.overlap.value(), radii=self.radii.currentData(),
                            include_hydrogens=self.hydrogens.isChecked())

    def _emit_options(self) -> None:
        self.summary.setText("checking…")
        self.optionsChanged.emit(self.options())

    # -- content ------------------------------------------------------------------------------
    def set_unit(self, factor: float, unit: str) -> None:
        self.model.set_unit(factor, unit)
        if getattr(self, "check", None) is not None:      # the summary names the unit
            self.set_check(self.system, self.check)

    def show_message(self, text: str) -> None:
        self.summary.setText(text)

    def set_check(self, system, check) -> None:
        """Show a :class:`energy.analysis.model_checks.ClashCheck` of ``system`` (None clears)."""
        self.system, self.check = system, check
        if check is None:
            self.model.set_columns([], 0)
            self.counts_model.set_columns([], 0)
            self.summary.setText("No structure checked yet.")
            return
        rep = check.report
        n = len(rep)
        ri = system.resindex[rep.pairs[:, 0]] if n else np.zeros(0, np.intp)
        rj = system.resindex[rep.pairs[:, 1]] if n else np.zeros(0, np.intp)
        lab_i = np.array([atom_label(system, int(a)) for a in rep.pairs[:, 0]], dtype=object)
        lab_j = np.array([atom_label(system, int(b)) for b in rep.pairs[:, 1]], dtype=object)
        flags = np.array([("1-4 " if a else "") + ("H-bond pair" if b else "")
                          for a, b in zip(rep.is_14, rep.is_hbond)], dtype=object)
        self._res = np.stack([np.minimum(ri, rj), np.maximum(ri, rj)], axis=1) if n else np.zeros((0, 2), np.intp)
        self.model.set_columns([
            Column("Atom i", lab_i), Column("Atom j", lab_j),
            Column("Overlap", rep.overlap, "distance", "contact − r"),
            Column(short_label("lj"), rep.lj, "energy", f"{long_label('lj')} energy of the pair"),
            Column("exp-6", rep.exp6, "energy", "exp-6 energy, same minimum, softer wall"),
            Column("r", rep.distance, "distance", "distance between the atom centres"),
            Column("Contact", rep.contact, "distance", "contact distance R_i + R_j (or H-bond contact)"),
            Column("Note", flags),
            # the rows come in rank order; the rank itself is for other sort orders (last)
            Column("Rank", np.arange(1, n + 1), "number", "rank: overlap, then LJ energy")], n)
        counts = check.residue_counts
        hit = np.flatnonzero(counts)
        labels = np.array([system.residues.label(int(r)) for r in hit], dtype=object)
        self._count_res = hit
        self.counts_model.set_columns([
            Column("Residue", labels, sort_key=hit),
            Column("Clashes", counts[hit].astype(np.int64), "number"),
            Column("Worst overlap", np.array([self._worst_of(int(r)) for r in hit]), "distance")],
            len(hit))
        self.counts.sortByColumn(1, Qt.SortOrder.DescendingOrder)
        o = rep.options
        crit = f"overlap ≥ {o.overlap:g} Å" if o.overlap is not None else "LJ criterion"
        scope = "all atoms" if o.include_hydrogens else "heavy atoms"
        self.summary.setText(
            f"<b>{n} clash(es)</b> in frame {check.frame_index} ({crit}, {RADII[o.radii].split(' (')[0]} "
            f"radii, {scope}); {len(check.residue_pairs)} residue pair(s), {len(hit)} residue(s); "
            f"energies in {self.model.unit}, distances in Å. "
            + ("Pick a row to select it everywhere." if n else "")
            + "".join(f"<br><i>{note}</i>" for note in rep.notes))
        fit_columns(self.table)
        fit_columns(self.counts)
        self._on_atom_pair(self.selection.atom_pair or ())

    def _worst_of(self, residue: int) -> float:
        rows = np.flatnonzero((self._res[:, 0] == residue) | (self._res[:, 1] == residue))
        return float(self.check.report.overlap[rows].max()) if len(rows) else float("nan")

    # -- selection ----------------------------------------------------------------------------
    def select_clash(self, rank_index: int) -> None:
        """Select clash ``rank_index`` (0-based row of the ranked report) everywhere."""
        rep = self.check.report
        a, b = (int(v) for v in rep.pairs[rank_index])
        self.selection.set_residue_pair(tuple(self._res[rank_index]))
        self.selection.set_atom_pair((a, b))

    def _on_row(self, current, _previous) -> None:
        if self._syncing or not current.isValid() or self.check is None:
            return
        self.select_clash(self.model.record(current.row()))

    def _on_count_row(self, current, _previous) -> None:
        """A residue: select its worst clash."""
        if self._syncing or not current.isValid() or self.check is None:
            return
        r = int(self._count_res[self.counts_model.record(current.row())])
        rows = np.flatnonzero((self._res[:, 0] == r) | (self._res[:, 1] == r))
        if len(rows):
            self._select_row_of(int(rows[0]))
            self.select_clash(int(rows[0]))

    def _select_row_of(self, record: int) -> None:
        row = self.model.row_of(record)
        self._syncing = True
        try:
            show_row(self.table, row)
        finally:
            self._syncing = False

    def _on_atom_pair(self, pair) -> None:
        if self.check is None:
            return
        pair = tuple(pair) if pair else None
        rec = -1
        if pair is not None and len(self.check.report):
            p = self.check.report.pairs
            lo, hi = min(pair), max(pair)
            hit = np.flatnonzero((p[:, 0] == lo) & (p[:, 1] == hi))
            rec = int(hit[0]) if len(hit) else -1
        self._select_row_of(rec)

    def selected_clash(self) -> int:
        idx = self.table.selectionModel().currentIndex()
        return self.model.record(idx.row()) if idx.isValid() else -1
