"""Residue-pair tables as CSR rows, and the small compiled helpers that work on them.

A table lists residue pairs (I, J), I <= J, sorted by (I, J); ``row_start[I]:row_start[I+1]``
are the pairs of row I, the diagonal (I, I) first where present.  The cell search
(:mod:`energy._kernels.cells`) and the all-pairs builders here produce such tables; the kernel
(:mod:`energy._kernels.residue_rows`) and the aggregation (:mod:`energy.decomposition.residue_pairs`) consume them.
"""
from __future__ import annotations

import numba
import numpy as np

#: dtype of the residue indices of every residue-pair table (pair_i, pair_j): 4 bytes, not 8,
#: on columns of millions of rows whose pages are written for the first time on every evaluation.
PAIR_INDEX = np.int32

def interleaved_rows(lo: int, hi: int) -> np.ndarray:
    """Rows lo..hi-1 dealt round-robin to the threads.

    numba's ``prange`` hands each thread one contiguous stretch of the iteration space, and rows
    owning the pairs J > I grow shorter along the index (linearly so without a cutoff), so
    contiguous stretches would not balance.

    Parameters
    ----------
    lo, hi : int
        First row and one past the last row.

    Returns
    -------
    (hi - lo,) intp
        The rows ``lo..hi-1`` reordered: every ``numba.get_num_threads()``-th row starting at
        ``lo``, then those starting at ``lo + 1``, ...  (in order when there is one thread).
    """
    threads = numba.get_num_threads()
    rows = np.arange(lo, hi, dtype=np.intp)
    return np.concatenate([rows[t::threads] for t in range(threads)]) if threads > 1 else rows


def all_pairs_rows(n: int):
    """Every residue pair I <= J in (I, J) order, with CSR row starts (like candidate_pairs_cells).

    Parameters
    ----------
    n : int
        Number of residues.

    Returns
    -------
    pair_i, pair_j : (n (n + 1) / 2,) int32 (``PAIR_INDEX``)
        The two residue indices of each pair.
    row_start : (n + 1,) int64
        Row ``I`` is ``row_start[I]:row_start[I + 1]``; its diagonal pair (I, I) comes first.
    """
    row_start = np.zeros(n + 1, np.int64)
    pair_i, pair_j = upper_triangle_rows(0, n, n, row_start)
    return pair_i, pair_j, row_start


@numba.njit(cache=True)
def upper_triangle_rows(lo, hi, n, row_start):
    """Rows lo..hi-1 of the full upper triangle I <= J < n (compiled).

    Parameters
    ----------
    lo, hi : int
        First row and one past the last row.
    n : int
        Number of residues.
    row_start : (n + 1,) int64
        Written in place: ``row_start[lo:hi+1]`` is set to the offsets of rows ``lo..hi-1``
        within the returned arrays (``row_start[lo] == 0``); other entries are left alone.

    Returns
    -------
    pair_i, pair_j : (m,) int32 (``PAIR_INDEX``)
        The pairs (I, J), I in ``lo..hi-1``, J in ``I..n-1``, in (I, J) order;
        m = sum of (n - I) over the rows.
    """
    m = 0
    for i in range(lo, hi):
        row_start[i] = m
        m += n - i
    row_start[hi] = m
    pair_i = np.empty(m, PAIR_INDEX)
    pair_j = np.empty(m, PAIR_INDEX)
    k = 0
    for i in range(lo, hi):
        for j in range(i, n):
            pair_i[k] = i
            pair_j[k] = j
            k += 1
    return pair_i, pair_j


