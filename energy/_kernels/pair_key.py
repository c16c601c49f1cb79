"""The one encoding of an index pair as a single sortable integer.

A pair ``(i, j)`` of residues (or atoms) out of ``n`` is the int64 key ``i * n + j``.  With
``i <= j`` (the engine's upper triangle) sorting keys sorts pairs by ``(i, j)``, which is the
order of every sparse residue-pair table.  Every module that needs such keys uses these
functions, so the encoding is written once.
"""
from __future__ import annotations

import numpy as np


def pair_keys(i, j, n: int) -> np.ndarray:
    """Keys of the pairs ``(i[k], j[k])``.

    Parameters
    ----------
    i, j : (m,) integer arrays (or scalars)
        The two indices of each pair, each in ``[0, n)``.
    n : int
        Number of indices (residues or atoms).

    Returns
    -------
    (m,) int64
        ``i * n + j`` (a numpy.int64 scalar for scalar ``i``, ``j``).
    """
    return np.asarray(i).astype(np.int64) * np.int64(n) + np.asarray(j).astype(np.int64)


def ordered_pair_keys(i, j, n: int) -> np.ndarray:
    """Keys of the unordered pairs ``{i[k], j[k]}``: the smaller index first.

    Parameters
    ----------
    i, j : (m,) integer arrays (or scalars), each in ``[0, n)``
        The two indices of each pair, in either order.
    n : int
        Number of indices (residues or atoms).

    Returns
    -------
    (m,) int64
        ``min(i, j) * n + max(i, j)`` (a numpy.int64 scalar for scalar ``i``, ``j``).
    """
    i, j = np.asarray(i), np.asarray(j)
    return pair_keys(np.minimum(i, j), np.maximum(i, j), n)


def split_keys(keys: np.ndarray, n: int, dtype=np.intp) -> tuple[np.ndarray, np.ndarray]:
    """Inverse of :func:`pair_keys`: ``(i, j)`` arrays of ``dtype`` from int64 ``keys``.

    Parameters
    ----------
    keys : (m,) integer
        Pair keys ``i * n + j``.
    n : int
        Number of indices the keys were made with.
    dtype : numpy dtype, optional
        dtype of the returned arrays (default ``numpy.intp``).

    Returns
    -------
    i, j : (m,) ``dtype``
        ``keys // n`` and ``keys % n``.
    """
    keys = np.asarray(keys, np.int64)
    return (keys // n).astype(dtype), (keys % n).astype(dtype)
