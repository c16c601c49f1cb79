"""Plain-Python trajectory state of the window (no Qt): the scan driver, per-frame pair series,
the mean-over-frames table and single-frame snapshots.

The engine's :class:`energy.analysis.trajectory.TrajectoryScan` runs the frames and keeps the mean/std
statistics; the viewer also keeps, frame by frame, every residue pair's entries (compact float32
columns) so that the time series of any residue pair the user selects is there without a second
pass.  Past :data:`SERIES_BUDGET_BYTES` the series are no longer kept (a note says so) and the
time series falls back to a scan of that one pair (:func:`pair_series_request`).
"""
from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass, replace

import numpy as np

from energy.analysis.trajectory import COLUMNS, TrajectoryRequest, TrajectoryScan, TrajectorySource
from energy.decomposition.residue_pairs import ResiduePairEnergies, pair_keys
from energy.terms.registry import TERMS

#: Memory the per-frame residue-pair series may take (bytes).
SERIES_BUDGET_BYTES = 400 * 1024 * 1024
#: Frames whose full results are kept for quick stepping.
FRAME_CACHE_SIZE = 12




class ViewerTrajectorySource(TrajectorySource):
    """A :class:`TrajectorySource` over a system the window already loaded (no second
    parameterisation) that hands every frame's residue-pair table to ``sink(frame_index, rp)``."""

    def __init__(self, request: TrajectoryRequest, loaded, sink=None):
        super().__init__(request, loaded)
        self.sink = sink

    def evaluate(self, frame):
        record, rp = super().evaluate(frame)
        if self.sink is not None:
            self.sink(frame.index, rp)
        return record, rp


class PairSeriesStore:
    """Every residue pair's entries per frame: sorted int64 keys ``i * n + j`` and a float32
    (K, len(COLUMNS) + 1) block (the nine energy columns, then the minimum heavy-atom distance)."""

    def __init__(self, n_residues: int, budget_bytes: int = SERIES_BUDGET_BYTES):
        self.n_residues = int(n_residues)
        self.budget = int(budget_bytes)
        self.frames: list[int] = []
        self._keys: list[np.ndarray] = []
        self._blocks: list[np.ndarray] = []
        self.nbytes = 0
        self.overflow = False

    def add(self, frame_index: int, rp) -> None:
        if self.overflow:
            return
        keys = pair_keys(rp.pair_i, rp.pair_j, self.n_residues)
        block = np.empty((len(keys), len(COLUMNS) + 1), np.float32)
        for c, t in enumerate(TERMS):
            block[:, c] = rp.values[t]
        block[:, len(TERMS)] = rp.total
        block[:, -1] = rp.min_heavy_distance
        size = keys.nbytes + block.nbytes
        if self.nbytes + size > self.budget:
            self.overflow = True
            return
        self.frames.append(int(frame_index))
        self._keys.append(keys)
        self._blocks.append(block)
        self.nbytes += size

    def __len__(self) -> int:
        return len(self.frames)

    def series(self, i: int, j: int) -> dict:
        """Per-frame values of residue pair (i, j) over the stored frames: ``frame`` (int), each
        of :data:`COLUMNS` (kcal/mol, 0 where the pair has no entry) and ``min_heavy_distance``
        (A, NaN where it has none)."""
        i, j = min(i, j), max(i, j)
        key = pair_keys(i, j, self.n_residues)
        n = len(self.frames)
        out = {c: np.zeros(n) for c in COLUMNS}
        dist = np.full(n, np.nan)
        for f, (keys, block) in enumerate(zip(self._keys, self._blocks)):
            k = int(np.searchsorted(keys, key))
            if k < len(keys) and keys[k] == key:
                for c, name in enumerate(COLUMNS):
                    out[name][f] = block[k, c]
                d = float(block[k, -1])
                dist[f] = d if np.isfinite(d) else np.nan
        out["frame"] = np.array(self.frames, np.intp)
        out["min_heavy_distance"] = dist
        return out


def series_from_result(result, k: int) -> dict:
    """The k-th requested pair's series of a :class:`TrajectoryResult` in the same layout."""
    s = result.pair_series(k)
    s["frame"] = np.array(result.frames, np.intp)
    return s


def mean_pairs(stats) -> ResiduePairEnergies:
    """The mean-over-frames residue-pair table (a :class:`ResiduePairEnergies`) of the scan's
    statistics; ``min_heavy_distance`` is the smallest distance seen over the frames."""
    values = {t: stats.mean[:, c].copy() for c, t in enumerate(TERMS)}
    return ResiduePairEnergies(stats.n_residues, stats.pair_i, stats.pair_j, values,
                               stats.min_distance.copy())


def std_pairs(stats) -> ResiduePairEnergies:
    std = stats.std()
    values = {t: std[:, c].copy() for c, t in enumerate(TERMS)}
    return ResiduePairEnergies(stats.n_residues, stats.pair_i, stats.pair_j, values,
                               stats.min_distance.copy())


def make_request(spec, settings) -> TrajectoryRequest:
    return TrajectoryRequest(structure=spec.structure, coords=spec.coords, params=tuple(spec.params),
                             add_hydrogens=spec.add_hydrogens, settings=settings,
                             preparation=None if spec.params else spec.preparation())


def scan_steps(loaded, request: TrajectoryRequest, store: PairSeriesStore | None, frames=None):
    """The engine's scan generator (yields ``(done, total)``, returns the TrajectoryResult) over
    an already loaded system, feeding ``store`` frame by frame."""
    source = ViewerTrajectorySource(request, loaded, None if store is None else store.add)
    scan = TrajectoryScan(request, frames, source=source)
    return scan, scan.steps()


def pair_series_request(request: TrajectoryRequest, pair) -> TrajectoryRequest:
    return replace(request, pairs=(tuple(pair),))


def frame_snapshot(base_snapshot, frame_index: int, settings):
    """The full :class:`app.state.document.Snapshot` of one trajectory frame (read and computed)."""
    from app.state.document import Snapshot
    from energy.decomposition.pipeline import compute
    from energy.io.charmm_system import read_frame
    from energy.io.whole import whole_frame
    spec = base_snapshot.spec
    loaded = base_snapshot.loaded
    system = loaded.system
    fr = whole_frame(system, read_frame(spec.coords, system.n_atoms, system.names, int(frame_index)))
    new_loaded = replace(loaded, frame=fr)
    return Snapshot(replace(spec, frame=int(frame_index)), new_loaded, compute(system, fr, settings))


class FrameCache:
    """The most recently used frame snapshots (least recently used dropped first)."""

    def __init__(self, size: int = FRAME_CACHE_SIZE):
        self.size = int(size)
        self._items: OrderedDict[int, object] = OrderedDict()

    def get(self, frame: int):
        snap = self._items.get(int(frame))
        if snap is not None:
            self._items.move_to_end(int(frame))
        return snap

    def put(self, frame: int, snap) -> None:
        self._items[int(frame)] = snap
        self._items.move_to_end(int(frame))
        while len(self._items) > self.size:
            self._items.popitem(last=False)

    def clear(self) -> None:
        self._items.clear()

    def __contains__(self, frame) -> bool:
        return int(frame) in self._items

    def __len__(self) -> int:
        return len(self._items)


@dataclass
class TrajectoryView:
    """What the window knows of the open trajectory."""

    request: TrajectoryRequest
    n_frames: int
    result: object = None            # TrajectoryResult once the scan has run (or was stopped)
    store: PairSeriesStore | None = None
    mean: ResiduePairEnergies | None = None

    @property
    def frames(self) -> list[int]:
        return [] if self.result is None else self.result.frames
