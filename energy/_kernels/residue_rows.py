"""Ordinary nonbonded pairs, residue pair by residue pair: the kernel driven over CSR rows.

Two ways in, both generators that yield ``(done, total)`` progress and return
:class:`RowResults`:

* :func:`evaluate_listed`: the rows are given (the cell search's candidates with a cutoff, or every
  residue pair of a small system without one) and every row is kept.
* :func:`evaluate_all_pairs_in_blocks`: no cutoff on a large system.  Rows are made and evaluated
  block by block (about :data:`BLOCK_PAIRS` residue pairs at a time, never the whole n^2/2 table
  at once); a residue pair is kept when |Coulomb| + |LJ| >= :data:`UNLISTED_BELOW` kcal/mol, or
  when it holds exception pairs, or it is a diagonal (I, I) entry.  The others are summed into
  ``unlisted``: the term totals stay exact, the maps and tables lose only those small entries,
  and reports say how many there were and what they add up to.  Memory is bounded by the kept
  pairs; past :data:`MAX_LISTED_PAIRS` the run stops with a clear error (use a cutoff).
"""
from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from energy._kernels.csr import interleaved_rows, locate_pairs, upper_triangle_rows
from energy._kernels.row_kernel import residue_rows_kernel
from energy.errors import SettingsError

#: Residue pairs per kernel call (whole rows; one progress step each).
BLOCK_PAIRS = 2_000_000
#: Without a cutoff, systems with more residue pairs than this are evaluated in blocks.
ALL_PAIRS_LISTED_LIMIT = 20_000_000
#: kcal/mol: in block mode, residue pairs with |Coulomb| + |LJ| below this are summed, not listed.
UNLISTED_BELOW = 1e-3
#: Block mode stops (SettingsError) once more residue pairs than this would be listed (~3 GB).
MAX_LISTED_PAIRS = 60_000_000


@dataclass(frozen=True)
class KernelInputs:
    """Everything :func:`energy._kernels.row_kernel.residue_rows_kernel` takes besides the rows."""

    positions: np.ndarray      # (n_atoms, 3), each residue's atoms together (kernel layout)
    charges: np.ndarray
    lj_type: np.ndarray
    lj_rmin: np.ndarray
    lj_eps: np.ndarray
    type_has_lj: np.ndarray    # (n_types,) bool: the type has a nonzero well depth with some type
    is_heavy: np.ndarray
    atom_of: np.ndarray        # kernel atom row -> system atom index
    res_start: np.ndarray      # (n_res,) residue r's atoms are rows res_start[r]:res_end[r]
    res_end: np.ndarray
    excl_ptr: np.ndarray
    excl_idx: np.ndarray
    centers: np.ndarray
    radii: np.ndarray
    box_matrix: np.ndarray
    orthorhombic: bool
    min_width: float
    periodic: bool
    constants: np.ndarray
    cutoff2: float
    vectorised: bool

    def run(self, rows, row_start, pair_j, has_excl, coul, lj, count, min_heavy) -> None:
        """Run :func:`~energy._kernels.row_kernel.residue_rows_kernel` on ``rows``, writing the outputs in place.

        Parameters
        ----------
        rows : (k,) intp
            The rows (first residues) to evaluate, in the order to take them.
        row_start : (n_res + 1,) int64
            CSR row starts of the residue-pair table.
        pair_j : (m,) int32
            Second residue of each pair (the row's diagonal first).
        has_excl : (m,) bool
            The residue pair holds at least one exception pair (its atom pairs need the exclusion check).
        coul, lj : (m,) float64
            Output: Coulomb and vdW energy of each pair of these rows, kcal/mol.
        count : (m,) int32
            Output: atom pairs within the cutoff (all pairs without one), exceptions left out.
        min_heavy : (m,) float64
            Output: smallest heavy-atom distance of each pair, A (inf when none).
        """
        with numba.parallel_chunksize(1):  # the kernel's chunks go to whichever thread is free
            residue_rows_kernel(self.positions, self.charges, self.lj_type, self.lj_rmin,
                                self.lj_eps, self.type_has_lj, self.is_heavy, self.atom_of,
                                self.res_start, self.res_end, rows, row_start, pair_j, has_excl,
                                self.excl_ptr, self.excl_idx, self.centers, self.radii,
                                self.box_matrix, self.orthorhombic, self.min_width, self.periodic,
                                self.constants, self.cutoff2, self.vectorised, coul, lj, count,
                                min_heavy)


