"""The pair map of a large table, drawn from the sparse pairs at screen resolution.

Above :data:`DENSE_LIMIT` rows a dense n x n image would not fit (30,000 rows: 7.2 GB of
float64).  :func:`raster` bins the listed pairs that fall inside the visible window onto at most
``pixels`` x ``pixels`` cells, keeping in each cell the entry of largest magnitude (with its
sign), so a single strong contact stays visible however far out the view is.  Memory and time
are those of the listed pairs plus the image; the view re-rasters when it is zoomed or panned.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Up to this many rows the map keeps the exact dense image (one cell per residue pair).
DENSE_LIMIT = 3000
#: Default image size along each axis, in cells (about the pixels of a map on screen).
PIXELS = 1200
#: What a raster cell shows, for the colour bar's label.
REDUCTION = "largest |E| per pixel"


@dataclass(frozen=True)
class Raster:
    """``image`` (h, w) float64: rows top to bottom, columns left to right; ``rect`` ``(x0, y0,
    width, height)`` in map coordinates (display positions, cell centres on integers);
    ``bin_rows``, ``bin_cols``: display rows and columns per image cell."""

    image: np.ndarray
    rect: tuple
    bin_rows: int
    bin_cols: int


def raster(pos_i: np.ndarray, pos_j: np.ndarray, values: np.ndarray, n: int, window=None,
           pixels: int = PIXELS) -> Raster:
    """Bin the pairs (both triangles) inside ``window`` onto an image of at most ``pixels``².

    ``pos_i``, ``pos_j`` (k,) display positions of each listed pair; ``values`` (k,) the shown
    quantity; ``n`` the number of rows; ``window`` ``(row0, row1, col0, col1)`` half-open
    display ranges (default: the whole map).
    """
    r0, r1, c0, c1 = (0, n, 0, n) if window is None else (int(v) for v in window)
    r0, c0 = max(r0, 0), max(c0, 0)
    r1, c1 = min(max(r1, r0 + 1), n), min(max(c1, c0 + 1), n)
    bin_r = max(1, -(-(r1 - r0) // pixels))
    bin_c = max(1, -(-(c1 - c0) // pixels))
    h, w = -(-(r1 - r0) // bin_r), -(-(c1 - c0) // bin_c)
    rows = np.concatenate([pos_i, pos_j])
    cols = np.concatenate([pos_j, pos_i])
    vals = np.concatenate([values, values])
    inside = (rows >= r0) & (rows < r1) & (cols >= c0) & (cols < c1)
    rows, cols, vals = rows[inside], cols[inside], vals[inside]
    cell = ((rows - r0) // bin_r) * w + (cols - c0) // bin_c
    image = np.zeros(h * w)
    if len(cell):
        order = np.lexsort((np.abs(vals), cell))        # by cell, then |E| ascending
        cell, vals = cell[order], vals[order]
        last = np.flatnonzero(np.r_[cell[1:] != cell[:-1], True])   # the largest |E| of each cell
        image[cell[last]] = vals[last]
    return Raster(image.reshape(h, w), (c0 - 0.5, r0 - 0.5, w * bin_c, h * bin_r), bin_r, bin_c)
