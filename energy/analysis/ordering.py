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


def axis_order_and_tree(mode: str, chains, pairs, quantity: str):
    """(order, linkage): the axis order, and for ``profile`` the scipy linkage it comes from.

    The linkage is None for the other orders (and for fewer than three residues).

    Parameters
    ----------
    mode : str
        A key of :data:`ORDERS`: ``sequence``, ``chain``, ``energy`` or ``profile``.
    chains : (n,) str
        Chain of each residue.
    pairs : ResiduePairEnergies
        The residue-pair table shown (or a difference table of the same shape).
    quantity : str
        The quantity shown (a term name, ``total``, ``bonded`` or ``nonbonded``).

    Returns
    -------
    order : (n,) integer
        Residue indices in display order.
    linkage : (n - 1, 4) float64 or None
        The scipy linkage matrix of the ``profile`` order.
    """
    if mode == "profile" and len(chains) >= 3:
        from scipy.cluster.hierarchy import leaves_list
        z = profile_linkage(pairs, quantity)
        return leaves_list(z).astype(np.intp), z
    return axis_order(mode, chains, pairs, quantity), None


def axis_order(mode: str, chains, pairs, quantity: str) -> np.ndarray:
    """Display order of the residues for ``mode`` (the module docstring lists the orders).

    Fewer than three residues always keep the file sequence.

    Parameters
    ----------
    mode : str
        A key of :data:`ORDERS`: ``sequence``, ``chain``, ``energy`` or ``profile``.
    chains : (n,) str
        Chain of each residue.
    pairs : ResiduePairEnergies
        The residue-pair table shown (or a difference table of the same shape).
    quantity : str
        The quantity shown (a term name, ``total``, ``bonded`` or ``nonbonded``).

    Returns
    -------
    (n,) integer
        A permutation of ``0..n-1``.

    Raises
    ------
    ValueError
        If ``mode`` is unknown.
    """
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
    """The ``profile`` order: the leaves of the clustering of :func:`profile_linkage`.

    Parameters
    ----------
    pairs : ResiduePairEnergies
        The residue-pair table shown.
    quantity : str
        The quantity shown.

    Returns
    -------
    (n,) intp
        A permutation of the residue indices.
    """
    from scipy.cluster.hierarchy import leaves_list
    return leaves_list(profile_linkage(pairs, quantity)).astype(np.intp)


def profile_linkage(pairs, quantity: str) -> np.ndarray:
    """The (n - 1, 4) scipy linkage matrix behind the ``profile`` order.

    Average linkage, Euclidean distance, of the rows of sign(E) log(1 + |E|) (E in kcal/mol);
    above 400 residues on their 24 leading singular vectors.

    Parameters
    ----------
    pairs : ResiduePairEnergies
        The residue-pair table shown.
    quantity : str
        The quantity shown.

    Returns
    -------
    (n - 1, 4) float64
        scipy linkage matrix (children, distance, cluster size).
    """
    from scipy.cluster.hierarchy import linkage
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
    return linkage(features, method="average", metric="euclidean", optimal_ordering=n <= 400)


def dendrogram_segments(z: np.ndarray, order: np.ndarray):
    """Line segments of the tree of linkage ``z`` drawn over display positions ``order``.

    For every merge, the two vertical legs (from each child's height up to the merge height) and
    the bar joining them; x is the display position (leaf k of ``order`` at k, a cluster at the
    midpoint of its two children, as scipy.cluster.hierarchy.dendrogram draws it) and h the
    linkage distance.

    Parameters
    ----------
    z : (n - 1, 4) float64
        scipy linkage matrix.
    order : (n,) integer
        Leaves in display order.

    Returns
    -------
    x0, h0, x1, h1 : (3 (n - 1),) float64
        Start and end of each segment: display position and linkage distance.
    """
    n = len(order)
    x = np.empty(2 * n - 1)
    height = np.zeros(2 * n - 1)
    x[np.asarray(order)] = np.arange(n, dtype=float)
    segments = np.empty((n - 1, 3, 4))
    for k, (a, b, dist, _) in enumerate(z):
        a, b = int(a), int(b)
        x[n + k] = 0.5 * (x[a] + x[b])
        height[n + k] = dist
        segments[k] = [[x[a], height[a], x[a], dist], [x[a], dist, x[b], dist],
                       [x[b], dist, x[b], height[b]]]
    flat = segments.reshape(-1, 4)
    return flat[:, 0], flat[:, 1], flat[:, 2], flat[:, 3]
