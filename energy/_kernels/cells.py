"""Cell-list search for residue pairs whose bounding spheres come within the cutoff (numba).

Residue centres are binned into a grid of cells of side about ``(cutoff + 2 r_small) / 2``,
where ``r_small`` is a typical (90th percentile) residue radius, and copied in cell order so the
inner loop streams through memory.  Row I (the partners J > I of residue I) is owned by one
thread: it visits the grid columns within ``cutoff + r_I + r_max`` (skipping a column, and
trimming a column's ends, when even its largest residue cannot reach), and scans the cells of a
column that are in reach as one contiguous run of the cell order (at most three runs where the
column wraps around a periodic cell), keeping residues J > I.  The test is exact on the
spheres: |c_I - c_J| < cutoff + r_I + r_J (minimum image in any periodic cell, orthorhombic or
triclinic).  Two passes, count then fill, so the output is written once in place: rows sorted by
(I, J), I <= J, every (I, I) included.  Rows are taken in the cell order, which is also handed
back (``spatial_order``) so that the kernel can lay atoms out and take rows the same way.
"""
from __future__ import annotations

from typing import NamedTuple

import numba
import numpy as np

from energy._kernels.csr import PAIR_INDEX
from energy._kernels.pbc import is_orthorhombic, minimum_image, perpendicular_widths


@numba.njit(cache=True)
def _bin(idx, dims):
    """Order residues by cell; ``start[c]:start[c+1]`` indexes ``order`` for cell c; ``flat``
    is each residue's cell."""
    n = idx.shape[0]
    flat = (idx[:, 0] * dims[1] + idx[:, 1]) * dims[2] + idx[:, 2]
    order = np.argsort(flat, kind="mergesort")
    n_cells = dims[0] * dims[1] * dims[2]
    start = np.zeros(n_cells + 1, np.int64)
    for i in range(n):
        start[flat[i] + 1] += 1
    for c in range(n_cells):
        start[c + 1] += start[c]
    return order, start, flat


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
def _axis_visits(shells, n_cells, periodic):
    """How many cells to visit along one axis, and whether the whole (periodic) axis is covered."""
    if periodic and 2 * shells + 1 >= n_cells:
        return n_cells, True
    return 2 * shells + 1, False


@numba.njit(cache=True, inline="always")
def _axis_cell(k, center_cell, shells, n_cells, periodic, covered):
    """k-th visited cell along an axis: (cell index or -1, lattice wraps, cell offset).

    Without a full cover |offset| <= shells < n_cells / 2, so one wrap at most (no division)."""
    if covered:
        return k, 0, 0
    off = k - shells
    c = center_cell + off
    if periodic:
        if c < 0:
            return c + n_cells, -1, off
        if c >= n_cells:
            return c - n_cells, 1, off
        return c, 0, off
    if c < 0 or c >= n_cells:
        return -1, 0, off
    return c, 0, off


@numba.njit(cache=True, inline="always")
def _first_above(values, lo, hi, i):
    """First index in the sorted slice ``values[lo:hi]`` holding a value above ``i``."""
    while lo < hi:
        mid = (lo + hi) // 2
        if values[mid] <= i:
            lo = mid + 1
        else:
            hi = mid
    return lo


@numba.njit(cache=True, inline="always")
def _cell_in_reach(e, center_cell, shells, n_cells, periodic, col, gxy2, width, orthorhombic,
                   base_reach, cell_max_radius):
    """Whether the e-th cell along z of a column can hold a partner (its largest residue within
    ``base_reach`` + its radius of the lower bound of the distance), for trimming a run's ends."""
    off = e - shells
    c = center_cell + off
    if c < 0 or c >= n_cells:
        if not periodic:
            return False
        c = c + n_cells if c < 0 else c - n_cells
    gz = max(0, abs(off) - 1) * width
    gap2 = gxy2 + gz * gz if orthorhombic else max(gxy2, gz * gz)
    reach = base_reach + cell_max_radius[col + c]
    return gap2 <= reach * reach


