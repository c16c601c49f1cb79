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
            counts, out_i, out_j, offsets, fill):
    n = centers.shape[0]
    for i in numba.prange(n):
        k = 0
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
        lo, hi = row_start[r] + 1, row_start[r + 1]
        for a in range(lo + 1, hi):  # insertion sort: rows are short
            v = pairs[a, 1]
            b = a - 1
            while b >= lo and pairs[b, 1] > v:
                pairs[b + 1, 1] = pairs[b, 1]
                b -= 1
            pairs[b + 1, 1] = v
    return pairs


def candidate_pairs_cells(centers, radii, cutoff: float, cell_matrix=None) -> np.ndarray:
    """Residue pairs (I <= J, sorted, diagonal included) with |c_I - c_J| < cutoff + r_I + r_J.

    ``cell_matrix`` is the (3, 3) lower-triangular box matrix (rows = cell vectors) for the
    minimum-image convention, or None.  Periodic cells are gridded in fractional coordinates, so
    triclinic cells work the same way as orthorhombic ones.
    """
    n = len(centers)
    if n == 0:
        return np.zeros((0, 2), np.intp)
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
    counts = np.zeros(n, np.int64)
    dummy = np.zeros(1, np.intp)
    _search(centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, order, start,
            counts, dummy, dummy, counts, False)
    offsets = np.zeros(n, np.int64)
    np.cumsum(counts[:-1], out=offsets[1:])
    total = int(counts.sum())
    out_i = np.empty(total, np.intp)
    out_j = np.empty(total, np.intp)
    _search(centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, order, start,
            counts, out_i, out_j, offsets, True)
    return _sorted_with_diagonal(out_i, out_j, n)
