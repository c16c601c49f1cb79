"""The closest-pair test behind the coincident-atom check (numba): a sweep along one axis.

Points are sorted along the axis of largest spread; a pair closer than ``floor`` lies within
``floor`` along that axis, so each point is compared only with the points that follow it within
that slab.  In a molecular structure a slab 0.01 A thick holds a handful of atoms, so the sweep
does a few comparisons per atom (~5 ms for 100,000 atoms).  Many near-coincident points make the
slabs crowded; past ``budget`` comparisons the sweep gives up and the caller uses a k-d tree.
"""
from __future__ import annotations

import numba
import numpy as np

#: Comparisons per point the sweep may make before it leaves the work to the k-d tree.
SWEEP_BUDGET_PER_POINT = 64


@numba.njit(cache=True)
def _sweep(x, order, axis, floor, budget):
    """First (i, j) of ``order`` positions with |x[order[i]] - x[order[j]]| < floor; status 0
    none, 1 found, 2 over budget.  ``order`` sorts ``x`` (n, 3) float64 along ``axis``."""
    n = order.shape[0]
    floor2 = floor * floor
    work = 0
    for i in range(n):
        a = order[i]
        xi, yi, zi = x[a, 0], x[a, 1], x[a, 2]
        lead = x[a, axis]
        j = i + 1
        while j < n and x[order[j], axis] - lead < floor:
            b = order[j]
            dx, dy, dz = x[b, 0] - xi, x[b, 1] - yi, x[b, 2] - zi
            if dx * dx + dy * dy + dz * dz < floor2:
                return i, j, 1
            j += 1
            work += 1
        if work > budget:
            return i, j, 2
    return -1, -1, 0


def closest_pair_below(points: np.ndarray, floor: float):
    """Two points closer than ``floor``, if any.

    Parameters
    ----------
    points : (n, 3) float64 array, A
    floor : float, A

    Returns
    -------
    tuple of int, None or str
        ``(i, j)`` of two points closer than ``floor`` (indices into ``points``), ``None`` if
        there are none, or ``"crowded"`` when the sweep gave up (many near-coincident points).
    """
    x = np.ascontiguousarray(points, dtype=np.float64)
    if not x.flags.writeable:  # one compiled variant (numba compiles read-only arrays apart)
        x = x.copy()
    if len(x) < 2:
        return None
    axis = int(np.argmax(np.ptp(x, axis=0)))
    order = np.argsort(x[:, axis]).astype(np.intp)
    i, j, status = _sweep(x, order, axis, float(floor), SWEEP_BUDGET_PER_POINT * len(x))
    if status == 2:
        return "crowded"
    if status == 0:
        return None
    return int(order[i]), int(order[j])
