"""Cell-list search for residue pairs whose bounding spheres come within the cutoff (numba).

Residue centres are binned into a grid of cells of side about ``(cutoff + 2 r_small) / 2``,
where ``r_small`` is a typical (90th percentile) residue radius.  Each pair (I, J) is searched
from the residue with the larger radius (ties: the lower index), over as many cell shells as
that radius needs, so water-water pairs look at 27 cells only and large residues still see every
partner.  The test is exact on the spheres: |c_I - c_J| < cutoff + r_I + r_J (minimum image in
orthorhombic cells).  Output rows are sorted by (I, J), I <= J, and include every (I, I).
"""
from __future__ import annotations

import numba
import numpy as np


@numba.njit(cache=True)
def _grid(centers, lo, cell, dims, periodic, box):
    n = centers.shape[0]
    idx = np.empty((n, 3), np.int64)
    for i in range(n):
        for d in range(3):
            x = centers[i, d]
            if periodic:
                x = x - box[d] * np.floor(x / box[d])
                k = int(x / cell[d])
            else:
                k = int((x - lo[d]) / cell[d])
            if k >= dims[d]:
                k = dims[d] - 1
            if k < 0:
                k = 0
            idx[i, d] = k
    flat = (idx[:, 0] * dims[1] + idx[:, 1]) * dims[2] + idx[:, 2]
    order = np.argsort(flat, kind="mergesort")
    n_cells = dims[0] * dims[1] * dims[2]
    start = np.zeros(n_cells + 1, np.int64)
    for i in range(n):
        start[flat[i] + 1] += 1
    for c in range(n_cells):
        start[c + 1] += start[c]
    return idx, order, start


@numba.njit(cache=True, inline="always")
def _owns(i, j, radii):
    # Pair (i, j) is searched from the residue with the larger radius; ties by lower index.
    if radii[i] > radii[j]:
        return True
    if radii[i] < radii[j]:
        return False
    return i < j


@numba.njit(cache=True, inline="always")
def _close(i, j, centers, radii, cutoff, periodic, box):
    d2 = 0.0
    for d in range(3):
        x = centers[j, d] - centers[i, d]
        if periodic:
            x -= box[d] * np.rint(x / box[d])
        d2 += x * x
    lim = cutoff + radii[i] + radii[j]
    return d2 < lim * lim


@numba.njit(cache=True, inline="always")
def _cells_along(center_cell, shells, n_cells, periodic, out):
    """Cell indices to visit along one axis; returns how many were written to ``out``."""
    if periodic and 2 * shells + 1 >= n_cells:
        for c in range(n_cells):
            out[c] = c
        return n_cells
    m = 0
    for off in range(-shells, shells + 1):
        c = center_cell + off
        if periodic:
            c %= n_cells
        elif c < 0 or c >= n_cells:
            continue
        out[m] = c
        m += 1
    return m


@numba.njit(parallel=True, cache=True)
def _search(centers, radii, cutoff, periodic, box, cell, dims, idx, order, start, counts, out_i,
            out_j, offsets, fill):
    n = centers.shape[0]
    for i in numba.prange(n):
        k = 0
        max_shell = 0
        for d in range(3):
            max_shell = max(max_shell, int(np.ceil((cutoff + 2.0 * radii[i]) / cell[d])))
        xs = np.empty(2 * max_shell + 1 + dims[0], np.int64)
        ys = np.empty(2 * max_shell + 1 + dims[1], np.int64)
        zs = np.empty(2 * max_shell + 1 + dims[2], np.int64)
        nx = _cells_along(idx[i, 0], int(np.ceil((cutoff + 2.0 * radii[i]) / cell[0])), dims[0], periodic, xs)
        ny = _cells_along(idx[i, 1], int(np.ceil((cutoff + 2.0 * radii[i]) / cell[1])), dims[1], periodic, ys)
        nz = _cells_along(idx[i, 2], int(np.ceil((cutoff + 2.0 * radii[i]) / cell[2])), dims[2], periodic, zs)
        for a in range(nx):
            for b in range(ny):
                for e in range(nz):
                    c = (xs[a] * dims[1] + ys[b]) * dims[2] + zs[e]
                    for s in range(start[c], start[c + 1]):
                        j = order[s]
                        if j == i or not _owns(i, j, radii):
                            continue
                        if _close(i, j, centers, radii, cutoff, periodic, box):
                            if fill:
                                out_i[offsets[i] + k] = min(i, j)
                                out_j[offsets[i] + k] = max(i, j)
                            k += 1
        counts[i] = k


@numba.njit(parallel=True, cache=True)
def _sorted_with_diagonal(out_i, out_j, n):
    """Counting sort of the pairs by I, then each I's partners sorted; (I, I) first in each row."""
    per_row = np.ones(n, np.int64)  # the diagonal
    for k in range(len(out_i)):
        per_row[out_i[k]] += 1
    row_start = np.zeros(n + 1, np.int64)
    for r in range(n):
        row_start[r + 1] = row_start[r] + per_row[r]
    pairs = np.empty((row_start[n], 2), np.intp)
    cursor = row_start[:-1].copy() + 1
    for r in range(n):
        pairs[row_start[r], 0] = r
        pairs[row_start[r], 1] = r
    for k in range(len(out_i)):
        r = out_i[k]
        pairs[cursor[r], 0] = r
        pairs[cursor[r], 1] = out_j[k]
        cursor[r] += 1
    for r in numba.prange(n):
        seg = np.sort(pairs[row_start[r] + 1:row_start[r + 1], 1])
        pairs[row_start[r] + 1:row_start[r + 1], 1] = seg
    return pairs


def candidate_pairs_cells(centers, radii, cutoff: float, box_lengths=None) -> np.ndarray:
    """Residue pairs (I <= J, sorted, diagonal included) with |c_I - c_J| < cutoff + r_I + r_J."""
    n = len(centers)
    if n == 0:
        return np.zeros((0, 2), np.intp)
    centers = np.ascontiguousarray(centers, np.float64)
    radii = np.ascontiguousarray(radii, np.float64)
    periodic = box_lengths is not None
    r_small = float(np.quantile(radii, 0.9))
    # Cells of half the typical search radius: 125 half-size cells hold ~16 full-cell volumes,
    # against 27 for full-size cells.
    target = 0.5 * (cutoff + 2.0 * r_small)
    if periodic:
        box = np.asarray(box_lengths, np.float64)
        dims = np.maximum(np.floor(box / target), 1).astype(np.int64)
        cell = box / dims
        lo = np.zeros(3)
    else:
        box = np.ones(3)
        lo = centers.min(axis=0)
        span = centers.max(axis=0) - lo + 1e-9
        dims = np.maximum(np.floor(span / target), 1).astype(np.int64)
        dims = np.minimum(dims, 512)
        cell = np.maximum(span / dims, target)
    idx, order, start = _grid(centers, lo, cell, dims, periodic, box)
    counts = np.zeros(n, np.int64)
    dummy = np.zeros(1, np.intp)
    _search(centers, radii, cutoff, periodic, box, cell, dims, idx, order, start, counts, dummy,
            dummy, counts, False)
    offsets = np.zeros(n, np.int64)
    np.cumsum(counts[:-1], out=offsets[1:])
    total = int(counts.sum())
    out_i = np.empty(total, np.intp)
    out_j = np.empty(total, np.intp)
    _search(centers, radii, cutoff, periodic, box, cell, dims, idx, order, start, counts, out_i,
            out_j, offsets, True)
    return _sorted_with_diagonal(out_i, out_j, n)
