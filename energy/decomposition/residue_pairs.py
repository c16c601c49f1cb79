"""Residue-pair decomposition: sparse residue x residue matrices of every term.

Attribution rule (docs/physics.md): a nonbonded atom pair goes to the pair of residues of its two
atoms.  A bonded term whose atoms lie in one residue goes to the diagonal; one whose atoms span m
distinct residues is split equally among the m(m-1)/2 distinct residue pairs they form (a peptide
dihedral spanning residues i and i+1 goes wholly to (i, i+1); a CMAP term spanning i-1, i, i+1
puts a third on each of (i-1, i), (i-1, i+1) and (i, i+1)).  So every matrix sums to its term's
total.  Per-residue totals give each residue half of every off-diagonal entry it is part of and
the whole of its diagonal entry, so they too sum to the total.
"""
from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations

import numpy as np

from energy._kernels.csr import PAIR_INDEX, accumulate, locate_pairs, zeros_in_parallel
from energy._kernels.pair_key import pair_keys, split_keys  # noqa: F401 (pair_keys: public here)
from energy.terms import registry
from energy.terms.registry import BONDED_TERMS, DERIVED_SUMS, TERMS


def split_over_residue_pairs(atoms: np.ndarray, energies: np.ndarray, resindex: np.ndarray):
    """Attribute each bonded interaction to residue pairs.

    Parameters
    ----------
    atoms : (n, k) intp
        Atom indices of each interaction.
    energies : (n,) float64
        Energy of each interaction, kcal/mol.
    resindex : (n_atoms,) intp
        Residue of each atom (atom -> residue).

    Returns
    -------
    pair_i, pair_j : (e,) intp
        Residue pairs, pair_i <= pair_j, one row per (interaction, residue pair).
    values : (e,) float64
        The share of each interaction's energy on that pair, kcal/mol.
    """
    return BondedAttribution.build(atoms, resindex).split(energies)


@dataclass(frozen=True)
class BondedAttribution:
    """Where each interaction of one bonded table goes (topology only, so built once per system):
    entry e takes ``share[e]`` of interaction ``source[e]``'s energy into (pair_i[e], pair_j[e])."""

    pair_i: np.ndarray
    pair_j: np.ndarray
    source: np.ndarray
    share: np.ndarray

    @classmethod
    def build(cls, atoms: np.ndarray, resindex: np.ndarray) -> BondedAttribution:
        """Attribution of the interactions of one bonded table (the rule of the module docstring).

        Parameters
        ----------
        atoms : (n, k) intp
            Atom indices of each interaction.
        resindex : (n_atoms,) intp
            Residue of each atom.

        Returns
        -------
        BondedAttribution
            ``pair_i``, ``pair_j`` (e,) intp with pair_i <= pair_j; ``source`` (e,) intp, the
            interaction each entry comes from; ``share`` (e,) float64, the fraction (1 for one residue
            or two, 1 / (m (m - 1) / 2) for m residues).
        """
        if len(atoms) == 0:
            z = np.zeros(0, np.intp)
            return cls(z, z, z, np.zeros(0))
        res = np.sort(resindex[atoms], axis=1)
        distinct = np.ones(res.shape, dtype=bool)
        distinct[:, 1:] = res[:, 1:] != res[:, :-1]
        m = distinct.sum(axis=1)
        out_i, out_j, out_src, out_share = [], [], [], []
        for n_res in np.unique(m):
            rows = np.flatnonzero(m == n_res)
            uniq = res[rows][distinct[rows]].reshape(len(rows), n_res)
            combos = [(0, 0)] if n_res == 1 else list(combinations(range(n_res), 2))
            for a, b in combos:
                out_i.append(uniq[:, a]); out_j.append(uniq[:, b]); out_src.append(rows)
                out_share.append(np.full(len(rows), 1.0 / len(combos)))
        return cls(np.ascontiguousarray(np.concatenate(out_i), np.intp),
                   np.ascontiguousarray(np.concatenate(out_j), np.intp),
                   np.concatenate(out_src), np.concatenate(out_share))

    def split(self, energies: np.ndarray):
        """(pair_i, pair_j, values) of these interactions' ``energies``.

        Parameters
        ----------
        energies : (n,) float64
            Energy of each interaction of the table, kcal/mol.

        Returns
        -------
        pair_i, pair_j : (e,) intp
            Residue pairs, pair_i <= pair_j.
        values : (e,) float64
            The share of each interaction's energy on that pair, kcal/mol.
        """
        return self.pair_i, self.pair_j, energies[self.source] * self.share