@numba.njit(cache=True, inline="always")
def _scan_run(s_lo, s_hi, i, shx, shy, shz, min_image, lx, ly, lz, base, cell_x, cell_y, cell_z,
              cell_radius, cell_residue, fill, row, tail, found, pos):
    """Residues ``s_lo:s_hi`` (cell order) that are partners J > I of residue I: counted, or
    written to ``row``.  Each candidate is moved by (shx, shy, shz) (the run's image shift minus
    the centre of I) or, with ``min_image`` (an orthorhombic cell, edges lx, ly, lz, too narrow
    for one image per run), by the centre of I and then to its own minimum image (the rounding of
    energy._kernels.pbc).  The fill tests the whole run first, into the scratch ``row[tail:]`` (a loop
    that vectorises), then writes every candidate and advances on a hit (branch-free).  Unsigned
    indices spare the negative-index wrap-around on every load (so the loops vectorise with
    plain loads)."""
    lo = np.uint64(s_lo)
    n = np.uint64(s_hi - s_lo)
    for t in range(np.uint64(0), n):
        s = lo + t
        dx = cell_x[s] + shx
        dy = cell_y[s] + shy
        dz = cell_z[s] + shz
        if min_image:
            dx -= lx * np.rint(dx / lx)
            dy -= ly * np.rint(dy / ly)
            dz -= lz * np.rint(dz / lz)
        lim = base + cell_radius[s]
        hit = (dx * dx + dy * dy + dz * dz < lim * lim) & (cell_residue[s] > i)
        if fill:
            row[tail + t] = 1 if hit else 0
        else:
            found += 1 if hit else 0
    if fill:
        for t in range(np.uint64(0), n):
            row[pos] = cell_residue[lo + t]
            pos += np.uint64(row[tail + t])
    return found, pos