@dataclass(frozen=True)
class RowResults:
    """Kernel sums per kept residue pair (CSR rows), and the totals over every pair examined."""

    pair_i: np.ndarray
    pair_j: np.ndarray
    row_start: np.ndarray
    coulomb: np.ndarray
    lj: np.ndarray
    count: np.ndarray
    min_heavy: np.ndarray
    coulomb_total: float
    lj_total: float
    n_atom_pairs: int
    unlisted: dict | None = None   # block mode: n_pairs, coulomb, lj, below (kcal/mol)


def evaluate_listed(inputs: KernelInputs, pair_i, pair_j, row_start, has_excl, row_order=None):
    """Every given row, kept.  Generator: yields progress, returns :class:`RowResults`.

    Rows are evaluated in blocks of about :data:`BLOCK_PAIRS` residue pairs, one progress step each.

    Parameters
    ----------
    inputs : KernelInputs
        Atom and residue arrays of the kernel.
    pair_i, pair_j : (m,) int32
        The residue pairs I <= J, sorted by (I, J).
    row_start : (n_res + 1,) int64
        CSR row starts.
    has_excl : (m,) bool
        The residue pair holds at least one exception pair.
    row_order : (n_res,) intp or None, optional
        The order to take rows in (the cell search's spatial order, so that consecutive rows share
        partners in cache); by default (None) rows are dealt round-robin to the threads.

    Yields
    ------
    done, total : int
        Residue pairs evaluated so far, out of ``m``.

    Returns
    -------
    RowResults
        (The generator's return value.)  Per pair: ``coulomb``, ``lj`` (m,) float64 kcal/mol,
        ``count`` (m,) int32, ``min_heavy`` (m,) float64 A; totals ``coulomb_total``, ``lj_total``
        (kcal/mol), ``n_atom_pairs``; ``unlisted`` None.
    """
    n_res = len(row_start) - 1
    m = len(pair_i)
    coul = np.zeros(m); lj = np.zeros(m)
    count = np.zeros(m, np.int32); min_heavy = np.zeros(m)
    yield 0, m
    if row_order is None:
        cuts = np.unique(np.searchsorted(row_start, np.arange(0, m, BLOCK_PAIRS), side="right") - 1)
        blocks = [interleaved_rows(a, b) for a, b in zip([0, *cuts[cuts > 0]], [*cuts[cuts > 0], n_res])]
    else:
        done = np.cumsum(np.diff(row_start)[row_order])
        cuts = np.unique(np.searchsorted(done, np.arange(BLOCK_PAIRS, m, BLOCK_PAIRS)))
        blocks = np.split(row_order, cuts)
    finished = 0
    for rows in blocks:
        inputs.run(rows, row_start, pair_j, has_excl, coul, lj, count, min_heavy)
        finished += int(np.sum(row_start[rows + 1] - row_start[rows]))
        yield finished, m
    return RowResults(pair_i, pair_j, row_start, coul, lj, count, min_heavy, float(coul.sum()),
                      float(lj.sum()), int(count.sum()))


def _block_end(lo: int, n: int) -> int:
    """Last row (exclusive) of the block starting at row ``lo``: about BLOCK_PAIRS pairs."""
    sizes = np.arange(n - lo, 0, -1, dtype=np.int64)
    return lo + max(1, int(np.searchsorted(np.cumsum(sizes), BLOCK_PAIRS)))


