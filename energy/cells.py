"""Cell-list search for residue pairs whose bounding spheres come within the cutoff (numba).

Residue centres are binned into a grid of cells of side about ``(cutoff + 2 r_small) / 2``,
where ``r_small`` is a typical (90th percentile) residue radius.  Each pair (I, J) is searched
from the residue with the larger radius (ties: the lower index), over as many cell shells as
that radius needs, so water-water pairs look at 27 cells only and large residues still see every
partner.  The test is exact on the spheres: |c_I - c_J| < cutoff + r_I + r_J (minimum image in
any periodic cell, orthorhombic or triclinic).  Output rows are sorted by (I, J), I <= J, and include every (I, I).
"""
from __future__ import annotations

import numba
import numpy as np

from .pbc import is_orthorhombic, minimum_image, perpendicular_widths


@numba.njit(cache=True)
def _bin(idx, dims):
    """Order residues by cell; ``start[c]:start[c+1]`` indexes ``order`` for cell c."""
    n = idx.shape[0]
    flat = (idx[:, 0] * dims[1] + idx[:, 1]) * dims[2] + idx[:, 2]
    order = np.argsort(flat, kind="mergesort")
    n_cells = dims[0] * dims[1] * dims[2]
    start = np.zeros(n_cells + 1, np.int64)
    for i in range(n):
        start[flat[i] + 1] += 1
    for c in range(n_cells):
        start[c + 1] += start[c]
    return order, start


@numba.njit(cache=True, inline="always")
def _owns(i, j, radii):
    # Pair (i, j) is searched from the residue with the larger radius; ties by lower index.
    if radii[i] > radii[j]:
        return True
    if radii[i] < radii[j]:
        return False
    return i < j


@numba.njit(cache=True, inline="always")
def _close(i, j, centers, radii, cutoff, periodic, h, orthorhombic):
    dx = centers[j, 0] - centers[i, 0]
    dy = centers[j, 1] - centers[i, 1]
    dz = centers[j, 2] - centers[i, 2]
    if periodic:
        dx, dy, dz = minimum_image(dx, dy, dz, h, orthorhombic)
    lim = cutoff + radii[i] + radii[j]
    return dx * dx + dy * dy + dz * dz < lim * lim


@numba.njit(cache=True, inline="always")
def _axis_visits(center_cell, shells, n_cells, periodic):
    """How many cells to visit along one axis, and whether the whole (periodic) axis is covered."""
    if periodic and 2 * shells + 1 >= n_cells:
        return n_cells, True
    return 2 * shells + 1, False


@numba.njit(cache=True, inline="always")
def _axis_cell(k, center_cell, shells, n_cells, periodic, covered):
    """k-th visited cell along an axis: (cell index or -1, lattice wraps, cell offset)."""
    if covered:
        return k, 0, 0
    off = k - shells
    c = center_cell + off
    if periodic:
        wraps = (c - (c % n_cells)) // n_cells
        return c % n_cells, wraps, off
    if c < 0 or c >= n_cells:
        return -1, 0, off
    return c, 0, off


