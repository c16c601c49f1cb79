"""Display orders of the map axes (a permutation of residue indices), numpy/scipy only.

* ``sequence``: residue order of the file.
* ``chain``: chains sorted by name, sequence order inside each.
* ``energy``: per-residue total of the shown quantity, most attractive first.
* ``profile``: hierarchical clustering (average linkage, Euclidean) of the residues'
  interaction profiles (their rows of the matrix, sign * log(1 + |E|) so that one clash does
  not dominate); above 400 residues the rows are first reduced to their 24 leading singular
  vectors.
"""
from __future__ import annotations

import numpy as np

ORDERS = {"sequence": "File sequence", "chain": "Chain, then sequence",
          "energy": "Per-residue energy (most attractive first)",
          "profile": "Similar interaction profiles (clustered)"}


def axis_order(mode: str, chains, pairs, quantity: str) -> np.ndarray:
    n = len(chains)
    if mode == "sequence" or n < 3:
        return np.arange(n)
    if mode == "chain":
        return np.lexsort((np.arange(n), np.asarray(chains, dtype=str)))
    if mode == "energy":
        return np.argsort(pairs.per_residue(quantity), kind="stable")
    if mode == "profile":
        return profile_order(pairs, quantity)
    raise ValueError(f"unknown axis order {mode!r}; known: {', '.join(ORDERS)}")


def profile_order(pairs, quantity: str) -> np.ndarray:
    from scipy.cluster.hierarchy import leaves_list, linkage
    m = pairs.matrix(quantity).tocsr()
    m.data = np.sign(m.data) * np.log1p(np.abs(m.data))
    n = m.shape[0]
    if n > 400:
        from scipy.sparse.linalg import svds
        k = min(24, n - 2)
        u, s, _ = svds(m.astype(np.float64), k=k, random_state=0)
        features = u * s
    else:
        features = m.toarray()
    z = linkage(features, method="average", metric="euclidean", optimal_ordering=n <= 400)
    return leaves_list(z).astype(np.intp)
