"""Hot spots: the alanine scan of the interface between the two groups, as a ranked table and a
bar chart along each chain's sequence.

The scan runs in a worker (:class:`app.gui.jobs.HotspotWorker`, started by
:class:`app.gui.controllers.hotspots.HotspotController`); this panel only shows it.  Picking a
residue (table row or bar) selects the residue pair (r, r) in the shared selection, so the map
draws its row and column; the panel lists the partner residues that lose the most.
"""
from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import (
    QDoubleSpinBox,
    QLabel,
    QLineEdit,
    QProgressBar,
    QPushButton,
    QSplitter,
    QVBoxLayout,
    QWidget,
)

from app.gui.models.array_table import ArrayTableModel, Column
from app.gui.views.flow_layout import FlowLayout
from app.gui.views.tables import fit_columns, record_table, show_row
from energy.analysis.hotspots import DEFAULT_INTERFACE_ANGSTROM, HOT_SPOT_KCAL_MOL
from energy.output.hotspots import CAVEAT, caveat
from energy.terms.registry import long_label, short_label

HOT = QColor("#b2182b")
GAIN = QColor("#2166ac")
PLAIN = QColor("#8c8c8c")


class HotspotView(QWidget):
    """Ranked alanine scan, per-chain bars and the lost contacts of the picked residue."""

    scanRequested = Signal(str, str, float)   # selection A, selection B, interface distance (A)
    cancelRequested = Signal()

    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.scan = None
        self.system = None
        self._syncing = False
        self.group_a = QLineEdit("segid A"); self.group_a.setObjectName("hotspotGroupA")
        self.group_b = QLineEdit("segid B"); self.group_b.setObjectName("hotspotGroupB")
        for w in (self.group_a, self.group_b):
            w.setMinimumWidth(90)
            w.setToolTip("MDAnalysis selection of one partner (whole residues)")
        self.interface = QDoubleSpinBox(); self.interface.setObjectName("hotspotInterface")
        self.interface.setRange(2.0, 30.0); self.interface.setDecimals(1); self.interface.setSuffix(" Å")
        self.interface.setValue(DEFAULT_INTERFACE_ANGSTROM)
        self.interface.setToolTip("A residue is at the interface when one of its atoms is this close "
                                  "to the other group")
        self.run_button = QPushButton("Scan interface"); self.run_button.setObjectName("hotspotRun")
        self.cancel_button = QPushButton("Cancel"); self.cancel_button.setObjectName("hotspotCancel")
        self.cancel_button.setEnabled(False)
        self.progress = QProgressBar(); self.progress.setObjectName("hotspotProgress")
        self.progress.setMaximumWidth(140); self.progress.setVisible(False)
        self.summary = QLabel("Truncate every interface residue to alanine and rank the change of the "
                              "A–B interaction."); self.summary.setObjectName("hotspotSummary")
        self.summary.setWordWrap(True)
        self.summary.setToolTip(CAVEAT)

        self.model = ArrayTableModel(self)
        self.table = record_table("hotspotTable", self.model)
        self.bars = pg.GraphicsLayoutWidget(); self.bars.setObjectName("hotspotBars")
        self.bars.setBackground("w")
        self.bars.setMinimumHeight(60)
        self.lost = QLabel("Pick a residue to list the contacts it loses."); self.lost.setObjectName("hotspotLost")
        self.lost.setWordWrap(True)
        self.lost.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self._bar_items = []
        self._picked = []

        top = FlowLayout()
        top.add_group(QLabel("A"), self.group_a)
        top.add_group(QLabel("B"), self.group_b)
        top.add_group(QLabel("Interface"), self.interface)
        top.add_group(self.run_button, self.cancel_button, self.progress)
        # table | bars side by side: the panel lives in a wide, low dock under the map
        split = QSplitter(Qt.Orientation.Horizontal)
        split.addWidget(self.table)
        split.addWidget(self.bars)
        split.setStretchFactor(0, 1); split.setStretchFactor(1, 1)
        split.setSizes([460, 540])
        self.table.setMinimumWidth(260)
        lay = QVBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2); lay.setSpacing(2)
        lay.addLayout(top); lay.addWidget(self.summary); lay.addWidget(self.lost); lay.addWidget(split, 1)

        self.run_button.clicked.connect(self._request)
        self.cancel_button.clicked.connect(self.cancelRequested)
        self.table.selectionModel().currentRowChanged.connect(self._on_row)
        selection.pairChanged.connect(self._on_pair)
        selection.groupsChanged.connect(self._on_groups)

    # -- running -------------------------------------------------------------------------------
    def _request(self) -> None:
        self.scanRequested.emit(self.group_a.text().strip(), self.group_b.text().strip(),
                                float(self.interface.value()))

    def _on_groups(self, a: str, b: str) -> None:
        if a and b:
            self.group_a.setText(a); self.group_b.setText(b)

    def set_running(self, running: bool) -> None:
        self.run_button.setEnabled(not running)
        self.cancel_button.setEnabled(running)
        self.progress.setVisible(running)
        if running:
            self.progress.setRange(0, 0)
            self.summary.setText("Scanning…")

    def set_progress(self, done: int, total: int) -> None:
        if total:
            self.progress.setRange(0, total); self.progress.setValue(done)

    def show_message(self, text: str) -> None:
        self.summary.setText(text)

    def set_unit(self, factor: float, unit: str) -> None:
        self.model.set_unit(factor, unit)

    # -- content -------------------------------------------------------------------------------
    def set_scan(self, system, scan) -> None:
        """Show a :class:`energy.analysis.hotspots.HotspotScan` of ``system`` (None clears)."""
        self.system, self.scan = system, scan
        if scan is None:
            self.model.set_columns([], 0)
            self._draw_bars()
            return
        n = len(scan)
        total = scan.total
        hot = np.where(scan.is_hot, "hot", "")
        columns = [Column("Rank", np.arange(1, n + 1), "number"),
                   Column("Residue", scan.label.astype(object), sort_key=scan.residue),
                   Column("Class", scan.side_chain_class.astype(object)),
                   Column("ΔE", total, "energy", "E_int(mutant) − E_int(wild type)"),
                   *(Column(f"Δ {short_label(t)}", v, "energy", f"change of the {long_label(t)} term")
                     for t, v in scan.delta.items()),
                   Column("Hot", hot.astype(object), tooltip=f"ΔE ≥ {HOT_SPOT_KCAL_MOL:g} kcal/mol (the "
                          "experimental ΔΔG convention, used as a marker)"),
                   Column("Flag", scan.flag.astype(object), tooltip="proline: truncation changes the backbone; "
                          "disulfide: truncation breaks the S–S bond"),
                   Column("Method", scan.method.astype(object))]
        self.model.set_columns(columns, n)
        fit_columns(self.table)
        n_hot = int(scan.is_hot.sum())
        self.summary.setToolTip(caveat(scan))
        self.summary.setText(
            f"<b>{n} interface residue(s)</b> within {scan.interface_angstrom:g} Å ({len(scan.skipped)} "
            f"left out: Gly, Ala, non-protein); {n_hot} with ΔE ≥ {HOT_SPOT_KCAL_MOL:g} kcal/mol. "
            f"Method: {', '.join(scan.methods)}. "
            + (f"ΔE includes the generalized-Born ({scan.settings.implicit_solvent.upper()}) solvation of "
               "binding. Single structure, no relaxation, entropy or explicit water: "
               if scan.settings.implicit_solvent else "Single structure, no relaxation, entropy or solvent: ")
            + "a guide to where to look.")
        self._draw_bars()

    def _draw_bars(self) -> None:
        self.bars.clear()
        self._bar_items = []
        self._picked = []
        if self.scan is None or self.system is None or not len(self.scan):
            return
        scan, system = self.scan, self.system
        chains = sorted(set(system.residues.chain[scan.residue].tolist()))
        total = scan.total
        for row, chain in enumerate(chains):
            # chains side by side: the dock under the map is wide and low
            plot = self.bars.addPlot(row=0, col=row)
            plot.setMenuEnabled(False); plot.hideButtons()
            plot.setTitle(f"<span style='color:#222'>chain {chain}</span>", size="9pt")
            plot.setLabel("left", "ΔE (kcal/mol)" if row == 0 else "")
            plot.setLabel("bottom", "residue number")
            sel = np.flatnonzero(system.residues.chain[scan.residue] == chain)
            x = system.residues.resid[scan.residue[sel]].astype(float)
            y = total[sel]
            colours = [HOT if v >= HOT_SPOT_KCAL_MOL else GAIN if v < 0 else PLAIN for v in y]
            item = pg.BarGraphItem(x=x, height=y, width=0.8, brushes=colours, pens=colours)
            plot.addItem(item)
            plot.addLine(y=HOT_SPOT_KCAL_MOL, pen=pg.mkPen(HOT, style=Qt.PenStyle.DashLine))
            plot.showGrid(y=True, alpha=0.2)
            self._bar_items.append((chain, x, y, scan.residue[sel], item, plot))
            plot.scene().sigMouseClicked.connect(self._on_bar_click)
            picked = pg.ScatterPlotItem(size=14, symbol="o", brush=None, pen=pg.mkPen("#00a000", width=2))
            picked.setZValue(10)
            plot.addItem(picked)
            self._picked.append(picked)

    def bar_data(self) -> dict:
        """Chain -> (residue numbers, dE) drawn, for tests and exports."""
        return {chain: (x, y) for chain, x, y, *_ in self._bar_items}

    def _on_bar_click(self, ev) -> None:
        for _chain, x, _y, residues, _item, plot in self._bar_items:
            if plot.sceneBoundingRect().contains(ev.scenePos()):
                px = plot.vb.mapSceneToView(ev.scenePos()).x()
                k = int(np.argmin(np.abs(x - px))) if len(x) else -1
                if k >= 0 and abs(x[k] - px) <= 0.5:
                    self.select_residue(int(residues[k]))
                return

    # -- selection -----------------------------------------------------------------------------
    def select_residue(self, residue: int) -> None:
        """Pick ``residue`` everywhere: (r, r) in the shared selection, its row here, its lost contacts."""
        self.selection.set_residue_pair((residue, residue))
        self._show_residue(residue)

    def _on_row(self, current, _previous) -> None:
        if self._syncing or not current.isValid() or self.scan is None:
            return
        self.select_residue(int(self.scan.residue[self.model.record(current.row())]))

    def _on_pair(self, pair) -> None:
        if self.scan is None or not pair:
            return
        i, j = self.selection.residue_pair()   # map rows -> residues (solvent blocks: None)
        hits = [r for r in ((i,) if i == j else (i, j)) if r in set(self.scan.residue.tolist())]
        if hits:
            self._show_residue(int(hits[0]))

    def _show_residue(self, residue: int) -> None:
        k = int(np.flatnonzero(self.scan.residue == residue)[0]) if residue in self.scan.residue else -1
        self._syncing = True
        try:
            show_row(self.table, self.model.row_of(k) if k >= 0 else -1)
        finally:
            self._syncing = False
        for (_c, x, y, residues, _i, _p), picked in zip(self._bar_items, self._picked):
            hit = np.flatnonzero(residues == residue)
            picked.setData(x[hit], y[hit])
        if k < 0:
            return
        lost = [(int(p), float(e)) for p, e in zip(self.scan.lost_partner[k], self.scan.lost_energy[k]) if p >= 0]
        text = ", ".join(f"{self.system.residues.label(p)} (+{e:.2f})" for p, e in lost) or "none"
        solvation = sum(v[k] for t, v in self.scan.delta.items() if t.startswith("solvation_"))
        solvated = f", solvation of binding {solvation:+.2f}" if self.scan.settings.implicit_solvent else ""
        self.lost.setText(f"<b>{self.scan.label[k]}</b> → Ala: ΔE {self.scan.total[k]:+.2f} kcal/mol "
                          f"(removed {self.scan.removed[k]:+.2f}, rebuilt CB hydrogens and charges "
                          f"{self.scan.rebuilt[k]:+.2f}{solvated}); contacts that lose the most: {text}")

    def picked_bars(self) -> list:
        """(residue number, dE) of the bar circled on each chain's plot."""
        out = []
        for picked in self._picked:
            xs, ys = picked.getData()
            out += [(float(x), float(y)) for x, y in zip(xs, ys)]
        return out

    def lost_text(self) -> str:
        return self.lost.text()
