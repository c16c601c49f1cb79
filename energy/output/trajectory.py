"""Trajectory results as files: the per-frame CSV tables (appended as frames finish), the
residue-pair statistics table, the JSON document and the text summary (docs/trajectories.md)."""
from __future__ import annotations

import contextlib
import csv
import io
import math
import os

import numpy as np

from energy.analysis.trajectory import COLUMNS, SELECTION_COLUMNS, TrajectoryRequest
from energy.output.header import document_header
from energy.output.report import UNITS, residue_records

FRAMES_CSV = "frames.csv"
PAIR_FRAMES_CSV = "pair_frames.csv"
SELECTION_CSV = "group_interaction_frames.csv"
STATS_CSV = "residue_pairs_stats.csv"


def _f(x) -> str:
    """Exact float text (repr round-trips); empty for NaN/inf."""
    x = float(x)
    return repr(x) if math.isfinite(x) else ""


class FrameTables:
    """The append-only per-frame CSV tables of one run."""

    def __init__(self, folder: str, request: TrajectoryRequest, system, guard=contextlib.nullcontext):
        """``guard``: a context manager factory wrapped round every append (the command line
        passes one that holds Ctrl-C back, so a row is never cut in half)."""
        self.folder = folder
        self.guard = guard
        os.makedirs(folder, exist_ok=True)
        label = system.residues.label
        self.pairs = [(i, j, label(i), label(j)) for i, j in request.pairs]
        self.files = {}
        self.count = {}
        self._open(FRAMES_CSV, ["frame", *COLUMNS])
        if self.pairs:
            self._open(PAIR_FRAMES_CSV, ["frame", "i", "j", "label_i", "label_j", *COLUMNS,
                                         "min_heavy_distance"])
        if request.select_a is not None:
            self._open(SELECTION_CSV, ["frame", *SELECTION_COLUMNS])

    def _open(self, name, header):
        fh = open(os.path.join(self.folder, name), "w", newline="")
        self.files[name] = fh
        self.count[name] = 0
        self._write(name, [header])

    def _write(self, name, rows):
        buf = io.StringIO()
        csv.writer(buf).writerows(rows)
        fh = self.files[name]
        fh.write(buf.getvalue())  # one write per frame: rows are never split by Ctrl-C
        fh.flush()

    def _rows(self, name, r):
        if name == FRAMES_CSV:
            return [[r.index, *(_f(r.totals[c]) for c in COLUMNS)]]
        if name == PAIR_FRAMES_CSV:
            return [[r.index, i, j, li, lj, *(_f(v) for v in r.pair_values[k]),
                     _f(r.pair_distance[k])] for k, (i, j, li, lj) in enumerate(self.pairs)]
        s = r.selection
        return [[r.index, _f(s["coulomb"]), _f(s["lj"]), _f(s["total"]), s["n_atoms_a"],
                 s["n_atoms_b"]]]

    def sync(self, records) -> None:
        """Append the records not yet written (``records`` is the ordered list of frames done).

        Each table gets one write per frame, inside ``guard``.

        Parameters
        ----------
        records : list of FrameRecord
            Every frame done so far, in frame order (those already written are skipped by count).
        """
        with self.guard():
            for name in self.files:
                for r in records[self.count[name]:]:
                    self._write(name, self._rows(name, r))
                    self.count[name] += 1

    def close(self):
        """Close the CSV files.

        Returns
        -------
        None
        """
        for fh in self.files.values():
            fh.close()


