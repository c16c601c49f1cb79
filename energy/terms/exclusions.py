"""The exclusion and 1-4 rule: which atom pairs leave the ordinary nonbonded sum.

The loaders list every excluded pair as an *exception pair* of the system (1-2, 1-3 and 1-4
pairs; docs/physics.md).  Each exception carries its own interaction: 1-2 and 1-3 pairs carry
zero charge product and zero well depth, 1-4 pairs their scaled charge product and 1-4 LJ
parameters.  So:

* the energy kernel skips exactly the exception pairs (:func:`exclusion_csr`) and evaluates
  them on their own (:func:`energy.terms.nonbonded.exception_energies`);
* analyses that must tell 1-2/1-3 pairs from 1-4 pairs (the clash finder) use
  :func:`excluded_and_14`, which reads the same marking, and adds the pairs of the bond graph for
  systems built without a complete exception list.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from energy._kernels.pair_key import ordered_pair_keys, split_keys

if TYPE_CHECKING:
    from energy.model.system import MolecularSystem


def exclusion_csr(exception_pairs: np.ndarray, n_atoms: int):
    """Exception partners per atom as CSR (``ptr``, ``idx``), listing j > i for atom i.

    Parameters
    ----------
    exception_pairs : (m, 2) integer
        Exception pairs (i, j), i < j (``MolecularSystem.exception_pairs``).
    n_atoms : int
        Number of atoms.

    Returns
    -------
    ptr : (n_atoms + 1,) intp
        The partners of atom i are ``idx[ptr[i]:ptr[i+1]]``.
    idx : (m,) intp
        Partners j, ascending within each atom.
    """
    if len(exception_pairs) == 0:
        return np.zeros(n_atoms + 1, np.intp), np.zeros(0, np.intp)
    order = np.lexsort((exception_pairs[:, 1], exception_pairs[:, 0]))
    sorted_pairs = exception_pairs[order]
    counts = np.bincount(sorted_pairs[:, 0], minlength=n_atoms)
    ptr = np.zeros(n_atoms + 1, np.intp)
    np.cumsum(counts, out=ptr[1:])
    return ptr, np.ascontiguousarray(sorted_pairs[:, 1], dtype=np.intp)


def _pair_keys(pairs: np.ndarray, n: int) -> np.ndarray:
    pairs = np.asarray(pairs, np.int64).reshape(-1, 2)
    return ordered_pair_keys(pairs[:, 0], pairs[:, 1], n)


def excluded_and_14(system: MolecularSystem) -> tuple[np.ndarray, np.ndarray]:
    """Sorted pair keys (i * n + j, i < j) of the pairs that never count (1-2 and 1-3) and of the 1-4 pairs.

    1-2 and 1-3 pairs come from the bond graph (bonds, and two bonds sharing an atom; the outer
    atoms of every angle term too) and from the exception pairs carrying zero charge product and
    zero well depth (the loaders' marking of 1-2/1-3 exclusions).  The other exception pairs are
    the 1-4 pairs; a pair that is both 1-3 and 1-4 (small rings) is 1-3.

    Parameters
    ----------
    system : MolecularSystem
        The system (bonds, angles and exception pairs are read).

    Returns
    -------
    excluded : (p,) int64
        Sorted unique keys ``i * n_atoms + j`` of the 1-2 and 1-3 pairs.
    ex14 : (q,) int64
        Sorted unique keys of the 1-4 pairs (none of them in ``excluded``).
    """
    n = system.n_atoms
    b = system.bonds.atoms
    keys = [_pair_keys(b, n)]
    if len(b):
        # two bonds sharing an atom: for each atom, every pair of its neighbours
        nbrs = [[] for _ in range(n)]
        for i, j in b:
            nbrs[i].append(j)
            nbrs[j].append(i)
        tri = [(p, q) for lst in nbrs for x, p in enumerate(lst) for q in lst[x + 1:]]
        keys.append(_pair_keys(np.array(tri, np.int64).reshape(-1, 2), n))
    if len(system.angles):
        keys.append(_pair_keys(system.angles.atoms[:, [0, 2]], n))
    ex = system.exception_pairs
    zero = (system.exception_qq == 0.0) & (system.exception_eps == 0.0)
    keys.append(_pair_keys(ex[zero], n))
    excluded = np.unique(np.concatenate(keys))
    lo, hi = split_keys(excluded, n)
    excluded = excluded[lo != hi]
    ex14 = np.setdiff1d(_pair_keys(ex[~zero], n), excluded)
    return excluded, ex14
