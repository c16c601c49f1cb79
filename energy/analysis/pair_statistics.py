"""Mean, spread and persistence of every residue-pair entry over the frames of a trajectory.

A pair with no entry in a frame counts as 0 kcal/mol there.  Sums are kept per pair with a shift
(the pair's values in the first frame that has it, c): over the ``p`` frames with an entry,
S = sum(x - c) and Q = sum((x - c)^2).  The ``n - p`` frames without an entry each add
(0 - c) to S and c^2 to Q, which is accounted for when the statistics are read, so a frame costs
work only for the pairs it holds, not for every pair ever seen.  Shifted sums keep the variance
free of cancellation for pairs that vary little around a large mean (Chan, Golub & LeVeque,
*Am. Stat.* 37, 242 (1983), "updating formulae ... with shifted data"); two accumulators merge
exactly by re-shifting one onto the other's c (Chan, Golub & LeVeque (1979), pairwise update).

Storage is by slot (a pair keeps its slot; new pairs are appended, capacity doubles) plus a
sorted index of keys (``i * n_residues + j``), rebuilt by one merge walk when a frame brings new
pairs.  The public arrays (``keys``, ``mean``, ``m2``, ``present``, ``below``, ``min_distance``)
are in key order and computed on first access after a change.

Deterministic: the result depends only on the order of ``add`` and ``merge`` calls, which the
trajectory code fixes (chunks of frames in order), so serial and parallel runs agree bit for bit.
"""
from __future__ import annotations

import numba
import numpy as np

from energy._kernels.pair_key import ordered_pair_keys, pair_keys
from energy.terms import registry
from energy.terms.registry import TERMS

#: Columns of the statistics: every term, then their sum.
COLUMNS = registry.COLUMNS


@numba.njit(cache=True)
def _locate(index_keys, index_slot, keys, n_slots):
    """Slot of every (sorted, unique) key; keys not yet indexed get slots n_slots, n_slots+1, ...

    Returns ``(slots, n_new, merged_keys, merged_slots)``; the merged index equals the old one
    when ``n_new`` is 0."""
    K, M = len(index_keys), len(keys)
    slots = np.empty(M, np.int64)
    n_new = 0
    a = 0
    for r in range(M):
        while a < K and index_keys[a] < keys[r]:
            a += 1
        if a < K and index_keys[a] == keys[r]:
            slots[r] = index_slot[a]
        else:
            slots[r] = n_slots + n_new
            n_new += 1
    if n_new == 0:
        return slots, 0, index_keys, index_slot
    merged_keys = np.empty(K + n_new, np.int64)
    merged_slots = np.empty(K + n_new, np.int64)
    a = 0
    b = 0
    for k in range(K + n_new):
        if b >= M or (a < K and index_keys[a] <= keys[b]):
            if b < M and a < K and index_keys[a] == keys[b]:
                b += 1
            merged_keys[k] = index_keys[a]
            merged_slots[k] = index_slot[a]
            a += 1
        else:
            merged_keys[k] = keys[b]
            merged_slots[k] = slots[b]
            b += 1
    return slots, n_new, merged_keys, merged_slots


@numba.njit(cache=True, inline="always")
def _observe(t, c, x, first, shift, s, q):
    """Value x of column c for slot t: sets the shift on the slot's first frame, else adds to
    the shifted sums."""
    if first:
        shift[t, c] = x
    else:
        d = x - shift[t, c]
        s[t, c] += d
        q[t, c] += d * d


@numba.njit(cache=True)
def _add_frame(slots, columns, min_heavy, threshold, shift, s, q, present, below, min_d):
    """Accumulate one frame: ``columns`` (C - 1 term columns, the total is their sum)."""
    n_terms = len(columns)
    for r in range(len(slots)):
        t = slots[r]
        first = present[t] == 0
        total = 0.0
        for c in range(n_terms):
            x = columns[c][r]
            total += x
            _observe(t, c, x, first, shift, s, q)
        _observe(t, n_terms, total, first, shift, s, q)
        present[t] += 1
        if total < threshold:
            below[t] += 1
        if min_heavy[r] < min_d[t]:
            min_d[t] = min_heavy[r]