@dataclass(frozen=True)
class ResiduePairEnergies:
    """Sparse upper-triangular residue-pair matrices, one value column per term (kcal/mol).

    ``pair_i``, ``pair_j`` (n_pairs,) with i <= j; ``values[term]`` (n_pairs,); ``total`` is
    their sum; ``min_heavy_distance`` (n_pairs,) A, the smallest heavy-atom distance seen between
    the two residues (inf when none was examined, e.g. beyond the cutoff).
    """

    n_residues: int
    pair_i: np.ndarray
    pair_j: np.ndarray
    values: dict
    min_heavy_distance: np.ndarray

    @property
    def total(self) -> np.ndarray:
        return sum(self.values[t] for t in TERMS)

    def __len__(self) -> int:
        return len(self.pair_i)

    def column(self, quantity: str) -> np.ndarray:
        """A term name, ``total``, ``bonded`` (sum of bonded terms) or ``nonbonded``.

        Parameters
        ----------
        quantity : str
            A term name (``values`` key), ``total``, ``bonded``, ``nonbonded`` (Coulomb + LJ) or
            ``effective_electrostatics`` (Coulomb + polar solvation).

        Returns
        -------
        (n_pairs,) float64
            The quantity on each listed residue pair, kcal/mol.

        Raises
        ------
        KeyError
            If ``quantity`` is none of these.
        """
        if quantity == "total":
            return self.total
        if quantity == "bonded":
            return sum(self.values[t] for t in BONDED_TERMS)
        if quantity in DERIVED_SUMS:
            first, second = DERIVED_SUMS[quantity]
            return self.values[first] + self.values[second]
        return self.values[quantity]

    def matrix(self, quantity: str = "total"):
        """Symmetric sparse (n_residues, n_residues) scipy CSR matrix; the upper triangle sums to the total.

        Parameters
        ----------
        quantity : str, optional
            A term name, ``total`` (default), ``bonded`` or ``nonbonded`` (see :meth:`column`).

        Returns
        -------
        scipy.sparse.csr_matrix of float64, shape (n_residues, n_residues)
            Entry (i, j) and (j, i) the pair's value, kcal/mol (the upper triangle with the diagonal
            sums to the quantity's total).
        """
        v = self.column(quantity)
        n = self.n_residues
        off = self.pair_i != self.pair_j
        rows = np.concatenate([self.pair_i, self.pair_j[off]])
        cols = np.concatenate([self.pair_j, self.pair_i[off]])
        import scipy.sparse as sp  # imported when used (0.3 s at start-up otherwise)
        return sp.csr_matrix((np.concatenate([v, v[off]]), (rows, cols)), shape=(n, n))

    def dense(self, quantity: str = "total") -> np.ndarray:
        """Symmetric dense (n_residues, n_residues) array (for maps; n^2 memory).

        Parameters
        ----------
        quantity : str, optional
            A term name, ``total`` (default), ``bonded`` or ``nonbonded`` (see :meth:`column`).

        Returns
        -------
        (n_residues, n_residues) float64
            Entry (i, j) and (j, i) the pair's value, kcal/mol; 0 for pairs not listed.
        """
        v = self.column(quantity)
        out = np.zeros((self.n_residues, self.n_residues))
        out[self.pair_i, self.pair_j] = v
        out[self.pair_j, self.pair_i] = v
        return out

    def per_residue(self, quantity: str = "total") -> np.ndarray:
        """(n_residues,) per-residue totals: half of each off-diagonal entry, all of the diagonal.

        Parameters
        ----------
        quantity : str, optional
            A term name, ``total`` (default), ``bonded`` or ``nonbonded`` (see :meth:`column`).

        Returns
        -------
        (n_residues,) float64
            Per-residue totals, kcal/mol; they sum to the quantity's total.
        """
        v = self.column(quantity)
        diag = self.pair_i == self.pair_j
        w = np.where(diag, v, 0.5 * v)
        out = np.bincount(self.pair_i, weights=w, minlength=self.n_residues)
        out += np.bincount(self.pair_j[~diag], weights=w[~diag], minlength=self.n_residues)
        return out

    def lookup(self, i: int, j: int) -> int | None:
        """Row of residue pair (i, j) (any order), or None if it holds no entry.

        Parameters
        ----------
        i, j : int
            Residue indices (0-based).

        Returns
        -------
        int or None
            Index into ``pair_i``, ``pair_j`` and the value columns.
        """
        i, j = min(i, j), max(i, j)
        key = pair_keys(i, j, self.n_residues)
        keys = pair_keys(self.pair_i, self.pair_j, self.n_residues)
        k = np.searchsorted(keys, key)
        return int(k) if k < len(keys) and keys[k] == key else None