@numba.njit(parallel=True, cache=True)
def locate_pairs(row_start, pair_j, qi, qj):
    """Row index of each query pair (qi <= qj) in the CSR table, or -1 if absent (compiled, parallel).

    The diagonal entry, which leads its row, is tried first; otherwise a binary search in the row.

    Parameters
    ----------
    row_start : (n_residues + 1,) int64
        CSR row starts of the table.
    pair_j : (m,) integer
        Second residue index of each listed pair, ascending within each row.
    qi, qj : (q,) integer
        The query pairs, ``qi[k] <= qj[k]``.

    Returns
    -------
    (q,) int64
        Index into the table (``0..m-1``) of each query pair, -1 where the pair is not listed.
    """
    out = np.empty(len(qi), np.int64)
    for k in numba.prange(len(qi)):
        lo, hi = row_start[qi[k]], row_start[qi[k] + 1]
        target = qj[k]
        if lo < hi and pair_j[lo] == target:  # the diagonal leads its row: most bonded queries
            out[k] = lo
            continue
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
    """target[idx[k]] += values[k] for every k (serial, so sums are reproducible; compiled).

    Parameters
    ----------
    target : (m,) float64
        Accumulated in place.
    idx : (k,) integer
        Entry of ``target`` for each value; repeated indices add up.
    values : (k,) float64
        Values to add (kcal/mol where used for energies).

    Returns
    -------
    None
        ``target`` is updated in place.
    """
    for k in range(len(idx)):
        target[idx[k]] += values[k]


@numba.njit(parallel=True, cache=True)
def _fill_in_parallel(a, value, parts):
    n = len(a)
    for t in numba.prange(parts):
        for k in range(t * n // parts, (t + 1) * n // parts):
            a[k] = value


def zeros_in_parallel(n: int) -> np.ndarray:
    """``np.zeros(n)`` whose pages are first touched by all threads at once.

    A fresh column that is then written all over (scattered entries on every page) costs its page
    faults on one thread otherwise (~35 ms for 45 MB here, against ~13 ms).

    Parameters
    ----------
    n : int
        Length of the array.

    Returns
    -------
    (n,) float64
        Zeros.
    """
    a = np.empty(n)
    _fill_in_parallel(a, 0.0, numba.get_num_threads())
    return a


@numba.njit(cache=True)
def _mapped_keys(pair_i, pair_j, row, m):
    keys = np.empty(len(pair_i), np.int64)
    for k in range(len(pair_i)):
        a, b = row[pair_i[k]], row[pair_j[k]]
        if a > b:
            a, b = b, a
        keys[k] = a * m + b
    return keys


def mapped_pair_keys(pair_i, pair_j, row, m: int) -> np.ndarray:
    """Keys (:mod:`energy._kernels.pair_key`) of the pairs ``(row[i], row[j])``, the smaller row
    first, in one compiled pass (no temporary columns).

    Parameters
    ----------
    pair_i, pair_j : (n,) integer
        The pairs, as indices into ``row``.
    row : (n_rows_in,) intp
        Where each index goes (e.g. a residue's row in a blocked table), each in ``[0, m)``.
    m : int
        Number of output rows.

    Returns
    -------
    (n,) int64
        ``min(a, b) * m + max(a, b)`` with ``a = row[pair_i]``, ``b = row[pair_j]``.
    """
    return _mapped_keys(np.ascontiguousarray(pair_i), np.ascontiguousarray(pair_j),
                        np.ascontiguousarray(row, np.int64), np.int64(m))


def symmetric_rows(n, pair_i, pair_j):
    """Both directions of a residue-pair table: every residue's partners, itself included (compiled).

    Parameters
    ----------
    n : int
        Number of residues.
    pair_i, pair_j : (m,) integer
        The listed pairs I <= J.

    Returns
    -------
    partner_ptr : (n + 1,) int64
        Residue I's partners are ``partner_res[partner_ptr[I]:partner_ptr[I+1]]``.
    partner_res : (m', ) int32 (``PAIR_INDEX``)
        Each pair (I, J), I < J, as J in row I and I in row J; (I, I) once in row I.
    """
    counts = np.zeros(n + 1, np.int64)
    for k in range(len(pair_i)):
        counts[pair_i[k] + 1] += 1
        if pair_j[k] != pair_i[k]:
            counts[pair_j[k] + 1] += 1
    for r in range(n):
        counts[r + 1] += counts[r]
    partner_ptr = counts.copy()
    fill = counts[:n].copy()
    partner_res = np.empty(counts[n], PAIR_INDEX)
    for k in range(len(pair_i)):
        i, j = pair_i[k], pair_j[k]
        partner_res[fill[i]] = j
        fill[i] += 1
        if j != i:
            partner_res[fill[j]] = i
            fill[j] += 1
    return partner_ptr, partner_res
