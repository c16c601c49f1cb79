"""``tessera scan STRUCTURE TRAJECTORY --frames START:STOP:STEP``: the trajectory command.

Outputs (formats in docs/trajectories.md):

* ``--csv-dir DIR``: per-frame tables written as the frames finish, one complete row at a time
  (``frames.csv``; ``pair_frames.csv`` with ``--pairs``; ``selection_frames.csv`` with
  ``--select-a/--select-b``), and ``residue_pairs_stats.csv`` (mean, std, persistence per
  residue pair), rewritten atomically at checkpoints and at the end.
* ``--json OUT.json``: the mean/std residue-pair matrices like the snapshot JSON, the frames
  done and the per-frame totals; written atomically at checkpoints and at the end.

A progress bar goes to stderr unless ``--quiet``.  Ctrl-C stops the run: the frames already done
are kept, every output is completed for exactly those frames (a second Ctrl-C is held back while
the files are written), and the exit status is 130.
"""
from __future__ import annotations

import contextlib
import csv
import io
import math
import os
import signal
import sys
import threading
import time

import numpy as np

from .errors import EnergyError
from .trajectory import (COLUMNS, SELECTION_COLUMNS, TrajectoryError, TrajectoryRequest,
                         TrajectoryScan, parse_pair)

#: Seconds between checkpoint rewrites of the JSON and the statistics table.
CHECKPOINT_SECONDS = 60.0
FRAMES_CSV = "frames.csv"
PAIR_FRAMES_CSV = "pair_frames.csv"
SELECTION_CSV = "selection_frames.csv"
STATS_CSV = "residue_pairs_stats.csv"


# --------------------------------------------------------------------------------------------
# SIGINT held back while files are written
# --------------------------------------------------------------------------------------------

