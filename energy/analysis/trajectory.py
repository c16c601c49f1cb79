"""Trajectories: the energy decomposition frame by frame, and statistics over the frames.

A :class:`TrajectoryRequest` names the inputs (the same topology and parameters as
:func:`energy.io.loaders.load_system`, plus a coordinate trajectory MDAnalysis reads) and what to
record.  For every frame the engine records a small :class:`FrameRecord`: the per-term totals,
the energies of the chosen residue pairs (every term, their total, and the minimum heavy-atom
distance of the pair), and the interaction of selection A with selection B.  Over the frames it
keeps :class:`~energy.analysis.pair_statistics.PairStatistics`: mean and (population) standard deviation
of every residue-pair entry and term (shifted sums), sparse over the union of the pair keys seen
(a pair with no entry in a frame counts as 0 kcal/mol there), plus each pair's persistence, the
fraction of frames whose pair total is below a threshold.

Deterministic reduction (identical results serial, on worker processes or on a Dask cluster):
the frames are cut into fixed chunks of ``chunk_frames`` consecutive frames of the requested
range (independent of the number of workers).  Each chunk accumulates its frames in frame order;
chunk statistics are merged into the total in chunk order (Chan et al.'s pairwise update).
Every execution route runs exactly these floating-point operations in this
order, so results agree bit for bit.

:class:`TrajectoryScan` drives a serial run: ``steps()`` is a generator yielding ``(done, total)``
frames (like :func:`energy.decomposition.pipeline.compute_steps`) and returning the
:class:`TrajectoryResult`; stop iterating at any time and ``result()`` gives the frames done so
far.  No Qt here; the viewer drives the same generator.
"""
from __future__ import annotations

import os
import time
import warnings
from dataclasses import dataclass, field

import numpy as np

from energy._kernels.geometry import minimum_image
from energy.analysis.pair_statistics import COLUMNS, PairStatistics
from energy.decomposition.atom_pairs import interaction_energy
from energy.decomposition.pipeline import compute, run_to_end
from energy.errors import EnergyError, StructureFileError
from energy.io.coordinates import frame_from_timestep, open_coordinates, read_timestep, third_party_message
from energy.io.loaders import load_system
from energy.io.selection import select_atoms, universe_for
from energy.io.whole import whole_frame
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.model.virtual_sites import placed_frame

# COLUMNS: of the pair statistics and of the chosen-pair records, every term, then their sum.
from energy.terms.registry import TERMS

#: Per-frame columns of the selection A vs B interaction.
SELECTION_COLUMNS = ("coulomb", "lj", "total", "n_atoms_a", "n_atoms_b")
#: Frames per reduction chunk (also the unit of work sent to a worker).
CHUNK_FRAMES = 4


class TrajectoryError(EnergyError, ValueError):
    """A trajectory request that cannot be run (bad frame range, pair, unreadable trajectory).

    Also carries errors raised on worker processes, as a plain message (picklable).
    """


# ------------------------------------------------------------------------------------------
# request, frame ranges
# ------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class TrajectoryRequest:
    """Inputs and what to record; hashable and picklable (sent to workers as it is).

    ``coords``: the trajectory (DCD, XTC, multi-model PDB, ...); ``None`` reads the frames of
    ``structure`` itself.  ``pairs``: residue index pairs (0-based) whose per-frame energies are
    recorded.  ``select_a``/``select_b``: MDAnalysis selections, evaluated again on every frame.
    ``persistence_threshold``: kcal/mol; a pair persists in a frame where its total is below it.
    """

    structure: str
    coords: str | None = None
    params: tuple = ()
    add_hydrogens: bool = False
    settings: EnergySettings = field(default_factory=EnergySettings)
    pairs: tuple = ()
    select_a: str | None = None
    select_b: str | None = None
    persistence_threshold: float = -1.0
    chunk_frames: int = CHUNK_FRAMES
    #: How a PDB/mmCIF is prepared (energy.io.preparation.PreparationOptions); None: only
    #: ``add_hydrogens``.
    preparation: object = None

    def __post_init__(self):
        absolute = lambda p: None if p is None else os.path.abspath(os.fspath(p))  # noqa: E731
        object.__setattr__(self, "structure", absolute(self.structure))
        object.__setattr__(self, "coords", absolute(self.coords))
        object.__setattr__(self, "params", tuple(absolute(p) for p in self.params))
        pairs = tuple((min(int(i), int(j)), max(int(i), int(j))) for i, j in self.pairs)
        object.__setattr__(self, "pairs", pairs)
        if (self.select_a is None) != (self.select_b is None):
            raise TrajectoryError("give both selections A and B, or neither")
        if not int(self.chunk_frames) >= 1:
            raise TrajectoryError(f"chunk_frames must be >= 1, got {self.chunk_frames}")
        if not np.isfinite(self.persistence_threshold):
            raise TrajectoryError("the persistence threshold must be a finite number")

    @property
    def trajectory_path(self) -> str:
        return self.coords or self.structure


