"""The pair map: the residue x residue matrix as an image with a diverging colour bar.

Colours are centred on zero (blue attractive, red repulsive) with fixed symmetric levels set by
a percentile of |E| so one clash does not wash everything out.  Hover shows the pair, a click
selects it, the arrow keys move the selection, the wheel zooms.  With the clustered axis order
the tree is drawn above the matrix, in the map's own coordinates (so it pans and zooms with it):
leaves at y = -0.5, the root :data:`TREE_HEIGHT` x n above.

Above :data:`app.state.map_raster.DENSE_LIMIT` rows there is no dense matrix: the image is
rastered from the sparse pairs at screen resolution (largest |E| per pixel, said in the colour
bar's label) and rastered again, finer, when the view is zoomed or panned.  The clustered order
needs the dense profiles and is not offered there (the title says so).
"""
from __future__ import annotations

import math

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QPointF, QRectF, Qt, QTimer, Signal
from PySide6.QtGui import QColor, QCursor, QFont, QFontMetrics
from PySide6.QtWidgets import QComboBox, QLabel, QToolTip, QVBoxLayout, QWidget

import resources
from app.gui.models.array_table import format_energy
from app.gui.views.flow_layout import FlowLayout, compact_combo
from app.state.map_raster import DENSE_LIMIT, REDUCTION, raster
from energy.analysis.ordering import ORDERS, axis_order, axis_order_and_tree, dendrogram_segments
from energy.terms.registry import long_label, map_quantities

CLIPS = (100.0, 99.9, 99.5, 99.0, 98.0, 95.0, 90.0)
# Diverging blue - white - red (the RdBu scheme of ColorBrewer, as in the exported figures):
# attractive entries blue, repulsive red, zero exactly white.
#: Height of the drawn clustering tree, as a fraction of the matrix side.
TREE_HEIGHT = 0.16

DIVERGING = tuple(resources.json_table("colormaps.json")["diverging"])


def clip_level(values: np.ndarray, percentile: float) -> float:
    """Symmetric colour limit: the ``percentile`` of |values| over the nonzero entries."""
    a = np.abs(values[np.isfinite(values)])
    a = a[a > 0]
    if not len(a):
        return 1.0
    v = float(np.percentile(a, percentile)) if percentile < 100 else float(a.max())
    return v if v > 0 else 1.0


def nice_step(raw: float) -> int:
    if raw <= 1:
        return 1
    mag = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if m * mag >= raw:
            return int(m * mag)
    return int(10 * mag)


class ResidueAxis(pg.AxisItem):
    """Integer ticks labelled with residue names, thinned so that labels never overlap."""

    def __init__(self, orientation, **kw):
        super().__init__(orientation, **kw)
        self.labels = []
        self.enableAutoSIPrefix(False)
        self.setStyle(textFillLimits=[(0, 0.98)], hideOverlappingLabels=False)

    def set_labels(self, labels) -> None:
        self.labels = list(labels)
        fm = QFontMetrics(self.font() if hasattr(self, "font") else QFont())
        # Measure only the longest labels (by characters): thousands of font-metric calls per
        # redraw cost tens of milliseconds, and the widest label is among the longest.
        longest = sorted(self.labels, key=len, reverse=True)[:32]
        self._text_w = max((fm.horizontalAdvance(s) for s in longest), default=30)
        self._text_h = fm.height()
        if self.orientation == "left":
            self.setWidth(self._text_w + 12)
        self.picture = None
        self.update()

    def tickValues(self, minVal, maxVal, size):
        if minVal > maxVal:
            minVal, maxVal = maxVal, minVal
        if not self.labels or maxVal <= minVal:
            return []
        px_per = size / (maxVal - minVal)
        need = (self._text_h * 1.15) if self.orientation in ("left", "right") else (self._text_w * 1.25)
        step = nice_step(need / max(px_per, 1e-9))
        lo = max(0, int(math.ceil(minVal / step)) * step)
        hi = min(len(self.labels) - 1, int(maxVal))
        return [(step, list(range(lo, hi + 1, step)))]

    def tickStrings(self, values, scale, spacing):
        n = len(self.labels)
        return [self.labels[int(v)] if 0 <= int(v) < n and float(v).is_integer() else "" for v in values]