@contextlib.contextmanager
def held_interrupts():
    """Defer Ctrl-C until the block is done (main thread only; elsewhere a no-op)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught = []
    previous = signal.signal(signal.SIGINT, lambda *a: caught.append(a))
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)
    if caught:
        raise KeyboardInterrupt


# --------------------------------------------------------------------------------------------
# tables
# --------------------------------------------------------------------------------------------

def _f(x) -> str:
    """Exact float text (repr round-trips); empty for NaN/inf."""
    x = float(x)
    return repr(x) if math.isfinite(x) else ""


class FrameTables:
    """The append-only per-frame CSV tables of one run."""

    def __init__(self, folder: str, request: TrajectoryRequest, system):
        self.folder = folder
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
        """Append the records not yet written (``records`` is the ordered list of frames done)."""
        with held_interrupts():
            for name in self.files:
                for r in records[self.count[name]:]:
                    self._write(name, self._rows(name, r))
                    self.count[name] += 1

    def close(self):
        for fh in self.files.values():
            fh.close()


def stats_table_csv(result) -> str:
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


# --------------------------------------------------------------------------------------------
# JSON
# --------------------------------------------------------------------------------------------

def trajectory_document(result, scan, execution: dict, interrupted: bool, timings: dict) -> dict:
    from .report import UNITS, residue_records
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
        "program": "tessera",
        "kind": "trajectory",
        "units": UNITS,
        "inputs": {"structure": req.structure, "coordinates": req.trajectory_path,
                   "parameters": list(req.params), "frames": scan.frames_spec,
                   "n_frames_in_file": scan.n_frames_file},
        "force_field": system.force_field,
        "n_atoms": system.n_atoms,
        "n_residues": system.n_residues,
        "settings": req.settings.as_dict(),
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
        doc["selection"] = {"a": req.select_a, "b": req.select_b,
                            **{c: [float(v) if c in ("coulomb", "lj", "total") else int(v)
                                   for v in sel[c]] for c in SELECTION_COLUMNS}}
    return doc


# --------------------------------------------------------------------------------------------
# progress bar
# --------------------------------------------------------------------------------------------

class ProgressBar:
    """``frames 12/40 [#####.....] 3.2 frames/s, 9 s left`` on stderr (a line every 10 % when
    stderr is not a terminal)."""

    def __init__(self, stream=None, width: int = 30):
        self.stream = stream or sys.stderr
        self.width = width
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.t0 = time.perf_counter()
        self.first = None
        self.last_tenth = -1
        self.shown = False

    def update(self, done: int, total: int):
        now = time.perf_counter()
        if done and self.first is None:
            self.first = (now, done)
        rate = None
        if self.first is not None and done > self.first[1]:
            rate = (done - self.first[1]) / max(now - self.first[0], 1e-9)
        filled = int(self.width * done / max(total, 1))
        text = f"frames {done}/{total} [{'#' * filled}{'.' * (self.width - filled)}]"
        if rate:
            text += f" {rate:.2f} frames/s, {max(total - done, 0) / rate:.0f} s left"
        if self.tty:
            self.stream.write("\r" + text.ljust(78))
            self.stream.flush()
            self.shown = True
        else:
            tenth = 10 * done // max(total, 1)
            if tenth != self.last_tenth:
                self.last_tenth = tenth
                self.stream.write(text + "\n")
                self.stream.flush()

    def finish(self):
        if self.tty and self.shown:
            self.stream.write("\n")
            self.stream.flush()


# --------------------------------------------------------------------------------------------
# the command
# --------------------------------------------------------------------------------------------

def request_from_args(args) -> TrajectoryRequest:
    from .cli import settings_from_args
    if (args.select_a is None) != (args.select_b is None):
        raise TrajectoryError("give both --select-a and --select-b, or neither")
    pairs = tuple(parse_pair(p) for p in (args.pairs or []))
    return TrajectoryRequest(args.structure, args.coords, tuple(args.params),
                             bool(getattr(args, "add_hydrogens", False)), settings_from_args(args),
                             pairs, args.select_a, args.select_b,
                             float(args.persistence_threshold))


def make_scan(request, frames, workers: int = 1, scheduler: str | None = None):
    """The serial or parallel scan for these options, and a description of how it runs."""
    if scheduler is not None:
        if workers not in (None, 1):
            raise TrajectoryError("give --workers N or --scheduler ADDRESS, not both")
        from .trajectory_parallel import ParallelTrajectoryScan
        return (ParallelTrajectoryScan(request, frames, scheduler=scheduler),
                {"mode": "dask", "scheduler": scheduler})
    if workers is None or workers == 1:
        return TrajectoryScan(request, frames), {"mode": "serial", "workers": 1}
    if workers < 1:
        raise TrajectoryError(f"--workers must be >= 1, got {workers}")
    from .trajectory_parallel import ParallelTrajectoryScan
    return (ParallelTrajectoryScan(request, frames, workers=workers),
            {"mode": "processes", "workers": workers})


def summary_text(result, top: int = 8) -> str:
    st = result.stats
    label = result.system.residues.label
    req = result.request
    lines = [f"{req.structure}: {result.system.n_atoms} atoms, {result.system.n_residues} residues; "
             f"{len(result.frames)} of {len(result.requested)} frame(s) of {req.trajectory_path}"
             + ("" if result.complete else " (stopped early)"),
             f"settings: {req.settings.describe()}", "",
             "per-term totals over the frames (kcal/mol):      mean           std"]
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
        lines.append(f"interaction {req.select_a!r} vs {req.select_b!r}: "
                     f"{np.mean(sel['total']):.4f} +- {np.std(sel['total']):.4f} kcal/mol")
    return "\n".join(lines)


def run(args, progress=None) -> int:
    """Run the trajectory scan of ``tessera scan ... --frames``; returns the exit status.

    ``progress(done, total)``, if given, is called after each step (besides the bar).
    """
    from .report import atomic_write_text, write_json
    t_start = time.perf_counter()
    if args.json and not os.path.isdir(os.path.dirname(os.path.abspath(args.json))):
        raise EnergyError(f"{args.json}: the output folder does not exist")
    request = request_from_args(args)
    scan, execution = make_scan(request, args.frames, getattr(args, "workers", 1),
                                getattr(args, "scheduler", None))
    execution["chunk_frames"] = request.chunk_frames
    t_open = time.perf_counter()
    tables = FrameTables(args.csv_dir, request, scan.system) if args.csv_dir else None
    bar = None if args.quiet else ProgressBar()
    interrupted, failure = False, None
    last_checkpoint = time.perf_counter()

    def write_outputs(final: bool):
        result = scan.result()
        if tables is not None:
            tables.sync(result.records)
        with held_interrupts():
            timings = {"load": t_open - t_start, "frames": time.perf_counter() - t_open,
                       "frame_compute_sum": float(sum(r.seconds for r in result.records))}
            if args.json:
                write_json(args.json, trajectory_document(result, scan, dict(execution),
                                                          interrupted, timings))
            if tables is not None:
                atomic_write_text(os.path.join(args.csv_dir, STATS_CSV), stats_table_csv(result))
        return result

    steps = scan.steps()
    try:
        while True:
            try:
                done, total = next(steps)
            except StopIteration:
                break
            if tables is not None:
                tables.sync(scan.state.done_records())
            if bar is not None:
                bar.update(done, total)
            if progress is not None:
                progress(done, total)
            if time.perf_counter() - last_checkpoint > CHECKPOINT_SECONDS and done < total:
                write_outputs(final=False)
                last_checkpoint = time.perf_counter()
    except KeyboardInterrupt:
        interrupted = True
    except EnergyError as exc:
        failure = exc
    finally:
        with held_interrupts():
            steps.close()  # cancels pending chunks and stops the workers of a parallel run
    if bar is not None:
        bar.finish()
    try:
        result = write_outputs(final=True)
    finally:
        if tables is not None:
            tables.close()
    if failure is not None:
        raise TrajectoryError(f"{failure} (outputs hold the {len(result.frames)} frame(s) done "
                              "before the error)") from None
    if not args.quiet:
        print(summary_text(result, getattr(args, "top", 8)))
    if interrupted:
        print(f"tessera: interrupted after {len(result.frames)} of {len(result.requested)} "
              "frame(s); the outputs hold those frames", file=sys.stderr)
        return 130
    return 0
