"""Compare two results of the same system: residue matching and the difference table.

Residues are matched by chain and residue number (with insertion code).  A residue whose name
differs between the two structures (a mutation) still matches by position and keeps both names
in its label (``B:TRP>PHE31``).  Residues present in only one structure are listed as unmatched.
The difference is always **second minus first**, as a :class:`ResiduePairEnergies` over the
matched residues (indices ``0..n_matched-1`` in the order of the first structure), so every
map/table routine that works on one result works on a difference too.  No Qt here.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from energy._kernels.pair_key import ordered_pair_keys, split_keys
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.terms.registry import TERMS


@dataclass(frozen=True)
class ResidueMatch:
    """``first`` and ``second`` (m,) intp: residue indices matched position by position.

    ``mutated`` (m,) bool: the two residue names differ.  ``unmatched_first`` /
    ``unmatched_second``: residue indices found in only one structure.
    """

    first: np.ndarray
    second: np.ndarray
    mutated: np.ndarray
    unmatched_first: np.ndarray
    unmatched_second: np.ndarray

    def __len__(self) -> int:
        return len(self.first)


def _keys(residues):
    return [(str(c).strip(), int(r), str(ic).strip())
            for c, r, ic in zip(residues.chain, residues.resid, residues.icode)]


def match_residues(first, second) -> ResidueMatch:
    """Match two :class:`energy.model.system.ResidueTable` by (chain, resid, icode).

    A key seen twice in one table (e.g. duplicated numbering) matches its first occurrence only.

    Parameters
    ----------
    first, second : ResidueTable
        Residues of the two structures.

    Returns
    -------
    ResidueMatch
        ``first``, ``second`` (m,) intp matched indices in the order of ``first``; ``mutated``
        (m,) bool; ``unmatched_first``, ``unmatched_second`` intp indices found in one table only.
    """
    index_b = {}
    for k, key in enumerate(_keys(second)):
        index_b.setdefault(key, k)
    used_b = np.zeros(len(second), bool)
    fa, fb = [], []
    seen_a = set()
    for k, key in enumerate(_keys(first)):
        if key in seen_a:
            continue
        seen_a.add(key)
        kb = index_b.get(key)
        if kb is not None and not used_b[kb]:
            used_b[kb] = True
            fa.append(k); fb.append(kb)
    fa = np.asarray(fa, np.intp); fb = np.asarray(fb, np.intp)
    mutated = np.array([str(first.resname[a]) != str(second.resname[b]) for a, b in zip(fa, fb)],
                       dtype=bool)
    un_a = np.setdiff1d(np.arange(len(first)), fa).astype(np.intp)
    un_b = np.flatnonzero(~used_b).astype(np.intp)
    return ResidueMatch(fa, fb, mutated, un_a, un_b)


def matched_label(first, second, a: int, b: int) -> str:
    """``A:LYS12``, or ``B:TRP>PHE31`` when the names differ.

    Parameters
    ----------
    first, second : ResidueTable
        Residues of the two structures.
    a, b : int
        Index of the matched residue in ``first`` and in ``second``.

    Returns
    -------
    str
        Chain, name (``first>second`` when they differ), residue number and insertion code of
        ``first``.
    """
    chain = str(first.chain[a]).strip()
    n1, n2 = str(first.resname[a]), str(second.resname[b])
    name = n1 if n1 == n2 else f"{n1}>{n2}"
    return f"{chain + ':' if chain else ''}{name}{first.resid[a]}{first.icode[a]}"


@dataclass(frozen=True)
class Comparison:
    """Second minus first, over the matched residues.

    ``difference``: :class:`ResiduePairEnergies` (m residues) with ``values[term]`` = second -
    first and ``min_heavy_distance`` from the second structure; ``first_values`` and
    ``second_values``: term (and ``total``) -> (n_pairs,) arrays aligned with its rows;
    ``first_distance`` likewise.  ``labels`` / ``chains`` (m,) for the matched residues.
    """

    match: ResidueMatch
    labels: list
    chains: list
    difference: ResiduePairEnergies
    first_values: dict
    second_values: dict
    first_distance: np.ndarray
    totals_first: dict
    totals_second: dict
    unmatched_first_labels: list
    unmatched_second_labels: list

    @property
    def mutated_labels(self) -> list:
        return [lab for lab, m in zip(self.labels, self.match.mutated) if m]

    def totals_difference(self) -> dict:
        """Second minus first of every term total and of ``total``.

        Returns
        -------
        dict of str to float
            Term name (and ``total``) -> difference of the whole-system totals, kcal/mol.
        """
        return {t: self.totals_second[t] - self.totals_first[t] for t in (*TERMS, "total")}


def _reindexed(rp: ResiduePairEnergies, to_matched: np.ndarray, m: int):
    """Rows of ``rp`` whose two residues are matched, as (keys, row indices)."""
    mi, mj = to_matched[rp.pair_i], to_matched[rp.pair_j]
    keep = (mi >= 0) & (mj >= 0)
    return ordered_pair_keys(mi[keep], mj[keep], m), np.flatnonzero(keep)


def compare_results(first_system, first_result, second_system, second_result) -> Comparison:
    """Match the residues of two results and build the second-minus-first table.

    Parameters
    ----------
    first_system, second_system : MolecularSystem
        The two structures (their residue tables are matched).
    first_result, second_result : EnergyResult
        Their evaluations.

    Returns
    -------
    Comparison
        ``difference`` a :class:`ResiduePairEnergies` over the m matched residues with
        ``values[term]`` = second - first (n_pairs,) float64 kcal/mol, ``min_heavy_distance`` from
        the second structure (A); per-pair values of each structure, whole-system totals
        (kcal/mol), labels of matched and unmatched residues.
    """
    ra, rb = first_system.residues, second_system.residues
    match = match_residues(ra, rb)
    m = len(match)
    to_a = np.full(len(ra), -1, np.intp); to_a[match.first] = np.arange(m)
    to_b = np.full(len(rb), -1, np.intp); to_b[match.second] = np.arange(m)
    pa, pb = first_result.residue_pairs, second_result.residue_pairs
    keys_a, rows_a = _reindexed(pa, to_a, m)
    keys_b, rows_b = _reindexed(pb, to_b, m)
    keys = np.union1d(keys_a, keys_b)
    pos_a = np.searchsorted(keys, keys_a)
    pos_b = np.searchsorted(keys, keys_b)
    first_values, second_values, diff = {}, {}, {}
    for q in (*TERMS, "total"):
        va = np.zeros(len(keys)); vb = np.zeros(len(keys))
        np.add.at(va, pos_a, pa.column(q)[rows_a])
        np.add.at(vb, pos_b, pb.column(q)[rows_b])
        first_values[q], second_values[q] = va, vb
        if q in TERMS:
            diff[q] = vb - va
    dist_a = np.full(len(keys), np.inf); dist_b = np.full(len(keys), np.inf)
    np.minimum.at(dist_a, pos_a, pa.min_heavy_distance[rows_a])
    np.minimum.at(dist_b, pos_b, pb.min_heavy_distance[rows_b])
    pair_i, pair_j = split_keys(keys, max(m, 1))
    difference = ResiduePairEnergies(m, pair_i, pair_j, diff, dist_b)
    labels = [matched_label(ra, rb, a, b) for a, b in zip(match.first, match.second)]
    chains = [str(ra.chain[a]).strip() for a in match.first]
    return Comparison(match, labels, chains, difference, first_values, second_values, dist_a,
                      dict(first_result.totals), dict(second_result.totals),
                      [ra.label(i) for i in match.unmatched_first],
                      [rb.label(i) for i in match.unmatched_second])










__all__ = ["ResidueMatch", "Comparison", "match_residues", "compare_results"]
