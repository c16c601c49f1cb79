"""Distance profile: energy against distance for the atom pairs of the selected residue pair,
and for a selected atom pair its whole LJ and Coulomb curves with Rmin and the well depth.

The y axis is symmetric-logarithmic by default, y' = sign(E) log10(1 + |E|/E0) with E0 = 0.1
(display unit), so a 1e5 clash and a -0.2 contact are both readable; or linear, clipped.
"""
from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QCheckBox, QComboBox, QLabel, QVBoxLayout, QWidget

from app.gui.models.array_table import format_energy
from app.gui.views.flow_layout import FlowLayout, compact_combo
from energy.decomposition.atom_pairs import pair_curve

E0 = 0.1
CLIP_LIMITS = (2.0, 5.0, 20.0, 100.0)
COULOMB_COLOR = "#1f77b4"
LJ_COLOR = "#e6550d"
TOTAL_COLOR = "#333333"
EXP6_COLOR = "#756bb1"


def symlog(y):
    y = np.asarray(y, dtype=float)
    return np.sign(y) * np.log10(1.0 + np.abs(y) / E0)


def symlog_inverse(t):
    t = np.asarray(t, dtype=float)
    return np.sign(t) * E0 * (10.0 ** np.abs(t) - 1.0)


class EnergyAxis(pg.AxisItem):
    """Left axis that labels a symmetric-log scale with the energies themselves."""

    def __init__(self, *a, **kw):
        super().__init__(*a, **kw)
        self.symlog = True
        self.enableAutoSIPrefix(False)

    def tickValues(self, minVal, maxVal, size):
        if not self.symlog:
            return super().tickValues(minVal, maxVal, size)
        decades = [0.0] + [s * 10.0 ** k for k in range(-1, 9) for s in (1, -1)]
        vals = sorted(float(symlog(v)) for v in decades)
        vals = [v for v in vals if minVal <= v <= maxVal]
        room = max(2, int(size / 18))
        for keep in ((0.0, 0.1, 1.0, 100.0, 1e4, 1e6, 1e8), (0.0, 1.0, 100.0, 1e4, 1e6, 1e8),
                     (0.0, 100.0, 1e4, 1e8)):
            if len(vals) <= room:
                break
            vals = [v for v in vals if abs(round(float(symlog_inverse(v)), 6)) in keep]
        return [(1.0, vals)]

    def tickStrings(self, values, scale, spacing):
        if not self.symlog:
            return super().tickStrings(values, scale, spacing)
        out = []
        for v in values:
            e = float(symlog_inverse(v))
            a = abs(e)
            power = f"{'-' if e < 0 else ''}1e{round(math.log10(a))}" if a >= 1e4 else ""
            out.append("0" if a < 1e-9 else (f"{e:g}" if a < 1e4 else power))
        return out