@numba.njit(cache=True)
def _merge_rows(slots, o_rows, o_shift, o_s, o_q, o_present, o_below, o_min_d, shift, s, q,
                present, below, min_d):
    """Add another accumulator's rows: its slot ``o_rows[k]`` goes to our slot ``slots[k]``."""
    C = shift.shape[1]
    for k in range(len(slots)):
        t = slots[k]
        r = o_rows[k]
        if present[t] == 0:
            for c in range(C):
                shift[t, c] = o_shift[r, c]
                s[t, c] = o_s[r, c]
                q[t, c] = o_q[r, c]
        else:
            p = o_present[r]
            for c in range(C):
                d = o_shift[r, c] - shift[t, c]          # re-shift the other's sums onto ours
                s[t, c] += o_s[r, c] + p * d
                q[t, c] += o_q[r, c] + 2.0 * d * o_s[r, c] + p * d * d
        present[t] += o_present[r]
        below[t] += o_below[r]
        if o_min_d[r] < min_d[t]:
            min_d[t] = o_min_d[r]


class PairStatistics:
    """Running statistics of every residue-pair entry over frames (module docstring).

    Read: ``keys`` (K,) sorted int64 ``i * n_residues + j``; ``mean`` and ``m2`` (K, len(COLUMNS))
    with m2 = n * variance (population); ``present`` frames with an entry; ``below`` frames with
    an entry whose total is below the threshold; ``min_distance`` smallest minimum heavy-atom
    distance seen (inf if never examined).
    """

    def __init__(self, n_residues: int, threshold: float, capacity: int = 0):
        self.n_residues = int(n_residues)
        self.threshold = float(threshold)
        self.frames: list[int] = []
        self._index_keys = np.zeros(0, np.int64)
        self._index_slot = np.zeros(0, np.int64)
        self._n_slots = 0
        self._allocate(capacity)
        self._view = None

    def _allocate(self, capacity: int, keep: int = 0) -> None:
        C = len(COLUMNS)
        new = {"_shift": np.zeros((capacity, C)), "_s": np.zeros((capacity, C)),
               "_q": np.zeros((capacity, C)), "_present": np.zeros(capacity, np.int64),
               "_below": np.zeros(capacity, np.int64), "_min_d": np.full(capacity, np.inf)}
        for name, arr in new.items():
            if keep:
                arr[:keep] = getattr(self, name)[:keep]
            setattr(self, name, arr)

    def _slots_for(self, keys: np.ndarray) -> np.ndarray:
        slots, n_new, merged_keys, merged_slots = _locate(self._index_keys, self._index_slot,
                                                          keys, self._n_slots)
        if n_new:
            need = self._n_slots + n_new
            if need > len(self._present):  # room for a quarter more: later frames bring few new pairs
                self._allocate(max(need + need // 4, 2 * len(self._present)), keep=self._n_slots)
            self._index_keys, self._index_slot = merged_keys, merged_slots
            self._n_slots = need
        self._view = None
        return slots

    @property
    def n(self) -> int:
        return len(self.frames)

    def __len__(self) -> int:
        return len(self._index_keys)

    def copy(self) -> PairStatistics:
        """An independent copy of these statistics (same frames, pairs and sums).

        Returns
        -------
        PairStatistics
            A deep copy of the accumulator's arrays.
        """
        out = PairStatistics(self.n_residues, self.threshold, capacity=1)
        out.frames = list(self.frames)
        for name in ("_index_keys", "_index_slot", "_shift", "_s", "_q", "_present", "_below",
                     "_min_d"):
            setattr(out, name, getattr(self, name).copy())
        out._n_slots = self._n_slots
        return out

    def __getstate__(self):  # sent to and from worker processes: only the used slots
        state = dict(self.__dict__)
        for name in ("_shift", "_s", "_q", "_present", "_below", "_min_d"):
            state[name] = state[name][:self._n_slots].copy()
        state["_view"] = None
        return state

    def add(self, frame_index: int, rp) -> None:
        """One frame's :class:`~energy.decomposition.residue_pairs.ResiduePairEnergies` (rows sorted by (i, j)).

        Parameters
        ----------
        frame_index : int
            The frame's number in its trajectory (kept in ``frames``).
        rp : ResiduePairEnergies
            The frame's residue-pair table: ``values[term]`` (n_pairs,) kcal/mol and
            ``min_heavy_distance`` (n_pairs,) A, rows sorted by (i, j) and unique.
        """
        keys = pair_keys(rp.pair_i, rp.pair_j, self.n_residues)
        slots = self._slots_for(keys)
        columns = tuple(np.ascontiguousarray(rp.values[t], np.float64) for t in TERMS)
        _add_frame(slots, columns, np.ascontiguousarray(rp.min_heavy_distance, np.float64),
                   self.threshold, self._shift, self._s, self._q, self._present, self._below,
                   self._min_d)
        self.frames.append(int(frame_index))

    def merge(self, other: PairStatistics) -> None:
        """Append ``other``'s frames (which come after ours).

        Parameters
        ----------
        other : PairStatistics
            Statistics of the following frames, over the same residues and threshold; not changed.
        """
        if other.n == 0:
            return
        slots = self._slots_for(other._index_keys)
        _merge_rows(slots, other._index_slot, other._shift, other._s, other._q, other._present,
                    other._below, other._min_d, self._shift, self._s, self._q, self._present,
                    self._below, self._min_d)
        self.frames.extend(other.frames)

    # -- views in key order ----------------------------------------------------------------------
    def _views(self) -> dict:
        if self._view is None:
            rows = self._index_slot
            n = self.n
            present = self._present[rows]
            shift = self._shift[rows]
            if n:
                absent = (n - present).astype(np.float64)[:, None]
                s = self._s[rows] - absent * shift
                q = self._q[rows] + absent * shift * shift
                mean = shift + s / n
                m2 = q - s * s / n
            else:
                mean = m2 = np.zeros_like(shift)
            self._view = {"keys": self._index_keys, "mean": mean, "m2": m2, "present": present,
                          "below": self._below[rows], "min_distance": self._min_d[rows]}
        return self._view

    keys = property(lambda self: self._views()["keys"])
    mean = property(lambda self: self._views()["mean"])
    m2 = property(lambda self: self._views()["m2"])
    present = property(lambda self: self._views()["present"])
    below = property(lambda self: self._views()["below"])
    min_distance = property(lambda self: self._views()["min_distance"])

    @property
    def pair_i(self) -> np.ndarray:
        return (self.keys // self.n_residues).astype(np.intp)

    @property
    def pair_j(self) -> np.ndarray:
        return (self.keys % self.n_residues).astype(np.intp)

    def std(self) -> np.ndarray:
        """(K, len(COLUMNS)) population standard deviation over the frames (ddof = 0).

        A frame without an entry counts as 0 kcal/mol.

        Returns
        -------
        (K, len(COLUMNS)) float64
            Standard deviation of each pair (rows in key order) and column (terms, then ``total``),
            kcal/mol; zeros before any frame.
        """
        if self.n == 0:
            return np.zeros_like(self.m2)
        return np.sqrt(np.maximum(self.m2, 0.0) / self.n)

    def persistence(self) -> np.ndarray:
        """(K,) fraction of frames whose pair total is below the threshold.

        A frame without an entry counts as total 0 (so it counts as below when the threshold is
        positive).

        Returns
        -------
        (K,) float64
            Fraction in [0, 1] for each pair, in key order; zeros before any frame.
        """
        if self.n == 0:
            return np.zeros(len(self.keys))
        absent_below = (self.n - self.present) if 0.0 < self.threshold else 0
        return (self.below + absent_below) / self.n

    def column(self, quantity: str = "total", stat: str = "mean") -> np.ndarray:
        """One column of the mean or of the standard deviation.

        Parameters
        ----------
        quantity : str, optional
            A term name or ``total`` (default), an entry of :data:`COLUMNS`.
        stat : str, optional
            ``"mean"`` (default); any other value gives the standard deviation (:meth:`std`).

        Returns
        -------
        (K,) float64
            The statistic of each pair, in key order, kcal/mol.

        Raises
        ------
        ValueError
            If ``quantity`` is not in :data:`COLUMNS`.
        """
        c = COLUMNS.index(quantity)
        return (self.mean if stat == "mean" else self.std())[:, c]

    def lookup(self, i: int, j: int) -> int | None:
        """Row (in key order) of residue pair (i, j), or None if it never had an entry.

        Parameters
        ----------
        i, j : int
            Residue indices (0-based, any order).

        Returns
        -------
        int or None
            Index into ``keys``, ``mean``, ``m2``, ... .
        """
        key = ordered_pair_keys(i, j, self.n_residues)
        keys = self.keys
        k = int(np.searchsorted(keys, key))
        return k if k < len(keys) and keys[k] == key else None