@numba.njit(parallel=True, cache=True)
def _search(centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, order, start,
            chunk_bounds, hist, cursor, out_j, fill):
    """Count (``fill`` False: ``hist[chunk, row] += 1``) or write (``out_j[cursor[chunk, row]]``)
    the pairs found, row = the lower residue index.  Chunks of residues run in parallel; each
    chunk owns its counters, so the result is deterministic."""
    for chunk in numba.prange(len(chunk_bounds) - 1):
        for i in range(chunk_bounds[chunk], chunk_bounds[chunk + 1]):
            reach = cutoff + 2.0 * radii[i]
            sx_ = int(np.ceil(reach / cell[0]))
            sy_ = int(np.ceil(reach / cell[1]))
            sz_ = int(np.ceil(reach / cell[2]))
            nx, cov_x = _axis_visits(idx[i, 0], sx_, dims[0], periodic)
            ny, cov_y = _axis_visits(idx[i, 1], sy_, dims[1], periodic)
            nz, cov_z = _axis_visits(idx[i, 2], sz_, dims[2], periodic)
            ci0, ci1, ci2 = centers[i, 0], centers[i, 1], centers[i, 2]
            for a in range(nx):
                cx, wx, ox = _axis_cell(a, idx[i, 0], sx_, dims[0], periodic, cov_x)
                if cx < 0:
                    continue
                gx = max(0, abs(ox) - 1) * cell[0]
                for b in range(ny):
                    cy, wy, oy = _axis_cell(b, idx[i, 1], sy_, dims[1], periodic, cov_y)
                    if cy < 0:
                        continue
                    gy = max(0, abs(oy) - 1) * cell[1]
                    if (gx * gx + gy * gy if orthorhombic else max(gx * gx, gy * gy)) > reach * reach:
                        continue
                    for e in range(nz):
                        cz, wz, oz = _axis_cell(e, idx[i, 2], sz_, dims[2], periodic, cov_z)
                        if cz < 0:
                            continue
                        gz = max(0, abs(oz) - 1) * cell[2]
                        # Lower bound of the distance to any point of this cell (per-axis gaps are
                        # perpendicular distances; they add in quadrature only in orthorhombic cells).
                        gap2 = gx * gx + gy * gy + gz * gz if orthorhombic else max(gx * gx, max(gy * gy, gz * gz))
                        if gap2 > reach * reach:
                            continue
                        c = (cx * dims[1] + cy) * dims[2] + cz
                        exact_shift = not (cov_x or cov_y or cov_z)
                        shx = wx * h[0, 0] + wy * h[1, 0] + wz * h[2, 0]
                        shy = wy * h[1, 1] + wz * h[2, 1]
                        shz = wz * h[2, 2]
                        for s in range(start[c], start[c + 1]):
                            j = order[s]
                            if j == i or not _owns(i, j, radii):
                                continue
                            if exact_shift:
                                # centres are wrapped into the cell; the visited cell's image shift is known
                                dx = centers[j, 0] + shx - ci0
                                dy = centers[j, 1] + shy - ci1
                                dz = centers[j, 2] + shz - ci2
                                lim = cutoff + radii[i] + radii[j]
                                close = dx * dx + dy * dy + dz * dz < lim * lim
                            else:
                                close = _close(i, j, centers, radii, cutoff, periodic, h, orthorhombic)
                            if close:
                                row = min(i, j)
                                if fill:
                                    out_j[cursor[chunk, row]] = max(i, j)
                                    cursor[chunk, row] += 1
                                else:
                                    hist[chunk, row] += 1


@numba.njit(parallel=True, cache=True)
def _row_offsets(hist):
    """Per-chunk write cursors and row starts (one slot per row for the diagonal, first)."""
    n_chunks, n = hist.shape
    per_row = np.ones(n, np.int64)
    for r in numba.prange(n):
        for c in range(n_chunks):
            per_row[r] += hist[c, r]
    row_start = np.zeros(n + 1, np.int64)
    for r in range(n):
        row_start[r + 1] = row_start[r] + per_row[r]
    cursor = np.empty((n_chunks, n), np.int64)
    for r in numba.prange(n):
        pos = row_start[r] + 1
        for c in range(n_chunks):
            cursor[c, r] = pos
            pos += hist[c, r]
    return row_start, cursor


@numba.njit(parallel=True, cache=True)
def _finish_rows(row_start, out_j):
    """Row index of every pair; in each row of ``out_j`` the diagonal first, then the partners
    in increasing order (sorted in place)."""
    n = len(row_start) - 1
    pair_i = np.empty(len(out_j), np.intp)
    for r in numba.prange(n):
        lo, hi = row_start[r], row_start[r + 1]
        out_j[lo] = r
        if hi - lo > 2:
            out_j[lo + 1:hi] = np.sort(out_j[lo + 1:hi])
        for a in range(lo, hi):
            pair_i[a] = r
    return pair_i