@numba.njit(cache=True)
def _radix_sort(a):
    """Sort the non-negative integers ``a`` in place: LSD radix sort, 8 bits a pass, over the span
    of the values only (rows of ~200 residue indices sort several times faster than quicksort).
    Its work arrays are allocated here, in a plain function, never in a ``prange`` body, where
    numba may hoist a fixed-size allocation out of the loop and share it between threads."""
    n = len(a)
    if n < 2:
        return
    scratch = np.empty(n, a.dtype)
    counts = np.empty(256, np.int64)
    lo = a.min()
    span = a.max() - lo
    src = a
    dst = scratch[:n]
    shift = 0
    while (span >> shift) > 0:
        counts[:] = 0
        for k in range(n):
            counts[((src[k] - lo) >> shift) & 255] += 1
        total = 0
        for b in range(256):
            c = counts[b]
            counts[b] = total
            total += c
        for k in range(n):
            d = ((src[k] - lo) >> shift) & 255
            dst[counts[d]] = src[k]
            counts[d] += 1
        src, dst = dst, src
        shift += 8
    if (shift // 8) % 2 == 1:  # an odd number of passes left the result in scratch
        a[:] = src


@numba.njit(parallel=True, cache=True, error_model="numpy")
def _search_rows(centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, start,
                 cell_xyz, cell_radius, cell_residue, cell_max_radius, column_max_radius, r_max,
                 max_run, row_order, row_start,
                 out_i, out_j, fill):
    """Partners J > I of every residue I, row by row in parallel (each row owned by one thread).

    Count pass (``fill`` False): returns the partner count of each row.  Fill pass: writes row I
    into ``out_i``/``out_j[row_start[I]:row_start[I+1]]``, the diagonal first, then the partners
    in increasing order.  ``cell_*`` arrays hold the residues in cell order (cell c is
    ``start[c]:start[c+1]``, residue indices increasing), so the inner loop streams through memory.
    """
    n = len(radii)
    counts = np.zeros(n if not fill else 0, np.int64)
    for k in numba.prange(n):
        i = row_order[k]
        ri = radii[i]
        reach_max = cutoff + ri + r_max
        sx_ = int(np.ceil(reach_max / cell[0]))
        sy_ = int(np.ceil(reach_max / cell[1]))
        sz_ = int(np.ceil(reach_max / cell[2]))
        nx, cov_x = _axis_visits(sx_, dims[0], periodic)
        ny, cov_y = _axis_visits(sy_, dims[1], periodic)
        nz, cov_z = _axis_visits(sz_, dims[2], periodic)
        exact_shift = not (cov_x or cov_y or cov_z)
        ci0, ci1, ci2 = centers[i, 0], centers[i, 1], centers[i, 2]
        found = 0
        pos = np.uint64(0)
        # Row I is gathered in its own buffer: the row, one slot of slack for the branch-free
        # write, then scratch for the hits of one run (at most ``max_run`` residues).
        tail = np.uint64(row_start[i + 1] - row_start[i] + 1 if fill else 0)
        row = np.empty(tail + np.uint64(max_run if fill else 0), np.intp)
        if fill:
            row[0] = i
            pos = np.uint64(1)
        for a in range(nx):
            cx, wx, ox = _axis_cell(a, idx[i, 0], sx_, dims[0], periodic, cov_x)
            if cx < 0:
                continue
            gx = max(0, abs(ox) - 1) * cell[0]
            if gx > reach_max:
                continue
            for b in range(ny):
                cy, wy, oy = _axis_cell(b, idx[i, 1], sy_, dims[1], periodic, cov_y)
                if cy < 0:
                    continue
                gy = max(0, abs(oy) - 1) * cell[1]
                gxy2 = gx * gx + gy * gy if orthorhombic else max(gx * gx, gy * gy)
                if gxy2 > reach_max * reach_max:
                    continue
                # z offsets whose gap can still be within reach: |oz| - 1 <= sqrt(left) / cell_z
                e_lo, e_hi = 0, nz
                if not cov_z:
                    left = reach_max * reach_max - gxy2 if orthorhombic else reach_max * reach_max
                    z_reach = min(sz_, 1 + int(np.sqrt(left) / cell[2]))
                    e_lo, e_hi = sz_ - z_reach, sz_ + z_reach + 1
                col = (cx * dims[1] + cy) * dims[2]
                if cov_z and periodic and orthorhombic:
                    # A cell narrow for the reach: the whole column is one run, and each candidate
                    # takes its own minimum image.
                    found, pos = _scan_run(start[col], start[col + dims[2]], i, -ci0, -ci1, -ci2,
                                           True, h[0, 0], h[1, 1], h[2, 2], cutoff + ri,
                                           cell_xyz[0], cell_xyz[1], cell_xyz[2], cell_radius,
                                           cell_residue, fill, row, tail, found, pos)
                    continue
                if exact_shift or (periodic and orthorhombic):
                    # The column's cells in reach form at most three runs (below, inside, above the
                    # lattice along z), each contiguous in cell order: scan each run in one loop
                    # (with the run's image shift, or per candidate where x or y is covered).
                    reach_col = cutoff + ri + column_max_radius[cx * dims[1] + cy]
                    if gxy2 > reach_col * reach_col:
                        continue
                    while e_lo < e_hi and not _cell_in_reach(e_lo, idx[i, 2], sz_, dims[2], periodic,
                                                             col, gxy2, cell[2], orthorhombic,
                                                             cutoff + ri, cell_max_radius):
                        e_lo += 1
                    while e_hi > e_lo and not _cell_in_reach(e_hi - 1, idx[i, 2], sz_, dims[2],
                                                             periodic, col, gxy2, cell[2],
                                                             orthorhombic, cutoff + ri,
                                                             cell_max_radius):
                        e_hi -= 1
                    below = sz_ - idx[i, 2]          # offsets e < below fall below the lattice
                    above = dims[2] + sz_ - idx[i, 2]  # offsets e >= above fall above it
                    for wz in range(-1, 2):
                        if wz == -1:
                            p, q = e_lo, min(e_hi, below)
                        elif wz == 0:
                            p, q = max(e_lo, below), min(e_hi, above)
                        else:
                            p, q = max(e_lo, above), e_hi
                        if p >= q or (wz != 0 and not periodic):
                            continue
                        c_first = idx[i, 2] + p - sz_ - wz * dims[2]
                        shx = wx * h[0, 0] + wy * h[1, 0] + wz * h[2, 0] - ci0
                        shy = wy * h[1, 1] + wz * h[2, 1] - ci1
                        shz = wz * h[2, 2] - ci2
                        if not exact_shift:  # x or y covered: each candidate's own image
                            shx, shy, shz = -ci0, -ci1, -ci2
                        found, pos = _scan_run(start[col + c_first], start[col + c_first + q - p],
                                               i, shx, shy, shz, not exact_shift, h[0, 0],
                                               h[1, 1], h[2, 2], cutoff + ri, cell_xyz[0],
                                               cell_xyz[1], cell_xyz[2], cell_radius,
                                               cell_residue, fill, row, tail, found, pos)
                    continue
                for e in range(e_lo, e_hi):
                    cz, wz, oz = _axis_cell(e, idx[i, 2], sz_, dims[2], periodic, cov_z)
                    if cz < 0:
                        continue
                    c = col + cz
                    # Lower bound of the distance to any point of this cell (per-axis gaps are
                    # perpendicular distances; they add in quadrature only in orthorhombic cells).
                    gz = max(0, abs(oz) - 1) * cell[2]
                    gap2 = gxy2 + gz * gz if orthorhombic else max(gxy2, gz * gz)
                    reach = cutoff + ri + cell_max_radius[c]
                    if gap2 > reach * reach:
                        continue
                    hi = start[c + 1]
                    lo = _first_above(cell_residue, start[c], hi, i)
                    for s in range(lo, hi):
                        if _close(i, cell_residue[s], centers, radii, cutoff, periodic, h,
                                  orthorhombic):
                            if fill:
                                row[pos] = cell_residue[s]
                                pos += np.uint64(1)
                            else:
                                found += 1
        if fill:
            n_row = np.int64(pos)
            _radix_sort(row[1:n_row])
            first = row_start[i]
            out_j[first:first + n_row] = row[:n_row]
            out_i[first:first + n_row] = i
        else:
            counts[i] = found
    return counts


class CellRows(NamedTuple):
    """Result of :func:`search_rows`: CSR rows of candidate residue pairs, and a spatial order."""

    pair_i: np.ndarray
    pair_j: np.ndarray
    row_start: np.ndarray
    #: (n,) the residues in cell order: neighbours in space are close in this order, so rows
    #: taken in it reuse each other's partners from cache.
    spatial_order: np.ndarray


#: prange iterations handed to a thread at a time (numba's dynamic chunking): rows differ in
#: cost (a large residue has many partners), so static halves would not balance.
ROWS_PER_GRAB = 64


def candidate_pairs_cells(centers, radii, cutoff: float, cell_matrix=None):
    """(pair_i, pair_j, row_start) of :func:`search_rows`.

    Parameters
    ----------
    centers : (n, 3) float
        Residue sphere centres, angstrom.
    radii : (n,) float
        Residue sphere radii, angstrom.
    cutoff : float
        Nonbonded cutoff, angstrom.
    cell_matrix : (3, 3) float or None, optional
        Lower-triangular box matrix (rows = cell vectors, angstrom) for the minimum-image
        convention, or None (default) for no periodicity.

    Returns
    -------
    pair_i, pair_j : (m,) int32
        Candidate residue pairs I <= J, sorted by (I, J), diagonal included.
    row_start : (n + 1,) int64
        CSR row starts: the pairs of row I are ``row_start[I]:row_start[I+1]``.
    """
    return search_rows(centers, radii, cutoff, cell_matrix)[:3]


def search_rows(centers, radii, cutoff: float, cell_matrix=None) -> CellRows:
    """Residue pairs (I <= J, sorted, diagonal included) with |c_I - c_J| < cutoff + r_I + r_J.

    ``cell_matrix`` is the (3, 3) lower-triangular box matrix (rows = cell vectors) for the
    minimum-image convention, or None.  Periodic cells are gridded in fractional coordinates, so
    triclinic cells work the same way as orthorhombic ones.

    Parameters
    ----------
    centers : (n, 3) float
        Residue sphere centres, angstrom.
    radii : (n,) float
        Residue sphere radii, angstrom.
    cutoff : float
        Nonbonded cutoff, angstrom.
    cell_matrix : (3, 3) float or None, optional
        Lower-triangular box matrix (rows = cell vectors, angstrom) for the minimum-image
        convention, or None (default) for no periodicity.

    Returns
    -------
    CellRows
        ``pair_i``, ``pair_j``: (m,) int32 (``PAIR_INDEX``) arrays sorted by (I, J);
        ``row_start``: (n + 1,) int64 CSR row starts, so that the pairs of row I are rows
        ``row_start[I]:row_start[I+1]``; ``spatial_order``: (n,) intp, the residues in cell order.
    """
    n = len(centers)
    if n == 0:
        return CellRows(np.zeros(0, PAIR_INDEX), np.zeros(0, PAIR_INDEX), np.zeros(1, np.int64),
                        np.zeros(0, np.intp))
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
    order, start, flat = _bin(idx, dims)
    cell_xyz = np.ascontiguousarray(centers[order].T)  # (3, n): x, y, z rows
    cell_radius = np.ascontiguousarray(radii[order])
    cell_residue = order.astype(np.intp)
    cell_max_radius = np.zeros(int(np.prod(dims)))
    np.maximum.at(cell_max_radius, flat, radii)
    r_max = float(radii.max())
    args = (centers, radii, cutoff, periodic, h, orthorhombic, cell, dims, idx, start, cell_xyz,
            cell_radius, cell_residue, cell_max_radius,
            cell_max_radius.reshape(dims[0] * dims[1], dims[2]).max(axis=1), r_max,
            int((start[dims[2]::dims[2]] - start[:-1:dims[2]]).max()),  # longest column
            cell_residue)
    none = np.zeros(0, np.intp)
    with numba.parallel_chunksize(ROWS_PER_GRAB):
        counts = _search_rows(*args, np.zeros(1, np.int64), none, none, False)
        row_start = np.zeros(n + 1, np.int64)
        np.cumsum(counts + 1, out=row_start[1:])
        pair_i = np.empty(row_start[-1], PAIR_INDEX)
        pair_j = np.empty(row_start[-1], PAIR_INDEX)
        _search_rows(*args, row_start, pair_i, pair_j, True)
    return CellRows(pair_i, pair_j, row_start, cell_residue)