def parse_pair(text: str) -> tuple[int, int]:
    """``"12-87"`` -> ``(12, 87)`` (0-based residue indices).

    Parameters
    ----------
    text : str
        ``I-J``, two non-negative integers joined by a hyphen (either order).

    Returns
    -------
    tuple of (int, int)
        The two indices, smaller first.

    Raises
    ------
    TrajectoryError
        If ``text`` is not of that form or an index is negative.
    """
    parts = str(text).strip().split("-")
    try:
        if len(parts) != 2:
            raise ValueError
        i, j = int(parts[0]), int(parts[1])
    except ValueError:
        raise TrajectoryError(f"residue pair {text!r}: expected I-J with 0-based residue "
                              "indices, e.g. 12-87") from None
    if i < 0 or j < 0:
        raise TrajectoryError(f"residue pair {text!r}: indices must be >= 0")
    return (min(i, j), max(i, j))


def parse_frames(text: str | None, n_frames: int) -> list[int]:
    """Frame indices of ``START:STOP:STEP`` in a trajectory of ``n_frames`` frames.

    Python slice rules, parts may be empty; a plain ``N`` is frame N alone (negative N counts
    from the end); empty text or None is every frame.

    Parameters
    ----------
    text : str or None
        The frame range.
    n_frames : int
        Frames in the trajectory.

    Returns
    -------
    list of int
        The selected frame indices (0-based), in the slice's order.

    Raises
    ------
    TrajectoryError
        If ``text`` is malformed, its step is 0, or it selects no frame.
    """
    text = "" if text is None else str(text).strip()
    parts = text.split(":") if text else ["", ""]
    try:
        if len(parts) == 1:
            k = int(parts[0])
            k = k + n_frames if k < 0 else k
            values = [k] if 0 <= k < n_frames else []
        elif len(parts) in (2, 3):
            start, stop, step = (int(p) if p.strip() else None for p in (parts + [""])[:3])
            if step == 0:
                raise TrajectoryError(f"--frames {text!r}: the step must not be 0")
            values = list(range(n_frames))[slice(start, stop, step)]
        else:
            raise ValueError
    except ValueError:
        raise TrajectoryError(f"--frames {text!r}: expected START:STOP:STEP (integers, parts may be "
                              "empty, e.g. 0:1000:10 or ::5)") from None
    if not values:
        raise TrajectoryError(f"--frames {text!r} selects no frame of the trajectory "
                              f"({n_frames} frame(s), 0..{n_frames - 1})")
    return values


# ------------------------------------------------------------------------------------------
# reading frames
# ------------------------------------------------------------------------------------------

def open_trajectory(path: str, n_atoms: int, names):
    """An MDAnalysis Universe over the trajectory, checked against the topology.

    Parameters
    ----------
    path : str
        Trajectory (DCD, XTC, multi-model PDB, ...).
    n_atoms : int
        Atom count of the topology.
    names : sequence of str
        Atom names of the topology (compared where the file has names).

    Returns
    -------
    MDAnalysis.Universe
        See :func:`energy.io.coordinates.open_coordinates` (and the errors it raises).
    """
    return open_coordinates(path, n_atoms, names, "topology", "the trajectory")


class _ModelFrames:
    """The models of a multi-model structure behind the part of MDAnalysis' Universe interface
    that :class:`TrajectorySource` reads (``len(u.trajectory)``, ``u.trajectory[k].positions`` and
    ``.dimensions``), in double precision."""

    def __init__(self, models, box):
        from types import SimpleNamespace
        self.trajectory = [SimpleNamespace(positions=m, dimensions=box) for m in models]