class DistanceProfileView(QWidget):
    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.factor, self.unit = 1.0, "kcal/mol"
        self.mode = "symlog"
        self.clip_limit = 5.0
        self.system = None
        self.settings = None
        self.contrib = None
        self.curve_data = None    # (r, coulomb, lj, params, distance) of the selected atom pair

        self.scale_box = QComboBox(); self.scale_box.setObjectName("profileScale")
        self.scale_box.addItem("Symmetric log", "symlog")
        for lim in CLIP_LIMITS:
            self.scale_box.addItem(f"Linear, clipped at ±{lim:g}", lim)
        self.info = QLabel(" "); self.info.setObjectName("profileInfo"); self.info.setWordWrap(True)
        compact_combo(self.scale_box, 12)
        bar = FlowLayout()
        bar.add_group(QLabel("Energy axis"), self.scale_box)
        self.key = QLabel(""); self.key.setObjectName("profileKey"); self.key.setWordWrap(True)
        self.show_both = QCheckBox("LJ and exp-6 curves"); self.show_both.setObjectName("profileBoth")
        self.show_both.setChecked(True)
        self.show_both.setToolTip("Overlay the other LJ term form (LJ 12-6 or exp-6) for the selected atom pair")
        bar.add_group(self.show_both, right=True)

        self.axis = EnergyAxis("left")
        self.plot = pg.PlotWidget(axisItems={"left": self.axis}, background="w")
        self.plot.setMenuEnabled(False)
        self.plot.showGrid(x=True, y=True, alpha=0.15)
        self.plot.setLabel("bottom", "distance (Å)")
        self.zero = pg.InfiniteLine(pos=0, angle=0, pen=pg.mkPen("#888", width=1))
        self.plot.addItem(self.zero)
        mk = lambda color, sym, name: pg.ScatterPlotItem(  # noqa: E731
            size=7, symbol=sym, pen=pg.mkPen(color), brush=pg.mkBrush(color + "99"), name=name)
        self.coul_points = mk(COULOMB_COLOR, "o", "Coulomb (atom pairs)")
        self.lj_points = mk(LJ_COLOR, "t", "LJ (atom pairs)")
        for item in (self.coul_points, self.lj_points):
            self.plot.addItem(item)
            item.sigClicked.connect(self._on_point_clicked)
        self.coul_curve = self.plot.plot([], [], pen=pg.mkPen(COULOMB_COLOR, width=2), name="Coulomb curve")
        self.lj_curve = self.plot.plot([], [], pen=pg.mkPen(LJ_COLOR, width=2), name="LJ curve")
        # the other LJ term form's curve (exp-6 when the engine uses LJ, and vice versa)
        self.alt_curve = self.plot.plot([], [], pen=pg.mkPen(EXP6_COLOR, width=2, style=Qt.PenStyle.DotLine),
                                        name="other LJ term form")
        self.total_curve = self.plot.plot([], [], pen=pg.mkPen(TOTAL_COLOR, width=1.5, style=Qt.PenStyle.DashLine),
                                          name="sum")
        self.now_line = pg.InfiniteLine(angle=90, pen=pg.mkPen("#2ca02c", width=2))
        self.now_line.setVisible(False)
        self.plot.addItem(self.now_line)
        self.well = pg.ScatterPlotItem(size=11, symbol="d", pen=pg.mkPen("#000"), brush=pg.mkBrush("#ffd92f"))
        self.plot.addItem(self.well)
        self.note = pg.TextItem("", color="#111", anchor=(-0.05, -0.15), fill=pg.mkBrush(255, 255, 255, 200))
        self.note.setZValue(20)
        self.plot.addItem(self.note)
        self.selected = pg.ScatterPlotItem(size=15, symbol="o", pen=pg.mkPen("#2ca02c", width=3), brush=None)
        self.plot.addItem(self.selected)

        lay = QVBoxLayout(self); lay.setContentsMargins(0, 0, 0, 0); lay.setSpacing(2)
        lay.addLayout(bar); lay.addWidget(self.key); lay.addWidget(self.plot, 1); lay.addWidget(self.info)
        self.scale_box.currentIndexChanged.connect(self._on_scale)
        self.show_both.toggled.connect(self._redraw)
        selection.atomPairChanged.connect(self._on_atom_pair)
        self._redraw()

    # -- inputs ---------------------------------------------------------------------------
    def set_unit(self, factor: float, unit: str) -> None:
        self.factor, self.unit = factor, unit
        self._redraw()

    def show_pair(self, system, settings, contrib) -> None:
        self.system, self.settings, self.contrib = system, settings, contrib
        self.curve_data = None
        self._redraw()

    def _on_scale(self) -> None:
        data = self.scale_box.currentData()
        if data == "symlog":
            self.mode = "symlog"
        else:
            self.mode, self.clip_limit = "clip", float(data)
        self._redraw()

    def _y(self, e):
        e = np.asarray(e, dtype=float) * self.factor
        return symlog(e) if self.mode == "symlog" else np.clip(e, -self.clip_limit, self.clip_limit)

    def _on_point_clicked(self, _item, points, _ev=None) -> None:
        if len(points):
            k = int(points[0].data())
            p = self.contrib.energies.pairs[k]
            self.selection.set_atom_pair((int(p[0]), int(p[1])))

    def _on_atom_pair(self, pair) -> None:
        pair = pair or None
        self.curve_data = None
        if pair is not None and self.contrib is not None and self.system is not None:
            p = self.contrib.energies.pairs
            hit = np.flatnonzero((p[:, 0] == pair[0]) & (p[:, 1] == pair[1]))
            d = float(self.contrib.energies.distance[hit[0]]) if len(hit) else None
            if d is not None:
                r = np.linspace(0.6, max(10.0, d * 1.3), 600)
                coul, lj, params = pair_curve(self.system, self.settings, pair[0], pair[1], r)
                self.curve_data = (r, coul, lj, params, d, int(hit[0]))
                _, self.alt_lj, _ = pair_curve(self.system, self.alt_settings(), pair[0], pair[1], r)
                _, alt_d, _ = pair_curve(self.system, self.alt_settings(), pair[0], pair[1], [d])
                self.alt_at_distance = float(alt_d[0])
        self._redraw()

    @property
    def vdw_model(self) -> str:
        return "lj" if self.settings is None else self.settings.vdw

    def alt_settings(self):
        """The current settings with the other LJ term form (same exp-6 steepness)."""
        from dataclasses import replace

        from energy.model.settings import EnergySettings
        s = self.settings or EnergySettings()
        return replace(s, vdw="exp6" if s.vdw == "lj" else "lj")

    def _update_key(self) -> None:
        lj_name = "LJ 12-6" if self.vdw_model == "lj" else "exp-6"
        alt = "exp-6" if self.vdw_model == "lj" else "LJ 12-6"
        # one short line: points are the atom pairs, lines the curves of the selected pair
        text = (f"<span style='color:{COULOMB_COLOR}'>● Coulomb</span> &nbsp;"
                f"<span style='color:{LJ_COLOR}'>▲ {lj_name}</span> &nbsp;— curves, ╌ sum &nbsp;◆ minimum")
        if self.show_both.isChecked():
            text += f" &nbsp;<span style='color:{EXP6_COLOR}'>┈ {alt}</span>"
        self.key.setToolTip("Points: every atom pair of the residue pair (● Coulomb, ▲ the computed "
                            f"{lj_name} energy). Lines: the selected atom pair's curves in the same colours, "
                            "dashed their sum; ◆ the LJ minimum (Rmin, well depth)"
                            + (f"; dotted: the {alt} curve with the same Rmin and well depth."
                               if self.show_both.isChecked() else "."))
        self.key.setText(text)

    # -- drawing ----------------------------------------------------------------------------
    def _redraw(self) -> None:
        self._update_key()
        self.axis.symlog = self.mode == "symlog"
        self.axis.picture = None
        label = "energy" + (" (symmetric log)" if self.mode == "symlog" else
                            f" (clipped at ±{self.clip_limit:g})")
        self.plot.setLabel("left", f"{label}, {self.unit}")
        c = self.contrib
        if c is None or c.n_nonbonded == 0:
            for item in (self.coul_points, self.lj_points, self.selected, self.well):
                item.setData([], [])
            for curve in (self.coul_curve, self.lj_curve, self.total_curve, self.alt_curve):
                curve.setData([], [])
            self.now_line.setVisible(False)
            self.note.setText("")
            self.note.setVisible(False)
            self.info.setText("No nonbonded atom pairs for this selection." if c is not None else
                              "Select a residue pair; click a point or an atom row for its curves.")
            return
        e = c.energies
        idx = np.arange(len(e))
        self.coul_points.setData(e.distance, self._y(e.coulomb), data=idx)
        self.lj_points.setData(e.distance, self._y(e.lj), data=idx)
        big = float(np.max(np.abs(e.total))) * self.factor
        self.info.setText(f"{len(e)} atom pairs, {int(e.is_exception.sum())} of them 1-2/1-3/1-4 "
                          f"exceptions; largest |pair energy| {format_energy(big)} {self.unit}. "
                          "Click a point for its curves.")
        if self.curve_data is None:
            for curve in (self.coul_curve, self.lj_curve, self.total_curve, self.alt_curve):
                curve.setData([], [])
            self.selected.setData([], [])
            self.well.setData([], [])
            self.now_line.setVisible(False)
            self.note.setText("")
            self.note.setVisible(False)
            self._fit(e.distance, np.concatenate([self._y(e.coulomb), self._y(e.lj)]))
            return
        r, coul, lj, params, d, k = self.curve_data
        self.coul_curve.setData(r, self._y(coul))
        self.lj_curve.setData(r, self._y(lj))
        self.total_curve.setData(r, self._y(coul + lj))
        if self.show_both.isChecked():
            self.alt_curve.setData(r, self._y(self.alt_lj))
        else:
            self.alt_curve.setData([], [])
        self.now_line.setPos(d)
        self.now_line.setVisible(True)
        self.selected.setData([d, d], [float(self._y(e.coulomb[k])), float(self._y(e.lj[k]))])
        rmin, eps = params["rmin"], params["eps"]
        if eps > 0 and rmin > 0:
            self.well.setData([rmin], [float(self._y(-eps))])
        else:
            self.well.setData([], [])
        s = self.system
        a, b = self.selection.atom_pair
        name = s.atom_label
        kind = " (1-4 pair, own parameters)" if params["is_exception"] else ""
        f = self.factor
        if eps > 0 and rmin > 0:
            self.note.setText(f"Rmin {rmin:.2f} Å\nwell depth {-eps * f:.3f} {self.unit}")
            self.note.setPos(rmin, float(self._y(-eps)))
            x0, x1 = self.plot.viewRange()[0]
            # right of the diamond, or left of it when that would run past the plot's right edge
            self.note.setAnchor((1.05, -0.15) if rmin > x0 + 0.55 * (x1 - x0) else (-0.05, -0.15))
        else:
            self.note.setText("")
        self.note.setVisible(bool(self.note.textItem.toPlainText()))
        self.info.setText(
            f"<b>{name(a)} – {name(b)}</b>{kind}: r = {d:.2f} Å (green line), "
            f"Coulomb {format_energy(e.coulomb[k] * f)}, {'LJ' if self.vdw_model == 'lj' else 'exp-6'} "
            f"{format_energy(e.lj[k] * f)} {self.unit} "
            f"({'exp-6' if self.vdw_model == 'lj' else 'LJ'} would give {format_energy(self.alt_at_distance * f)}); "
            f"Rmin {rmin:.2f} Å, well depth {-eps * f:.3f} {self.unit} (diamond), qq {params['qq']:+.3f} e²")
        ys = np.concatenate([self._y(e.coulomb), self._y(e.lj), self._y(coul + lj)[r >= 0.8 * min(d, rmin or d)]])
        self._fit(np.concatenate([e.distance, [r[0], r[-1]]]), ys)

    def _fit(self, xs, ys) -> None:
        xs = np.asarray(xs, float); ys = np.asarray(ys, float)
        xs, ys = xs[np.isfinite(xs)], ys[np.isfinite(ys)]
        if not len(xs) or not len(ys):
            return
        x0, x1 = max(0.0, float(xs.min()) - 0.3), float(xs.max()) + 0.3
        y0, y1 = min(float(ys.min()), 0.0), max(float(ys.max()), 0.0)
        pad = 0.08 * ((y1 - y0) or 1.0)
        self.plot.setRange(xRange=(x0, x1), yRange=(y0 - pad, y1 + pad), padding=0)
        self.plot.getViewBox().updateMatrix()  # the new view transform now, not during the paint (one paint)