def sorted_unique(keys: np.ndarray) -> np.ndarray:
    """Sorted distinct values of an int64 array (faster than np.unique's hash path here).

    Parameters
    ----------
    keys : (n,) int64
        Values, e.g. pair keys.

    Returns
    -------
    (k,) int64
        The distinct values, ascending (same dtype as ``keys``).
    """
    keys = np.sort(keys)
    if len(keys) == 0:
        return keys
    keep = np.empty(len(keys), bool)
    keep[0] = True
    np.not_equal(keys[1:], keys[:-1], out=keep[1:])
    return keys[keep]


def is_member(keys: np.ndarray, sorted_reference: np.ndarray) -> np.ndarray:
    """(len(keys),) bool: which keys occur in the sorted array ``sorted_reference``.

    Parameters
    ----------
    keys : (n,) int64
        Values to look up.
    sorted_reference : (r,) int64
        Ascending reference values.

    Returns
    -------
    (n,) bool
        True where ``keys[k]`` is in ``sorted_reference``.
    """
    if len(sorted_reference) == 0:
        return np.zeros(len(keys), bool)
    pos = np.minimum(np.searchsorted(sorted_reference, keys), len(sorted_reference) - 1)
    return sorted_reference[pos] == keys


def assemble(n_residues: int, base_i: np.ndarray, base_j: np.ndarray, row_start: np.ndarray,
             base_values: dict, base_min_heavy: np.ndarray, base_keep: np.ndarray,
             contributions) -> ResiduePairEnergies:
    """Merge per-interaction contributions into the nonbonded residue-pair rows.

    ``base_i``, ``base_j`` (m,) are the examined residue pairs, sorted by (i, j) and unique, with CSR
    ``row_start``; their nonbonded sums ``base_values[term]`` (consumed: added to in place),
    minimum heavy-atom distance and ``base_keep`` (True where at least one ordinary atom pair was
    within range).  ``contributions`` is a list of ``(term, pair_i, pair_j, values)``; a
    contribution on a pair absent from the base adds a row.  Rows that end with no contribution
    are dropped, unless they are few (copying then costs more than keeping them; they hold zeros
    and never reach the reports, which list nonzero entries).

    Parameters
    ----------
    n_residues : int
        Number of residues.
    base_i, base_j : (m,) integer
        Examined residue pairs, i <= j, sorted by (i, j), unique.
    row_start : (n_residues + 1,) int64
        CSR row starts of the base pairs.
    base_values : dict of str to (m,) float64
        Nonbonded sums per term (``coulomb``, ``lj``), kcal/mol; consumed (added to in place).
    base_min_heavy : (m,) float64
        Smallest heavy-atom distance of each base pair, A (inf when none).
    base_keep : (m,) bool
        At least one ordinary atom pair of the residue pair was within range.
    contributions : list of (str, (e,) integer, (e,) integer, (e,) float64)
        ``(term, pair_i, pair_j, values)``: energies (kcal/mol) to add on residue pairs
        (pair_i <= pair_j), e.g. bonded shares and exception pairs.

    Returns
    -------
    ResiduePairEnergies
        One read-only (n_pairs,) float64 column per term (kcal/mol; zeros for a term with no
        contribution) and the minimum heavy-atom distances (A).
    """
    located = [locate_pairs(row_start, base_j, np.ascontiguousarray(pi, np.intp),
                            np.ascontiguousarray(pj, np.intp)) for _, pi, pj, _ in contributions]
    if any((loc < 0).any() for loc in located):
        return _assemble_with_new_rows(n_residues, base_i, base_j, base_values, base_min_heavy,
                                       base_keep, contributions)
    m = len(base_i)
    values = {t: base_values.get(t) for t in TERMS}
    touched = base_keep.copy()
    for (term, _, _, v), idx in zip(contributions, located):
        if len(idx):
            if values[term] is None:  # entries on most pages: fault them all at once, in parallel
                values[term] = zeros_in_parallel(m) if len(idx) > m // 512 else np.zeros(m)
            accumulate(values[term], idx, np.ascontiguousarray(v, np.float64))
            touched[idx] = True
    n_touched = int(np.count_nonzero(touched))
    if n_touched >= 0.5 * m:
        pair_i, pair_j, min_heavy = base_i, base_j, base_min_heavy
        values = {t: (np.zeros(m) if v is None else v) for t, v in values.items()}
    else:
        pair_i, pair_j = base_i[touched], base_j[touched]
        min_heavy = base_min_heavy[touched]
        values = {t: (np.zeros(n_touched) if v is None else v[touched]) for t, v in values.items()}
    for v in values.values():
        v.flags.writeable = False
    return ResiduePairEnergies(n_residues, pair_i, pair_j, values, min_heavy)