class TrajectorySource:
    """The parameterised system and an open trajectory (one per process; not thread-safe)."""

    def __init__(self, request: TrajectoryRequest, loaded=None):
        """``loaded``: the system already loaded for ``request`` (a :class:`LoadedSystem`), or
        None to load it here."""

        self.request = request
        if loaded is None:
            loaded = load_system(request.structure, request.coords, request.params, frame=0,
                                 add_hydrogens=request.add_hydrogens, preparation=request.preparation)
        self.loaded = loaded
        self.system = loaded.system
        self.path = request.trajectory_path
        if request.coords is None and loaded.preparation is not None:
            # A multi-model PDB/mmCIF: its models, as parsed for the topology (same atoms, same
            # names, same order), are the frames.
            from energy.io.loaders import model_frame
            model_frame(self.path, loaded.models, loaded.frame.box, 0)  # refuses models that cannot be mapped
            self.universe = _ModelFrames(loaded.models, loaded.frame.box)
        else:
            self.universe = open_trajectory(self.path, self.system.n_atoms, self.system.names)
        try:
            self.n_frames = len(self.universe.trajectory)
        except Exception as exc:  # a damaged trajectory: the reader's own exception kinds
            raise StructureFileError(self.path, f"cannot count the frames: {third_party_message(exc)}") from None
        n_res = self.system.n_residues
        for i, j in request.pairs:
            if j >= n_res:
                raise TrajectoryError(f"residue pair {i}-{j}: the system has {n_res} residues "
                                      f"(indices 0..{n_res - 1})")
        heavy = self.system.is_heavy
        self._heavy_of = {r: np.flatnonzero((self.system.resindex == r) & heavy)
                          for pair in request.pairs for r in pair}
        self._sel_universe = None

    def frames(self, indices):
        """Iterate :class:`Frame` objects for ``indices`` (read in the given order).

        Parameters
        ----------
        indices : iterable of int
            Frame indices (0-based).

        Yields
        ------
        Frame
            Positions (A) and cell of each frame, ``index`` set to its frame number.

        Raises
        ------
        TrajectoryError
            If an index lies outside the trajectory.
        """
        for k in indices:
            if not 0 <= k < self.n_frames:
                raise TrajectoryError(f"{self.path}: frame {k} requested but the file has "
                                      f"{self.n_frames} frame(s)")
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                ts = read_timestep(self.universe, int(k), self.path)
            # whole molecules, then the virtual sites from their parents
            yield placed_frame(self.system, whole_frame(self.system, frame_from_timestep(ts, self.path, int(k))))

    # -- one frame ------------------------------------------------------------------------
    def _pair_distances(self, frame: Frame, periodic: bool) -> np.ndarray:
        out = np.full(len(self.request.pairs), np.nan)
        x = frame.positions
        for k, (i, j) in enumerate(self.request.pairs):
            a, b = self._heavy_of[i], self._heavy_of[j]
            if i == j or not len(a) or not len(b):
                continue
            d = (x[b][None, :, :] - x[a][:, None, :]).reshape(-1, 3)
            d = minimum_image(d, frame.box if periodic else None)
            out[k] = float(np.sqrt(np.min(np.einsum("ij,ij->i", d, d))))
        return out

    def _selection(self, frame: Frame, rp) -> dict:
        """Nonbonded interaction of selection A with selection B in this frame.

        When both selections are made of whole residues and share none, the interaction is the
        sum of the Coulomb and LJ entries of the residue pairs (a in A, b in B) of the
        decomposition: the same atom pairs with the same energies (every nonbonded atom pair,
        1-4 exceptions included, belongs to the residue pair of its atoms), without a second
        atom-pair pass.  Otherwise :func:`energy.decomposition.atom_pairs.interaction_energy` sums the atom pairs.
        """
        if self._sel_universe is None:
            self._sel_universe = universe_for(self.system, frame)
        u = self._sel_universe
        u.atoms.positions = frame.positions
        if frame.box is not None:
            u.dimensions = frame.box
        a = select_atoms(self.system, frame, self.request.select_a, u)
        b = select_atoms(self.system, frame, self.request.select_b, u)
        resindex = self.system.resindex
        n_res = self.system.n_residues
        per_res = np.bincount(resindex, minlength=n_res)
        res_a, res_b = np.unique(resindex[a]), np.unique(resindex[b])
        whole = (per_res[res_a].sum() == len(a) and per_res[res_b].sum() == len(b)
                 and not np.intersect1d(res_a, res_b).size)
        if whole:
            in_a = np.zeros(n_res, bool); in_a[res_a] = True
            in_b = np.zeros(n_res, bool); in_b[res_b] = True
            pi, pj = rp.pair_i, rp.pair_j
            hit = (in_a[pi] & in_b[pj]) | (in_b[pi] & in_a[pj])
            coul, lj = float(rp.values["coulomb"][hit].sum()), float(rp.values["lj"][hit].sum())
        else:
            e = interaction_energy(self.system, frame, self.request.settings, a, b)
            coul, lj = e["coulomb"], e["lj"]
        return {"coulomb": coul, "lj": lj, "total": coul + lj,
                "n_atoms_a": int(len(a)), "n_atoms_b": int(len(b))}

    def evaluate(self, frame: Frame):
        """``(FrameRecord, ResiduePairEnergies)`` of one frame.

        Parameters
        ----------
        frame : Frame
            The frame (from :meth:`frames`).

        Returns
        -------
        record : FrameRecord
            Per-term totals, the requested pairs' energies (kcal/mol) and distances (A), the
            selection interaction, the evaluation's wall time (s).
        residue_pairs : ResiduePairEnergies
            The frame's full residue-pair table.
        """
        t0 = time.perf_counter()
        settings = self.request.settings
        result = compute(self.system, frame, settings)
        rp = result.residue_pairs
        values = np.zeros((len(self.request.pairs), len(COLUMNS)))
        for k, (i, j) in enumerate(self.request.pairs):
            row = rp.lookup(i, j)
            if row is not None:
                values[k, :-1] = [rp.values[t][row] for t in TERMS]
                values[k, -1] = sum(rp.values[t][row] for t in TERMS)
        selection = self._selection(frame, rp) if self.request.select_a is not None else None
        record = FrameRecord(index=frame.index, totals={k: float(result.totals[k]) for k in COLUMNS},
                             pair_values=values,
                             pair_distance=self._pair_distances(frame, result.periodic),
                             selection=selection, seconds=time.perf_counter() - t0,
                             cell_note=result.cell_note)
        return record, rp