class MapGraphics(pg.GraphicsLayoutWidget):
    keyMoved = Signal(int, int)

    def keyPressEvent(self, ev):
        moves = {Qt.Key.Key_Left: (0, -1), Qt.Key.Key_Right: (0, 1), Qt.Key.Key_Up: (-1, 0),
                 Qt.Key.Key_Down: (1, 0)}
        if ev.key() in moves:
            self.keyMoved.emit(*moves[ev.key()])
            ev.accept()
            return
        super().keyPressEvent(ev)


class PairMapView(QWidget):
    """Thin view over a :class:`app.state.document.Dataset` and the shared selection."""

    orderChanged = Signal(str)

    def __init__(self, selection, parent=None):
        super().__init__(parent)
        self.selection = selection
        self.dataset = None
        self.quantity = "total"
        self.order_mode = "sequence"
        self.clip = 99.0
        self.factor, self.unit = 1.0, "kcal/mol"
        self.order = np.zeros(0, np.intp)
        self.position = np.zeros(0, np.intp)      # residue -> display position
        self.matrix = np.zeros((0, 0))             # displayed (ordered, unit-scaled) matrix, or the raster
        self.large = False                         # above DENSE_LIMIT rows: rastered from the sparse pairs
        self._column = np.zeros(0)                 # the shown quantity per listed pair, display unit
        self.order_note = ""
        self.level = 1.0
        self._cursor = None                        # (row, col) display positions
        self._dense_cache = {}

        bar = FlowLayout()
        self.quantity_box = QComboBox(); self.quantity_box.setObjectName("mapQuantity")
        for key, text in map_quantities().items():
            self.quantity_box.addItem(text, key)
        self.order_box = QComboBox(); self.order_box.setObjectName("mapOrder")
        for key, text in ORDERS.items():
            self.order_box.addItem(text, key)
        self.clip_box = QComboBox(); self.clip_box.setObjectName("mapClip")
        for p in CLIPS:
            self.clip_box.addItem("full range" if p == 100 else f"{p:g}th percentile", p)
        self.clip_box.setCurrentIndex(CLIPS.index(99.0))
        compact_combo(self.quantity_box, 16); compact_combo(self.order_box, 20)
        for label, w in (("Show", self.quantity_box), ("Axis order", self.order_box),
                         ("Colour limit", self.clip_box)):
            bar.add_group(QLabel(label), w)
        self.hover_label = QLabel(" "); self.hover_label.setObjectName("mapHover")
        self.hover_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)

        self.graphics = MapGraphics()
        self.graphics.setBackground("w")
        self.graphics.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.left_axis = ResidueAxis("left"); self.bottom_axis = ResidueAxis("bottom")
        for ax in (self.left_axis, self.bottom_axis):
            ax.setPen(pg.mkPen("#333")); ax.setTextPen(pg.mkPen("#222"))
        self.plot = self.graphics.addPlot(axisItems={"left": self.left_axis, "bottom": self.bottom_axis})
        self.plot.invertY(True)
        self.plot.setAspectLocked(True)
        self.plot.setMenuEnabled(False)
        self.plot.hideButtons()
        self.image = pg.ImageItem(axisOrder="row-major")
        self.plot.addItem(self.image)
        self.cmap = pg.ColorMap(np.linspace(0.0, 1.0, len(DIVERGING)), [QColor(c) for c in DIVERGING])
        self.colorbar = pg.ColorBarItem(values=(-1, 1), colorMap=self.cmap, interactive=False, width=18)
        self.colorbar.setImageItem(self.image, insert_in=self.plot)
        self.colorbar.axis.setTextPen(pg.mkPen("#222"))
        self.colorbar.axis.enableAutoSIPrefix(False)    # energies in the unit shown, never "(x0.001)"
        self.marker = pg.ScatterPlotItem(pxMode=False, size=1.0, symbol="s", brush=None,
                                         pen=pg.mkPen("#00a000", width=3))
        self.marker.setZValue(10)
        self.plot.addItem(self.marker)
        # clash overlay: a ring on every residue pair with a steric clash (both triangles)
        # (larger than a cell, so that it still shows around the green selection square)
        self.clash_marks = pg.ScatterPlotItem(pxMode=False, size=1.5, symbol="o", brush=None,
                                              pen=pg.mkPen("#111111", width=2))
        self.clash_marks.setZValue(11)
        self.plot.addItem(self.clash_marks)
        self.clashes = {}                          # (i, j) residue pair -> (count, worst overlap A)
        # hot-spot marks: a triangle on both axes at every residue above the alanine-scan marker
        self.axis_marks = pg.ScatterPlotItem(pxMode=True, size=9, symbol="t", brush=pg.mkBrush("#b2182b"),
                                             pen=pg.mkPen("#7f0000", width=1))
        self.axis_marks.setZValue(12)
        self.plot.addItem(self.axis_marks)
        self.marked_residues = []
        self.show_clashes = True
        self.boundaries = pg.PlotCurveItem(connect="pairs", pen=pg.mkPen(
            QColor(40, 40, 40, 200), width=1.2, style=Qt.PenStyle.DashLine))
        self.boundaries.setZValue(5)
        self.plot.addItem(self.boundaries)
        # clustering tree above the matrix (axis order "profile" only)
        self.tree = pg.PlotCurveItem(connect="pairs", pen=pg.mkPen("#444444", width=1))
        self.tree.setZValue(6)
        self.plot.addItem(self.tree)
        self.linkage = None
        guide = pg.mkPen(QColor(0, 150, 0, 140), width=1)
        self.guides = [pg.InfiniteLine(angle=90, pen=guide, movable=False),
                       pg.InfiniteLine(angle=0, pen=guide, movable=False)]
        for g in self.guides:
            g.setZValue(9); g.setVisible(False)
            self.plot.addItem(g)

        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(2)
        lay.addLayout(bar)
        lay.addWidget(self.graphics, 1)
        lay.addWidget(self.hover_label)

        self._hover_proxy = pg.SignalProxy(self.graphics.scene().sigMouseMoved, rateLimit=30,
                                           slot=self._on_hover)
        self.graphics.scene().sigMouseClicked.connect(self._on_click)
        self.graphics.keyMoved.connect(self._on_key)
        self.quantity_box.currentIndexChanged.connect(
            lambda: self.set_quantity(self.quantity_box.currentData()))
        self.order_box.currentIndexChanged.connect(
            lambda: self.set_order(self.order_box.currentData()))
        self.clip_box.currentIndexChanged.connect(lambda: self.set_clip(self.clip_box.currentData()))
        selection.pairChanged.connect(self._on_selection)
        self._raster_timer = QTimer(self)
        self._raster_timer.setSingleShot(True)
        self._raster_timer.setInterval(60)
        self._raster_timer.timeout.connect(self._redraw)
        self.plot.vb.sigRangeChanged.connect(self._on_range)

    def _on_range(self, *_args) -> None:
        if self.large:
            self._raster_timer.start()   # zoom or pan: raster the new window once it settles

    # -- inputs ---------------------------------------------------------------------------
    def set_dataset(self, ds, keep_view: bool = False) -> None:
        """Show ``ds``; ``keep_view`` keeps zoom and pan (stepping through frames of one system)."""
        same_size = self.dataset is not None and ds is not None and ds.n == self.dataset.n
        self.dataset = ds
        self._dense_cache = {}
        self._cursor = None
        if ds is not None and ds.is_difference:
            self.colorbar.axis.setLabel(f"change, {self.unit}")
        self._reorder(reset_view=not (keep_view and same_size))

    def set_clashes(self, residue_pairs) -> None:
        """Mark residue pairs with clashes: items with ``res_i``, ``res_j``, ``count`` and
        ``worst_overlap`` (:class:`energy.analysis.clashes.ResiduePairClashes`); empty to clear."""
        row = self.dataset.row_of_residue if self.dataset is not None else int
        self.clashes = {}
        for p in residue_pairs:   # residues of the structure -> rows (a solvent block for waters)
            key = (row(int(p.res_i)), row(int(p.res_j)))
            count, worst = self.clashes.get(key, (0, 0.0))
            self.clashes[key] = (count + int(p.count), max(worst, float(p.worst_overlap)))
        self._draw_clashes()

    def set_axis_marks(self, residues) -> None:
        """Mark ``residues`` (residue indices, e.g. the alanine scan's hot spots) along both axes;
        empty to clear."""
        self.marked_residues = sorted(int(r) for r in residues)
        self._draw_axis_marks()

    def axis_mark_positions(self) -> list[int]:
        """Display positions (row = column) currently marked on the axes."""
        xs, ys = self.axis_marks.getData()
        return sorted({int(round(x)) for x, y in zip(xs, ys) if y == -0.5})

    def _draw_axis_marks(self) -> None:
        n = len(self.order)
        row = self.dataset.row_of_residue if self.dataset is not None else int
        keep = [row(r) for r in self.marked_residues if self.dataset is not None
                and r < len(self.dataset.blocks.residue_to_row if self.dataset.blocks is not None else self.order)]
        keep = [r for r in keep if r < n]
        if not keep:
            self.axis_marks.setData([], [])
            return
        pos = [float(self.position[r]) for r in keep]
        edge = -0.5  # on the map's top and left border, beside the residue labels
        self.axis_marks.setData(pos + [edge] * len(pos), [edge] * len(pos) + pos)

    def set_show_clashes(self, on: bool) -> None:
        self.show_clashes = bool(on)
        self._draw_clashes()

    def clash_mark_positions(self) -> list[tuple[int, int]]:
        """(row, col) display cells currently ringed."""
        xs, ys = self.clash_marks.getData()
        return sorted((int(round(y)), int(round(x))) for x, y in zip(xs, ys))

    def _draw_clashes(self) -> None:
        n = len(self.order)
        if not self.show_clashes or not self.clashes or not n:
            self.clash_marks.setData([], [])
            return
        xs, ys = [], []
        for i, j in self.clashes:
            if i < n and j < n:
                pi, pj = int(self.position[i]), int(self.position[j])
                xs += [pj, pi]; ys += [pi, pj]
        self.clash_marks.setData(xs, ys)

    def set_quantity(self, q: str) -> None:
        if q == self.quantity:
            return
        self.quantity = q
        self._sync_box(self.quantity_box, q)
        self._reorder() if self.order_mode in ("energy", "profile") else self._redraw()

    def set_order(self, mode: str) -> None:
        if mode == self.order_mode:
            return
        self.order_mode = mode
        self._sync_box(self.order_box, mode)
        self._reorder(reset_view=True)  # positions all change; show the whole map (and tree)
        self.orderChanged.emit(mode)

    def set_clip(self, percentile: float) -> None:
        self.clip = float(percentile)
        self._sync_box(self.clip_box, self.clip)
        self._redraw()

    def set_unit(self, factor: float, unit: str) -> None:
        self.factor, self.unit = float(factor), unit
        self._redraw()

    @staticmethod
    def _sync_box(box, value):
        k = box.findData(value)
        if k >= 0 and k != box.currentIndex():
            box.blockSignals(True); box.setCurrentIndex(k); box.blockSignals(False)

    # -- drawing ----------------------------------------------------------------------------
    def dense(self, q: str) -> np.ndarray:
        if q not in self._dense_cache:
            self._dense_cache = {q: self.dataset.pairs.dense(q)}
        return self._dense_cache[q]

    def _reorder(self, reset_view=False) -> None:
        ds = self.dataset
        self.large = ds is not None and ds.n > DENSE_LIMIT
        self.order_note = ""
        if ds is None:
            self.order, self.linkage = np.zeros(0, np.intp), None
        elif self.large and self.order_mode == "profile":
            self.order, self.linkage = axis_order("chain", ds.chains, ds.pairs, self.quantity), None
            self.order_note = f"clustered order needs at most {DENSE_LIMIT:,} rows: by chain"
        else:
            self.order, self.linkage = axis_order_and_tree(self.order_mode, ds.chains, ds.pairs,
                                                           self.quantity)
        self.position = np.empty(len(self.order), np.intp)
        self.position[self.order] = np.arange(len(self.order))
        labels = [] if ds is None else list(ds.labels[self.order])
        self.left_axis.set_labels(labels)
        self.bottom_axis.set_labels(labels)
        n = len(self.order)
        if reset_view and n:   # first, so that a rastered map is drawn for this range
            top = -0.5 - (TREE_HEIGHT * n if self.linkage is not None else 0.0)
            self.plot.setRange(xRange=(-0.5, n - 0.5), yRange=(top, n - 0.5), padding=0)
        self._draw_boundaries()
        self._redraw()
        self._raster_timer.stop()   # drawn for the range just set
        self._draw_clashes()
        self._draw_axis_marks()
        self._draw_tree()
        self._on_selection(self.selection.pair)

    def _redraw(self) -> None:
        ds = self.dataset
        if ds is None or not len(self.order):
            self.image.clear()
            self.matrix = np.zeros((0, 0))
            return
        o = self.order
        n = len(o)
        column = ds.pairs.column(self.quantity) * self.factor
        self._column = column
        self.level = clip_level(column, self.clip)
        if self.large:
            (x0, x1), (y0, y1) = self.plot.vb.viewRange()
            window = (math.floor(y0 + 0.5), math.ceil(y1 + 0.5), math.floor(x0 + 0.5), math.ceil(x1 + 0.5))
            r = raster(self.position[ds.pairs.pair_i], self.position[ds.pairs.pair_j], column, n, window)
            self.matrix = r.image
            self.image.setImage(self.matrix, autoLevels=False, levels=(-self.level, self.level))
            self.image.setRect(QRectF(*r.rect))
        else:
            d = self.dense(self.quantity)
            m = d if self.order_mode == "sequence" else d[np.ix_(o, o)]
            self.matrix = m * self.factor if self.factor != 1.0 else m
            self.image.setImage(self.matrix, autoLevels=False, levels=(-self.level, self.level))
            self.image.setRect(QRectF(-0.5, -0.5, n, n))
        self.colorbar.setLevels((-self.level, self.level))
        what = "change of " if ds.is_difference else ""
        how = f", {REDUCTION}" if self.large else ""
        self.colorbar.axis.setLabel(f"{what}{long_label(self.quantity).split(' (')[0]} ({self.unit}){how}")
        order = self.order_note or f"axis order: {ORDERS[self.order_mode].lower()}"
        self.plot.setTitle(f"<span style='color:#222'>{ds.title} &nbsp;·&nbsp; {order}</span>", size="10pt")

    def tree_segments(self):
        """(x0, y0, x1, y1) of the drawn tree in map coordinates, or None without one."""
        if self.linkage is None:
            return None
        x0, h0, x1, h1 = dendrogram_segments(self.linkage, self.order)
        scale = TREE_HEIGHT * len(self.order) / max(float(self.linkage[:, 2].max()), 1e-12)
        return x0, -0.5 - h0 * scale, x1, -0.5 - h1 * scale

    def _draw_tree(self) -> None:
        seg = self.tree_segments()
        if seg is None:
            self.tree.setData([], [])
            return
        x0, y0, x1, y1 = seg
        self.tree.setData(np.column_stack([x0, x1]).ravel(), np.column_stack([y0, y1]).ravel())

    def _draw_boundaries(self) -> None:
        """Dashed lines between chains, over the matrix only (not across the clustering tree)."""
        if self.dataset is None or not len(self.order):
            self.boundaries.setData([], [])
            return
        ch = self.dataset.chains[self.order]
        cuts = np.flatnonzero(ch[1:] != ch[:-1]) + 1
        if len(cuts) > 40 or not len(cuts):  # an order that interleaves chains: lines would be noise
            self.boundaries.setData([], [])
            return
        n = len(self.order)
        at = cuts - 0.5
        lo, hi = np.full(len(at), -0.5), np.full(len(at), n - 0.5)
        xs = np.concatenate([np.column_stack([at, at]).ravel(), np.column_stack([lo, hi]).ravel()])
        ys = np.concatenate([np.column_stack([lo, hi]).ravel(), np.column_stack([at, at]).ravel()])
        self.boundaries.setData(xs, ys)

    def chain_boundary_segments(self) -> int:
        xs, _ = self.boundaries.getData()
        return 0 if xs is None else len(xs) // 2

    def _cell_at(self, scene_pos):
        if self.dataset is None or not self.plot.vb.sceneBoundingRect().contains(scene_pos):
            return None
        p = self.plot.vb.mapSceneToView(scene_pos)
        col, row = int(round(p.x())), int(round(p.y()))
        n = len(self.order)
        if 0 <= row < n and 0 <= col < n:
            return row, col
        return None

    def describe_cell(self, row: int, col: int) -> str:
        ds = self.dataset
        i, j = int(self.order[row]), int(self.order[col])
        if self.large:   # the raster holds pixels, not cells: the value comes from the table
            k = ds.pairs.lookup(i, j)
            v = float(self._column[k]) if k is not None else 0.0
        else:
            v = self.matrix[row, col]
        what = "change " if ds.is_difference else ""
        text = (f"{ds.labels[i]} × {ds.labels[j]}   {long_label(self.quantity).split(' (')[0]} "
                f"{what}{format_energy(float(v))} {self.unit}")
        k = ds.pairs.lookup(i, j)
        if k is not None:
            d = float(ds.pairs.min_heavy_distance[k])
            if math.isfinite(d):
                text += f"   closest heavy atoms {d:.2f} Å"
        clash = self.clashes.get((min(i, j), max(i, j)))
        if clash is not None:
            text += f"   {clash[0]} clash(es), worst overlap {clash[1]:.2f} Å"
        return text

    def _on_hover(self, args) -> None:
        cell = self._cell_at(args[0])
        if cell is None:
            return
        text = self.describe_cell(*cell)
        self.hover_label.setText(text)
        if self.graphics.underMouse():
            QToolTip.showText(QCursor.pos(), text, self.graphics)

    def _on_click(self, ev) -> None:
        if ev.button() != Qt.MouseButton.LeftButton:
            return
        cell = self._cell_at(ev.scenePos())
        if cell is None:
            return
        self.graphics.setFocus()
        self.select_cell(*cell)

    def select_cell(self, row: int, col: int) -> None:
        self._cursor = (row, col)
        self.selection.set_pair((int(self.order[row]), int(self.order[col])))
        self._draw_marker()

    def _on_key(self, drow: int, dcol: int) -> None:
        n = len(self.order)
        if not n:
            return
        row, col = self._cursor if self._cursor else (0, 0)
        row = min(max(row + drow, 0), n - 1)
        col = min(max(col + dcol, 0), n - 1)
        self.select_cell(row, col)
        (x0, x1), (y0, y1) = self.plot.vb.viewRange()
        if not (x0 <= col <= x1 and y0 <= row <= y1):
            w, h = x1 - x0, y1 - y0
            self.plot.setRange(xRange=(col - w / 2, col + w / 2), yRange=(row - h / 2, row + h / 2),
                               padding=0)

    def _on_selection(self, pair) -> None:
        pair = pair or None
        if pair is None or self.dataset is None or not len(self.order):
            self._cursor = None
        else:
            pi, pj = int(self.position[pair[0]]), int(self.position[pair[1]])
            if self._cursor not in ((pi, pj), (pj, pi)):
                self._cursor = (pi, pj)
        self._draw_marker()

    def _draw_marker(self) -> None:
        if self._cursor is None:
            self.marker.setData([], [])
            for g in self.guides:
                g.setVisible(False)
            return
        r, c = self._cursor
        self.marker.setData([c, r], [r, c])
        self.guides[0].setPos(c); self.guides[1].setPos(r)
        for g in self.guides:
            g.setVisible(True)

    def cursor(self):
        return self._cursor

    def scene_point_of_cell(self, row: int, col: int) -> QPointF:
        return self.plot.vb.mapViewToScene(QPointF(col, row))
