"""Time series of the selected residue pair over the trajectory: energy per term (top) and the
minimum heavy-atom distance (bottom), a line at the frame on screen; a click jumps to a frame."""
from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QCheckBox, QHBoxLayout, QLabel, QVBoxLayout, QWidget

from app.gui.models.array_table import format_energy
from app.gui.views.profile_plot import EnergyAxis, symlog
from energy.terms.registry import BONDED_TERMS, short_label

#: Curves drawn: key, legend name, colour.  ``bonded`` is the sum of the bonded terms.
CURVES = (("coulomb", short_label("coulomb"), "#1f77b4"), ("lj", short_label("lj"), "#e6550d"),
          ("bonded", "Bonded (sum)", "#31a354"), ("total", "Total", "#222222"))


class TimeSeriesView(QWidget):
    frameClicked = Signal(int)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.factor, self.unit = 1.0, "kcal/mol"
        self.series = None
        self.title = ""
        self.current = None
        self.caption = QLabel("Open a structure with a trajectory (DCD, XTC, …) to follow a residue pair "
                              "over the frames.")
        self.caption.setObjectName("seriesCaption"); self.caption.setWordWrap(True)
        self.graphics = pg.GraphicsLayoutWidget()
        self.graphics.setBackground("w")
        self.energy_axis = EnergyAxis("left")
        self.energy = self.graphics.addPlot(row=0, col=0, axisItems={"left": self.energy_axis})
        self._raw = {}
        self.distance = self.graphics.addPlot(row=1, col=0)
        self.graphics.ci.layout.setRowStretchFactor(0, 3)
        self.graphics.ci.layout.setRowStretchFactor(1, 2)
        self.distance.setXLink(self.energy)
        for p in (self.energy, self.distance):
            p.setMenuEnabled(False); p.hideButtons()
            p.showGrid(x=True, y=True, alpha=0.15)
            p.getAxis("left").enableAutoSIPrefix(False)
            p.getAxis("left").setWidth(56)
        self.distance.setLabel("bottom", "frame")
        self.distance.setLabel("left", "closest (Å)")
        self.curves = {}
        for key, name, color in CURVES:
            self.curves[key] = self.energy.plot([], [], pen=pg.mkPen(color, width=2 if key == "total" else 1.6),
                                                symbol="o", symbolSize=4, symbolPen=None,
                                                symbolBrush=pg.mkBrush(color), name=name)
        self.dist_curve = self.distance.plot([], [], pen=pg.mkPen("#6a51a3", width=1.8), symbol="o",
                                             symbolSize=4, symbolPen=None, symbolBrush=pg.mkBrush("#6a51a3"))
        self.lines = []
        for p in (self.energy, self.distance):
            line = pg.InfiniteLine(angle=90, pen=pg.mkPen("#2ca02c", width=2))
            line.setVisible(False)
            p.addItem(line)
            self.lines.append(line)
        lay = QVBoxLayout(self); lay.setContentsMargins(2, 2, 2, 2); lay.setSpacing(2)
        self.key = QLabel(" &nbsp; ".join(f"<span style='color:{c}'>━ {n}</span>" for _k, n, c in CURVES)
                          + " &nbsp; <span style='color:#6a51a3'>━ closest heavy atoms</span>"
                          + " &nbsp; <span style='color:#2ca02c'>┃ frame on screen</span>")
        self.key.setObjectName("seriesKey")
        # A clash at the first frame (hundreds of kcal/mol) would flatten every later frame on a
        # linear axis; the symmetric-log axis keeps both readable (the same scale as the profile).
        self.symlog_box = QCheckBox("Symmetric log energy axis")
        self.symlog_box.setChecked(True)
        self.symlog_box.toggled.connect(lambda _on: self._redraw())
        self.key.setWordWrap(True)
        row = QHBoxLayout(); row.setContentsMargins(0, 0, 0, 0)
        row.addWidget(self.key, 1); row.addWidget(self.symlog_box, 0, Qt.AlignmentFlag.AlignTop)
        lay.addWidget(self.caption); lay.addLayout(row); lay.addWidget(self.graphics, 1)
        self.graphics.scene().sigMouseClicked.connect(self._on_click)
        self._redraw()

    # -- inputs ---------------------------------------------------------------------------
    def set_unit(self, factor: float, unit: str) -> None:
        self.factor, self.unit = float(factor), unit
        self._redraw()

    def set_series(self, series: dict | None, title: str = "", message: str = "") -> None:
        """``series``: ``frame`` (n,), the energy columns (kcal/mol) and ``min_heavy_distance``
        (A); None with a ``message`` clears the plot."""
        self.series, self.title = series, title
        self._message = message
        self._redraw()

    def set_current(self, frame: int | None) -> None:
        self.current = frame
        for line in self.lines:
            line.setVisible(frame is not None and self.series is not None)
            if frame is not None:
                line.setPos(frame)

    def curve_values(self, key: str) -> np.ndarray:
        """The energies drawn for ``key`` (display units; before any axis transform)."""
        return self._raw.get(key, np.zeros(0))

    # -- drawing ------------------------------------------------------------------------------
    def _redraw(self) -> None:
        log = self.symlog_box.isChecked() if hasattr(self, "symlog_box") else True
        self.energy_axis.symlog = log
        self.energy.setLabel("left", f"E ({self.unit})")
        s = self.series
        if s is None:
            self._raw = {}
            for c in (*self.curves.values(), self.dist_curve):
                c.setData([], [])
            self.caption.setText(getattr(self, "_message", "") or self.caption.text())
            self.set_current(self.current)
            return
        x = np.asarray(s["frame"], float)
        bonded = sum(np.asarray(s[t], float) for t in BONDED_TERMS)
        values = {"coulomb": s["coulomb"], "lj": s["lj"], "bonded": bonded, "total": s["total"]}
        for key, name, _color in CURVES:
            y = np.asarray(values[key], float) * self.factor
            show = bool(key != "bonded" or np.any(y != 0))
            self._raw[key] = y if show else np.zeros(0)
            shown = symlog(y) if log else y
            self.curves[key].setData(x if show else [], shown if show else [])
            self.curves[key].setVisible(show)
        d = np.asarray(s["min_heavy_distance"], float)
        ok = np.isfinite(d)
        self.dist_curve.setData(x[ok], d[ok])
        tot = np.asarray(s["total"], float) * self.factor
        if len(tot):
            k_lo, k_hi = int(np.argmin(tot)), int(np.argmax(tot))
            self.caption.setText(
                f"<b>{self.title}</b> over {len(x)} frames: total from {format_energy(tot[k_lo])} "
                f"(frame {int(x[k_lo])}) to {format_energy(tot[k_hi])} {self.unit} (frame {int(x[k_hi])})"
                + (f"; closest heavy atoms {np.nanmin(d):.2f}–{np.nanmax(d):.2f} Å" if ok.any() else "")
                + ". Click the plot to jump to a frame.")
        self.energy.enableAutoRange()
        self.distance.enableAutoRange()
        self.set_current(self.current)

    def frame_at(self, x: float) -> int | None:
        if self.series is None or not len(self.series["frame"]):
            return None
        f = np.asarray(self.series["frame"])
        return int(f[int(np.argmin(np.abs(f - x)))])

    def _on_click(self, ev) -> None:
        if ev.button() != Qt.MouseButton.LeftButton:
            return
        for p in (self.energy, self.distance):
            if p.vb.sceneBoundingRect().contains(ev.scenePos()):
                frame = self.frame_at(p.vb.mapSceneToView(ev.scenePos()).x())
                if frame is not None:
                    self.frameClicked.emit(frame)
                return

    def scene_point_of_frame(self, frame: float):
        """Scene position of ``frame`` on the energy plot (for tests)."""
        from PySide6.QtCore import QPointF
        (y0, y1) = self.energy.vb.viewRange()[1]
        return self.energy.vb.mapViewToScene(QPointF(frame, 0.5 * (y0 + y1)))