# ------------------------------------------------------------------------------------------
# per-frame records and statistics
# ------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class FrameRecord:
    """The small per-frame result.

    ``totals``: term -> kcal/mol (:data:`COLUMNS`).  ``pair_values``: (n_chosen, len(COLUMNS))
    energies of the requested pairs (zeros when a pair has no entry in the frame).
    ``pair_distance``: (n_chosen,) minimum heavy-atom distance, A (NaN for a residue with itself).
    ``selection``: A-vs-B interaction (:data:`SELECTION_COLUMNS`) or None.
    ``seconds``: wall time of the evaluation (not part of any comparison).
    """

    index: int
    totals: dict
    pair_values: np.ndarray
    pair_distance: np.ndarray
    selection: dict | None = None
    seconds: float = 0.0
    #: Why the frame's unit cell was not used (energy.model.cell), or "".
    cell_note: str = ""


@dataclass
class ChunkResult:
    """What one chunk of frames sends back: its records and its statistics."""

    chunk: int
    records: list
    stats: PairStatistics


def iter_chunk(source: TrajectorySource, indices, stats: PairStatistics):
    """Evaluate ``indices`` in order, updating ``stats``; yields each :class:`FrameRecord`.

    Parameters
    ----------
    source : TrajectorySource
        The system and the open trajectory.
    indices : list of int
        Frame indices, in order.
    stats : PairStatistics
        Accumulator; each frame's residue-pair table is added to it.

    Yields
    ------
    FrameRecord
        The record of each frame, in order.
    """
    for frame in source.frames(indices):
        record, rp = source.evaluate(frame)
        stats.add(frame.index, rp)
        yield record


def run_chunk(source: TrajectorySource, chunk: int, indices) -> ChunkResult:
    """Evaluate one chunk of frames into a fresh :class:`~energy.analysis.pair_statistics.PairStatistics`.

    Parameters
    ----------
    source : TrajectorySource
        The system and the open trajectory.
    chunk : int
        Chunk number (its place in the merge order).
    indices : list of int
        Frame indices of the chunk, in order.

    Returns
    -------
    ChunkResult
        The chunk's records and statistics.
    """
    stats = PairStatistics(source.system.n_residues, source.request.persistence_threshold)
    records = list(iter_chunk(source, indices, stats))
    return ChunkResult(chunk, records, stats)