def stats_table_csv(result) -> str:
    """The residue-pair statistics table as CSV text.

    Pairs with any non-zero mean or spread, in key order; values written exactly (``repr``),
    NaN and inf as empty cells.

    Parameters
    ----------
    result : TrajectoryResult
        The run's result.

    Returns
    -------
    str
        Columns ``i``, ``j``, ``label_i``, ``label_j``, ``mean_<column>`` and ``std_<column>``
        (kcal/mol) for every term and ``total``, ``persistence`` and ``present_fraction`` (fractions
        of frames), ``min_heavy_distance`` (A).
    """
    st = result.stats
    label = result.system.residues.label
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["i", "j", "label_i", "label_j", *(f"mean_{c}" for c in COLUMNS),
                *(f"std_{c}" for c in COLUMNS), "persistence", "present_fraction",
                "min_heavy_distance"])
    mean, std, pers = st.mean, st.std(), st.persistence()
    n = max(st.n, 1)
    for k in _kept_pairs(st):
        i, j = int(st.keys[k] // st.n_residues), int(st.keys[k] % st.n_residues)
        w.writerow([i, j, label(i), label(j), *(_f(v) for v in mean[k]), *(_f(v) for v in std[k]),
                    _f(pers[k]), _f(st.present[k] / n), _f(st.min_distance[k])])
    return out.getvalue()


def _kept_pairs(stats) -> np.ndarray:
    """Rows with any non-zero mean or spread (like the snapshot JSON, which skips all-zero pairs)."""
    if not len(stats):
        return np.zeros(0, np.intp)
    return np.flatnonzero(np.any(stats.mean != 0.0, axis=1) | np.any(stats.m2 != 0.0, axis=1))


def trajectory_document(result, scan, execution: dict, interrupted: bool, timings: dict) -> dict:
    """JSON document of a trajectory run.

    Parameters
    ----------
    result : TrajectoryResult
        The frames done and their statistics.
    scan : TrajectoryScan
        The run (its frame range text and the file's frame count are recorded).
    execution : dict
        How it ran (mode, workers or scheduler, chunk size).
    interrupted : bool
        The run was stopped by the user.
    timings : dict
        Wall times, s.

    Returns
    -------
    dict
        JSON-ready: ``units`` (kcal/mol, angstrom), inputs, settings, per-frame totals and their
        mean and std (kcal/mol), ``pairs`` (statistics of every kept residue pair), ``pair_series``
        of the requested pairs, ``group_interaction`` (when groups were given) and ``timings``.
    """
    system, st, req = result.system, result.stats, result.request
    finite = lambda x: float(x) if math.isfinite(float(x)) else None  # noqa: E731
    totals = result.per_frame_totals()
    mean, std, pers = st.mean, st.std(), st.persistence()
    n = max(st.n, 1)
    pairs = []
    for k in _kept_pairs(st):
        pairs.append({"i": int(st.keys[k] // st.n_residues), "j": int(st.keys[k] % st.n_residues),
                      "mean": {c: float(mean[k, m]) for m, c in enumerate(COLUMNS)},
                      "std": {c: float(std[k, m]) for m, c in enumerate(COLUMNS)},
                      "persistence": float(pers[k]), "present_fraction": float(st.present[k] / n),
                      "min_heavy_distance": finite(st.min_distance[k])})
    label = system.residues.label
    series = []
    for k, (i, j) in enumerate(req.pairs):
        s = result.pair_series(k)
        series.append({"i": i, "j": j, "label_i": label(i), "label_j": label(j),
                       **{c: [float(v) for v in s[c]] for c in COLUMNS},
                       "min_heavy_distance": [finite(v) for v in s["min_heavy_distance"]]})
    doc = {
        **document_header(
            "trajectory",
            {"structure": req.structure, "coordinates": req.trajectory_path, "parameters": list(req.params),
             "frames": scan.frames_spec, "n_frames_in_file": scan.n_frames_file},
            {**req.settings.as_dict(), "cell_note": "; ".join(result.cell_notes()) or None}),
        "units": UNITS,
        "force_field": system.force_field,
        "n_atoms": system.n_atoms,
        "n_residues": system.n_residues,
        "preparation": _preparation(scan),
        "execution": execution,
        "complete": result.complete,
        "interrupted": interrupted,
        "n_frames_requested": len(result.requested),
        "frames": result.frames,
        "per_frame_totals": {c: [float(v) for v in totals[c]] for c in COLUMNS},
        "totals": {"mean": {c: float(np.mean(totals[c])) if len(totals[c]) else None for c in COLUMNS},
                   "std": {c: float(np.std(totals[c])) if len(totals[c]) else None for c in COLUMNS}},
        "persistence_threshold": req.persistence_threshold,
        "residues": residue_records(system),
        "pairs": pairs,
        "pair_series": series,
        "timings": timings,
    }
    sel = result.selection_series()
    if sel is not None:
        doc["group_interaction"] = {"a": req.select_a, "b": req.select_b,
                            **{c: [float(v) if c in ("coulomb", "lj", "total") else int(v)
                                   for v in sel[c]] for c in SELECTION_COLUMNS}}
    return doc


def _preparation(scan):
    """The preparation block of the scan's built-in-route system (energy.io.preparation), or None."""
    source = getattr(scan, "source", None)
    record = getattr(getattr(source, "loaded", None), "preparation", None)
    return None if record is None else record.as_dict()


def summary_text(result, top: int = 8) -> str:
    """Text summary of a trajectory run.

    Per-term mean and std over the frames, the most persistent residue pairs, the requested pairs
    and the group interaction.

    Parameters
    ----------
    result : TrajectoryResult
        The run's result.
    top : int, optional
        Number of persistent residue pairs listed (default 8).

    Returns
    -------
    str
        The summary (kcal/mol), lines joined by newlines.
    """
    st = result.stats
    label = result.system.residues.label
    req = result.request
    lines = [f"{req.structure}: {result.system.n_atoms} atoms, {result.system.n_residues} residues; "
             f"{len(result.frames)} of {len(result.requested)} frame(s) of {req.trajectory_path}"
             + ("" if result.complete else " (stopped early)"),
             f"settings: {req.settings.describe()}"]
    lines += [f"note: {note}" for note in result.cell_notes()]
    lines += ["", "per-term totals over the frames (kcal/mol):      mean           std"]
    totals = result.per_frame_totals()
    for c in COLUMNS:
        v = totals[c]
        if len(v):
            lines.append(f"  {c:<13}{np.mean(v):>30.4f}{np.std(v):>14.4f}")
    if len(st):
        pers = st.persistence()
        off = np.flatnonzero(st.pair_i != st.pair_j)
        mean_total = st.column("total")
        order = off[np.lexsort((mean_total[off], -pers[off]))][:top]
        lines += ["", f"most persistent residue pairs (total < {req.persistence_threshold:g} "
                      "kcal/mol; fraction of frames, mean total):"]
        for k in order:
            if pers[k] <= 0:
                break
            lines.append(f"  {label(st.pair_i[k]):>14} - {label(st.pair_j[k]):<14}"
                         f"{pers[k]:>8.2f}{mean_total[k]:>14.3f}")
    for k, (i, j) in enumerate(req.pairs):
        s = result.pair_series(k)
        if len(s["total"]):
            lines.append(f"pair {label(i)} - {label(j)}: total {np.mean(s['total']):.3f} +- "
                         f"{np.std(s['total']):.3f} kcal/mol")
    sel = result.selection_series()
    if sel is not None and len(sel["total"]):
        lines.append(f"group interaction {req.select_a!r} vs {req.select_b!r}: "
                     f"{np.mean(sel['total']):.4f} +- {np.std(sel['total']):.4f} kcal/mol")
    return "\n".join(lines)