def evaluate_all_pairs_in_blocks(inputs: KernelInputs, n_res: int, exception_keys):
    """No cutoff, in blocks of rows; small pairs summed, not listed (module docstring).

    Parameters
    ----------
    inputs : KernelInputs
        Atom and residue arrays of the kernel.
    n_res : int
        Number of residues.
    exception_keys : tuple of two (e,) integer arrays
        ``(lo, hi)``: the residue pairs holding exception pairs, sorted, lo <= hi.

    Yields
    ------
    done, total : int
        Residue pairs evaluated so far, out of n_res (n_res + 1) / 2.

    Returns
    -------
    RowResults
        (The generator's return value.)  The kept pairs only (diagonal, holding exceptions, or
        |Coulomb| + |LJ| >= :data:`UNLISTED_BELOW` kcal/mol) with CSR row starts; totals over every
        pair (kcal/mol); ``unlisted`` a dict ``n_pairs``, ``coulomb``, ``lj`` (kcal/mol) and
        ``below`` (the threshold, kcal/mol).

    Raises
    ------
    SettingsError
        If more than :data:`MAX_LISTED_PAIRS` residue pairs would be kept.
    """
    exc_lo, exc_hi = exception_keys
    total = n_res * (n_res + 1) // 2
    row_start = np.zeros(n_res + 1, np.int64)
    kept = {k: [] for k in ("i", "j", "coulomb", "lj", "count", "min_heavy")}
    n_kept = 0
    coul_total = lj_total = 0.0
    n_atom_pairs = 0
    unlisted = {"n_pairs": 0, "coulomb": 0.0, "lj": 0.0, "below": UNLISTED_BELOW}
    done = 0
    yield 0, total
    lo = 0
    while lo < n_res:
        hi = min(n_res, _block_end(lo, n_res))
        pair_i, pair_j = upper_triangle_rows(lo, hi, n_res, row_start)
        m = len(pair_i)
        has_excl = np.zeros(m, np.bool_)
        sel = (exc_lo >= lo) & (exc_lo < hi)
        if sel.any():
            rows = locate_pairs(row_start, pair_j, exc_lo[sel], exc_hi[sel])
            has_excl[rows[rows >= 0]] = True
        coul = np.zeros(m); lj = np.zeros(m)
        count = np.zeros(m, np.int32); min_heavy = np.zeros(m)
        inputs.run(interleaved_rows(lo, hi), row_start, pair_j, has_excl, coul, lj, count, min_heavy)
        coul_total += float(coul.sum())
        lj_total += float(lj.sum())
        n_atom_pairs += int(count.sum())
        keep = (pair_i == pair_j) | has_excl | (np.abs(coul) + np.abs(lj) >= UNLISTED_BELOW)
        drop = ~keep
        unlisted["n_pairs"] += int(drop.sum())
        unlisted["coulomb"] += float(coul[drop].sum())
        unlisted["lj"] += float(lj[drop].sum())
        for key, col in (("i", pair_i), ("j", pair_j), ("coulomb", coul), ("lj", lj),
                         ("count", count), ("min_heavy", min_heavy)):
            kept[key].append(col[keep])
        n_kept += int(keep.sum())
        if n_kept > MAX_LISTED_PAIRS:
            raise SettingsError(f"without a cutoff this system has {total:,} residue pairs and more "
                                f"than {MAX_LISTED_PAIRS:,} of them exceed {UNLISTED_BELOW:g} kcal/mol; "
                                "set a cutoff (e.g. --cutoff 12) to decompose it")
        done += m
        lo = hi
        yield done, total
    cols = {k: np.concatenate(v) for k, v in kept.items()}
    starts = np.zeros(n_res + 1, np.int64)
    np.cumsum(np.bincount(cols["i"], minlength=n_res), out=starts[1:])
    return RowResults(cols["i"], cols["j"], starts, cols["coulomb"], cols["lj"], cols["count"],
                      cols["min_heavy"], coul_total, lj_total, n_atom_pairs, unlisted)