def split_chunks(frames, chunk_frames: int) -> list[list[int]]:
    """Cut ``frames`` into consecutive chunks of ``chunk_frames`` (the last may be shorter).

    Parameters
    ----------
    frames : iterable of int
        Frame indices, in order.
    chunk_frames : int
        Frames per chunk (>= 1).

    Returns
    -------
    list of list of int
        The chunks, in order.
    """
    frames = list(frames)
    return [frames[k:k + chunk_frames] for k in range(0, len(frames), chunk_frames)]


# ------------------------------------------------------------------------------------------
# results and the serial driver
# ------------------------------------------------------------------------------------------

@dataclass
class TrajectoryResult:
    """Frames done (in order), their records, and the statistics over them.

    ``complete`` is False when the run stopped early (interrupt, cancel, error).
    """

    request: TrajectoryRequest
    system: object
    requested: list
    records: list
    stats: PairStatistics
    complete: bool

    @property
    def frames(self) -> list[int]:
        return [r.index for r in self.records]

    def per_frame_totals(self) -> dict:
        """Per-frame whole-system totals.

        Returns
        -------
        dict of str to (n_frames,) float64
            Each term and ``total`` (:data:`COLUMNS`) -> its value in each frame done, kcal/mol.
        """
        return {t: np.array([r.totals[t] for r in self.records]) for t in COLUMNS}

    def pair_series(self, k: int) -> dict:
        """Per-frame values of the k-th requested pair: column -> array, plus ``min_heavy_distance``.

        Parameters
        ----------
        k : int
            Position of the pair in ``request.pairs``.

        Returns
        -------
        dict of str to (n_frames,) float64
            Each term and ``total`` (kcal/mol; 0 in a frame without an entry), and
            ``min_heavy_distance`` (A; NaN for a residue with itself or one without heavy atoms).
        """
        out = {c: np.array([r.pair_values[k, n] for r in self.records]) for n, c in enumerate(COLUMNS)}
        out["min_heavy_distance"] = np.array([r.pair_distance[k] for r in self.records])
        return out

    def cell_notes(self) -> list[str]:
        """The distinct notes on ignored unit cells over the frames, in order of first appearance.

        Returns
        -------
        list of str
            One note per distinct ignored cell.
        """
        return list(dict.fromkeys(r.cell_note for r in self.records if r.cell_note))

    def selection_series(self) -> dict | None:
        """Per-frame interaction of selection A with selection B, or None without selections.

        Returns
        -------
        dict of str to (n_frames,) ndarray, or None
            :data:`SELECTION_COLUMNS`: ``coulomb``, ``lj``, ``total`` (float64, kcal/mol),
            ``n_atoms_a``, ``n_atoms_b`` (integer).
        """
        if self.request.select_a is None:
            return None
        keys = SELECTION_COLUMNS
        return {k: np.array([r.selection[k] for r in self.records]) for k in keys}


class TrajectoryState:
    """Collects chunk results and merges them in chunk order (frame order)."""

    def __init__(self, request: TrajectoryRequest, system, frames):
        self.request = request
        self.system = system
        self.requested = list(frames)
        self.chunks = split_chunks(self.requested, int(request.chunk_frames))
        self.records: list[FrameRecord] = []
        self.stats = PairStatistics(system.n_residues, request.persistence_threshold)
        self.next_chunk = 0
        self._buffer: dict[int, ChunkResult] = {}
        self.partial: ChunkResult | None = None  # the serial run's chunk in progress

    @property
    def n_done(self) -> int:
        return len(self.records) + (len(self.partial.records) if self.partial else 0) + \
            sum(len(c.records) for c in self._buffer.values())

    def accept(self, chunk: ChunkResult) -> list[FrameRecord]:
        """Take a finished chunk (any order); returns the records merged now, in frame order.

        Parameters
        ----------
        chunk : ChunkResult
            A finished chunk; kept until every earlier chunk is merged.

        Returns
        -------
        list of FrameRecord
            The records of the chunks merged by this call (none if an earlier chunk is missing).
        """
        self._buffer[chunk.chunk] = chunk
        merged = []
        while self.next_chunk in self._buffer:
            c = self._buffer.pop(self.next_chunk)
            self.stats.merge(c.stats)
            self.records.extend(c.records)
            merged.extend(c.records)
            self.next_chunk += 1
        return merged

    def done_records(self) -> list[FrameRecord]:
        """Records final so far, in frame order (merged chunks, then the serial partial chunk).

        Returns
        -------
        list of FrameRecord
            A new list.
        """
        return self.records + (self.partial.records if self.partial is not None else [])

    def flush(self) -> list[FrameRecord]:
        """After a stop: merge the chunks finished out of order (skipping the gaps), in order.

        Returns
        -------
        list of FrameRecord
            The records merged by this call.
        """
        merged = []
        for k in sorted(self._buffer):
            c = self._buffer.pop(k)
            self.stats.merge(c.stats)
            self.records.extend(c.records)
            merged.extend(c.records)
        return merged

    def result(self) -> TrajectoryResult:
        """The frames merged so far plus the serial run's chunk in progress (not mutating).

        Returns
        -------
        TrajectoryResult
            ``complete`` True when every requested frame is in it.
        """
        stats, records = self.stats, list(self.records)
        if self.partial is not None and self.partial.records:
            stats = stats.copy()
            stats.merge(self.partial.stats)
            records += self.partial.records
        complete = len(records) == len(self.requested)
        return TrajectoryResult(self.request, self.system, self.requested, records, stats, complete)