def _assemble_with_new_rows(n_residues, base_i, base_j, base_values, base_min_heavy, base_keep,
                            contributions) -> ResiduePairEnergies:
    """Slow path: some contributions fall on residue pairs that were not examined (e.g. a bonded
    term spanning residues farther apart than the cutoff); add their rows, then merge."""
    n = np.int64(n_residues)
    keys = pair_keys(base_i, base_j, n)
    extra = [pair_keys(pi, pj, n) for _, pi, pj, _ in contributions]
    new = sorted_unique(np.concatenate(extra)) if extra else np.zeros(0, np.int64)
    new = new[~is_member(new, keys)]
    merged = np.concatenate([keys, new])
    order = np.argsort(merged, kind="stable")
    merged = merged[order]
    grow = lambda a, fill: np.concatenate([a, np.full(len(new), fill, a.dtype)])[order]  # noqa: E731
    new_i, new_j = split_keys(merged, n, PAIR_INDEX)
    counts = np.bincount(new_i, minlength=n_residues)
    row_start = np.zeros(n_residues + 1, np.int64)
    np.cumsum(counts, out=row_start[1:])
    values = {t: grow(v, 0.0) for t, v in base_values.items()}
    return assemble(n_residues, new_i, new_j, row_start, values, grow(base_min_heavy, np.inf),
                    grow(base_keep, False), contributions)


def bonded_terms_for_pair(system, result, res_i: int, res_j: int) -> list[dict]:
    """Bonded interactions that contribute to residue pair (i, j), with the share attributed.

    Each entry: ``term``, ``table`` (system attribute), ``row``, ``atoms`` (tuple of indices),
    ``energy`` (the whole interaction, kcal/mol) and ``share`` (the part in this pair's entry).

    Parameters
    ----------
    system : MolecularSystem
        The system evaluated.
    result : EnergyResult
        Its evaluation (``result.interactions[table]``: (n,) float64 per interaction, kcal/mol).
    res_i, res_j : int
        Residue indices (0-based, any order; equal for a diagonal entry, which takes only the
        interactions lying wholly in that residue).

    Returns
    -------
    list of dict
        One dict per contributing interaction, in registry order then row order.
    """
    lo, hi = min(res_i, res_j), max(res_i, res_j)
    out = []
    for term, form in registry.bonded_tables():
        attr = form.attr
        table = registry.table_of(system, form)
        if not len(table):
            continue
        res = system.resindex[table.atoms]
        touches = np.any(res == lo, axis=1) & np.any(res == hi, axis=1)
        energies = result.interactions[attr]
        for row in np.flatnonzero(touches):
            distinct = np.unique(res[row])
            if lo == hi and len(distinct) > 1:
                continue
            n_pairs = 1 if len(distinct) == 1 else len(distinct) * (len(distinct) - 1) // 2
            e = float(energies[row])
            out.append({"term": term, "table": attr, "row": int(row),
                        "atoms": tuple(int(a) for a in table.atoms[row]), "energy": e,
                        "share": e / n_pairs})
    return out
