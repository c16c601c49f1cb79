"""Term bars: per-term energies of the whole system, the selected residue pair and the group interaction."""
from __future__ import annotations

import html
import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtGui import QFont

import resources
from energy.terms.registry import TERMS, short_label

#: Characters of a plot's subtitle (the selected pair, the groups); the whole text is its tool tip.
SUBTITLE_CHARS = 22

POS, NEG = (resources.json_table("colormaps.json")[k] for k in ("bar_positive", "bar_negative"))


def compact(v: float) -> str:
    a = abs(v)
    if a >= 1e6:
        return f"{v:.2e}"
    if a >= 1e3:
        return f"{v / 1e3:.1f}k"
    return f"{v:.3g}" if a >= 0.01 else f"{v:.2g}"


#: Room one energy label of the bottom axis needs (px): fewer ticks when a plot is narrow.
TICK_ROOM = 46


class EnergyTickAxis(pg.AxisItem):
    """Bottom axis of a term-bar plot: compact labels (``-4k``) and only as many major ticks as
    fit side by side, so that a narrow plot does not print its labels over each other."""

    def tickSpacing(self, minVal, maxVal, size):  # noqa: N802 (pyqtgraph's name)
        """One level of ticks, a 1-2-5 step with at most one label per :data:`TICK_ROOM` px."""
        span = abs(maxVal - minVal)
        if span == 0 or size <= 0:
            return super().tickSpacing(minVal, maxVal, size)
        room = max(2, int(size // TICK_ROOM))
        raw = span / room
        mag = 10.0 ** math.floor(math.log10(raw))
        step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
        return [(step, 0)]

    def tickStrings(self, values, scale, spacing):  # noqa: N802
        return ["0" if v == 0 else compact(float(v)).replace(".0k", "k") for v in values]


class TermBarsView(pg.GraphicsLayoutWidget):
    def __init__(self, parent=None):
        super().__init__(parent)
        self.setBackground("w")
        self.factor, self.unit = 1.0, "kcal/mol"
        self.values = {"system": None, "pair": None, "groups": None}
        self.titles = {"system": "Whole system", "pair": "Selected pair", "groups": "Group interaction"}
        self.plots, self.bars, self.texts = {}, {}, {}
        self._shown_titles: dict = {}  # key -> (title, unit) last set on its plot
        for col, key in enumerate(self.values):
            p = self.addPlot(row=0, col=col, axisItems={"bottom": EnergyTickAxis("bottom")})
            p.setMenuEnabled(False); p.hideButtons(); p.setMouseEnabled(x=False, y=False)
            p.getAxis("left").enableAutoSIPrefix(False)
            # the term labels in a compact font and a fixed width: three plots fit a laptop's dock
            font = QFont(); font.setPointSizeF(7.5)
            p.getAxis("left").setStyle(tickFont=font)
            p.getAxis("left").setWidth(56)
            p.showGrid(x=True, alpha=0.15)
            p.addLine(x=0, pen=pg.mkPen("#777"))
            p.invertY(True)
            p.getAxis("bottom").enableAutoSIPrefix(False)
            self.plots[key] = p
            self.texts[key] = []
            self._shown_titles.pop(key, None)
        self._redraw()

    def set_unit(self, factor, unit) -> None:
        self.factor, self.unit = factor, unit
        self._redraw()

    def set_values(self, key: str, values: dict | None, subtitle: str = "") -> None:
        self.values[key] = None if values is None else (dict(values), subtitle)
        self._redraw_one(key)

    def _redraw(self) -> None:
        for key in self.values:
            self._redraw_one(key)

    def _redraw_one(self, key) -> None:
        p = self.plots[key]
        entry = self.values[key]
        sub = "" if entry is None else entry[1]
        p.setToolTip(sub)
        if len(sub) > SUBTITLE_CHARS:     # a title sets its plot's least width: long ones are cut
            sub = sub[:SUBTITLE_CHARS - 1] + "…"
        title = (f"<span style='color:#222'>{self.titles[key]}</span>"
                 + (f"<br><span style='color:#555;font-size:8pt'>{html.escape(sub)}</span>" if sub else ""))
        if (title, self.unit) != self._shown_titles.get(key):  # a new title or label lays the plot out again
            self._shown_titles[key] = (title, self.unit)
            p.setTitle(title, size="9pt")
            p.setLabel("bottom", self.unit)
        texts = self.texts[key]
        if entry is None:
            if key in self.bars:
                self.bars[key].setVisible(False)
            for t in texts:
                t.setVisible(False)
            p.getAxis("left").setTicks([[]])
            return
        vals = entry[0]
        names = [t for t in (*TERMS, "total") if t in vals and (t in ("coulomb", "lj", "total") or vals[t] != 0)]
        x = np.array([vals[t] for t in names]) * self.factor
        y = np.arange(len(names))
        bar_options = dict(x0=np.minimum(x, 0), width=np.abs(x), y=y, height=0.65,
                           brushes=[pg.mkBrush(POS if v > 0 else NEG) for v in x], pens=[pg.mkPen("#333")] * len(y))
        if key in self.bars:  # the items are kept and updated: adding items to a plot is the slow part
            self.bars[key].setOpts(**bar_options)
            self.bars[key].setVisible(True)
        else:
            self.bars[key] = pg.BarGraphItem(**bar_options)
            p.addItem(self.bars[key])
        p.getAxis("left").setTicks([[(i, short_label(t)) for i, t in enumerate(names)]])
        lo, hi = min(0.0, float(x.min())), max(0.0, float(x.max()))
        span = (hi - lo) or 1.0
        while len(texts) < len(x):
            texts.append(pg.TextItem("", color="#111"))
            p.addItem(texts[-1])
        for i, t in enumerate(texts):
            if i >= len(x):
                t.setVisible(False)
                continue
            v = float(x[i])
            t.setAnchor((-0.05, 0.5) if v >= 0 else (1.05, 0.5))
            t.setText(compact(v))
            t.setPos(v, i)
            t.setVisible(True)
        p.setXRange(lo - (0.75 * span if lo < 0 else 0.05 * span),
                    hi + (0.75 * span if hi > 0 else 0.05 * span), padding=0)
        p.setYRange(-0.6, len(y) - 0.4, padding=0)
        p.getViewBox().updateMatrix()  # the new view transform now, not during the paint (which would paint twice)