class TrajectoryScan:
    """A serial trajectory run.

    ``on_frame(record)`` is called for each frame once it is final (in frame order).
    ``steps()`` yields ``(done, total)`` and returns the :class:`TrajectoryResult`;
    ``result()`` is the result so far at any time.
    """

    def __init__(self, request: TrajectoryRequest, frames: str | None = None, on_frame=None,
                 source: TrajectorySource | None = None):
        self.request = request
        self.source = source or TrajectorySource(request)
        self.system = self.source.system
        self.n_frames_file = self.source.n_frames
        self.frames_spec = frames
        self.frames = parse_frames(frames, self.n_frames_file)
        self.on_frame = on_frame
        self.state = TrajectoryState(request, self.system, self.frames)

    @property
    def total(self) -> int:
        return len(self.frames)

    def steps(self):
        """Run the frames chunk by chunk, in order.

        Yields
        ------
        done, total : int
            Frames done, out of the frames requested; first ``(0, total)``, then after each frame.

        Returns
        -------
        TrajectoryResult
            (The generator's return value.)  Every requested frame and the statistics over them.
        """
        state = self.state
        total = len(state.requested)
        yield 0, total
        for number, indices in enumerate(state.chunks):
            state.partial = ChunkResult(number, [], PairStatistics(self.system.n_residues,
                                                                   self.request.persistence_threshold))
            for record in iter_chunk(self.source, indices, state.partial.stats):
                state.partial.records.append(record)
                if self.on_frame is not None:
                    self.on_frame(record)
                yield state.n_done, total
            chunk, state.partial = state.partial, None
            state.accept(chunk)
        return state.result()

    def run(self, progress=None) -> TrajectoryResult:
        """Run to the end; ``progress(done, total)`` after each frame.

        Parameters
        ----------
        progress : callable or None, optional
            Called with ``(done, total)`` frames at each step.

        Returns
        -------
        TrajectoryResult
            The complete result.
        """
        return run_to_end(self.steps(), progress)

    def result(self) -> TrajectoryResult:
        """The result so far (frames done, in order), at any time.

        Returns
        -------
        TrajectoryResult
            See :meth:`TrajectoryState.result`.
        """
        return self.state.result()


def scan_trajectory(request: TrajectoryRequest, frames: str | None = None, progress=None):
    """Serial convenience: the whole :class:`TrajectoryResult` of ``frames``.

    Parameters
    ----------
    request : TrajectoryRequest
        Inputs and what to record.
    frames : str or None, optional
        Frame range ``START:STOP:STEP`` (:func:`parse_frames`); None (default) for every frame.
    progress : callable or None, optional
        ``progress(done, total)`` after each frame.

    Returns
    -------
    TrajectoryResult
        Every requested frame's record and the statistics over them.
    """
    return TrajectoryScan(request, frames).run(progress)


__all__ = ["COLUMNS", "CHUNK_FRAMES", "TrajectoryError", "TrajectoryRequest", "TrajectorySource",
           "FrameRecord", "PairStatistics", "ChunkResult", "TrajectoryResult", "TrajectoryState",
           "TrajectoryScan", "parse_frames", "parse_pair", "run_chunk", "scan_trajectory"]