def candidate_pairs_cells(centers, radii, cutoff: float, cell_matrix=None):
    """Residue pairs (I <= J, sorted, diagonal included) with |c_I - c_J| < cutoff + r_I + r_J.

    Returns ``(pair_i, pair_j, row_start)``: (m,) arrays sorted by (I, J), and the CSR row
    starts (n + 1,) so that the pairs of row I are rows ``row_start[I]:row_start[I+1]``.

    ``cell_matrix`` is the (3, 3) lower-triangular box matrix (rows = cell vectors) for the
    minimum-image convention, or None.  Periodic cells are gridded in fractional coordinates, so
    triclinic cells work the same way as orthorhombic ones.
    """
    n = len(centers)
    if n == 0:
        return np.zeros(0, np.intp), np.zeros(0, np.intp), np.zeros(1, np.int64)
    centers = np.ascontiguousarray(centers, np.float64)
    radii = np.ascontiguousarray(radii, np.float64)
    periodic = cell_matrix is not None
    r_small = float(np.quantile(radii, 0.9))
    # Cells of half the typical search radius: 125 half-size cells hold ~16 full-cell volumes,
    # against 27 for full-size cells.
    target = 0.5 * (cutoff + 2.0 * r_small)
    if periodic:
        h = np.ascontiguousarray(cell_matrix, np.float64)
        orthorhombic = is_orthorhombic(h)
        widths = perpendicular_widths(h)
        dims = np.maximum(np.floor(widths / target), 1).astype(np.int64)
        frac = centers @ np.linalg.inv(h)
        frac -= np.floor(frac)
        centers = np.ascontiguousarray(frac @ h)  # wrapped into the cell
        idx = np.minimum((frac * dims).astype(np.int64), dims - 1)
        cell = widths / dims                      # perpendicular width of one grid cell
    else:
        h = np.eye(3)
        orthorhombic = True
        lo = centers.min(axis=0)
        span = centers.max(axis=0) - lo + 1e-9
        dims = np.minimum(np.maximum(np.floor(span / target), 1), 512).astype(np.int64)
        cell = np.maximum(span / dims, target)
        idx = np.minimum(((centers - lo) / cell).astype(np.int64), dims - 1)
    idx = np.ascontiguousarray(idx)
    order, start = _bin(idx, dims)
    n_chunks = int(max(1, min(64, n, 20_000_000 // max(n, 1))))
    chunk_bounds = np.linspace(0, n, n_chunks + 1).astype(np.int64)
    hist = np.zeros((n_chunks, n), np.int64)
    dummy = np.zeros((1, 1), np.int64)
    out_dummy = np.zeros(1, np.intp)
    _search(centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, order, start,
            chunk_bounds, hist, dummy, out_dummy, False)
    row_start, cursor = _row_offsets(hist)
    del hist
    out_j = np.empty(row_start[-1], np.intp)
    _search(centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, order, start,
            chunk_bounds, dummy, cursor, out_j, True)
    return _finish_rows(row_start, out_j), out_j, row_start


def all_pairs_rows(n: int):
    """Every residue pair I <= J in (I, J) order, with CSR row starts (like candidate_pairs_cells)."""
    i, j = np.triu_indices(n)
    row_start = np.zeros(n + 1, np.int64)
    np.cumsum(np.arange(n, 0, -1), out=row_start[1:])
    return i.astype(np.intp), j.astype(np.intp), row_start


@numba.njit(parallel=True, cache=True)
def locate_pairs(row_start, pair_j, qi, qj):
    """Row index of each query pair (qi <= qj) in the CSR table, or -1 if absent."""
    out = np.empty(len(qi), np.int64)
    for k in numba.prange(len(qi)):
        lo, hi = row_start[qi[k]], row_start[qi[k] + 1]
        target = qj[k]
        while lo < hi:  # binary search in the row
            mid = (lo + hi) // 2
            if pair_j[mid] < target:
                lo = mid + 1
            else:
                hi = mid
        out[k] = lo if lo < row_start[qi[k] + 1] and pair_j[lo] == target else -1
    return out


@numba.njit(cache=True)
def accumulate(target, idx, values):
    """target[idx[k]] += values[k] for every k (serial, so sums are reproducible)."""
    for k in range(len(idx)):
        target[idx[k]] += values[k]
