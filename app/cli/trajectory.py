"""``tessera scan STRUCTURE TRAJECTORY --frames START:STOP:STEP``: the trajectory command.

Outputs (formats in docs/trajectories.md):

* ``--csv-dir DIR``: per-frame tables written as the frames finish, one complete row at a time
  (``frames.csv``; ``pair_frames.csv`` with ``--pairs``; ``group_interaction_frames.csv`` with
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
import os
import signal
import sys
import threading
import time

from app.cli.arguments import check_output_folders, preparation_from_args, settings_from_args
from app.cli.progress import ProgressBar
from energy.analysis.trajectory import (
    TrajectoryError,
    TrajectoryRequest,
    TrajectoryScan,
    parse_pair,
)
from energy.errors import EnergyError
from energy.output.trajectory import (  # noqa: F401
    FRAMES_CSV,
    PAIR_FRAMES_CSV,
    SELECTION_CSV,
    STATS_CSV,
    FrameTables,
    stats_table_csv,
    summary_text,
    trajectory_document,
)

#: Seconds between checkpoint rewrites of the JSON and the statistics table.
CHECKPOINT_SECONDS = 60.0


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
# JSON
# --------------------------------------------------------------------------------------------



# --------------------------------------------------------------------------------------------
# the command
# --------------------------------------------------------------------------------------------

def request_from_args(args) -> TrajectoryRequest:
    if (args.select_a is None) != (args.select_b is None):
        raise TrajectoryError("give both --select-a and --select-b, or neither")
    pairs = tuple(parse_pair(p) for p in (args.pairs or []))
    return TrajectoryRequest(args.structure, args.coords, tuple(args.params),
                             bool(getattr(args, "add_hydrogens", False)), settings_from_args(args),
                             pairs, args.select_a, args.select_b,
                             float(args.persistence_threshold), preparation=preparation_from_args(args))


def make_scan(request, frames, workers: int = 1, scheduler: str | None = None):
    """The serial or parallel scan for these options, and a description of how it runs."""
    if scheduler is not None:
        if workers not in (None, 1):
            raise TrajectoryError("give --workers N or --scheduler ADDRESS, not both")
        from energy.analysis.trajectory_parallel import ParallelTrajectoryScan
        return (ParallelTrajectoryScan(request, frames, scheduler=scheduler),
                {"mode": "dask", "scheduler": scheduler})
    if workers is None or workers == 1:
        return TrajectoryScan(request, frames), {"mode": "serial", "workers": 1}
    if workers < 1:
        raise TrajectoryError(f"--workers must be >= 1, got {workers}")
    from energy.analysis.trajectory_parallel import ParallelTrajectoryScan
    return (ParallelTrajectoryScan(request, frames, workers=workers),
            {"mode": "processes", "workers": workers})




def run(args, progress=None) -> int:
    """Run the trajectory scan of ``tessera scan ... --frames``; returns the exit status.

    ``progress(done, total)``, if given, is called after each step (besides the bar).
    """
    from energy.output.files import atomic_write_text
    from energy.output.report import write_json
    from energy.output.result_file import write_trajectory_result
    t_start = time.perf_counter()
    check_output_folders(args.json, getattr(args, "out", None))
    request = request_from_args(args)
    scan, execution = make_scan(request, args.frames, getattr(args, "workers", 1),
                                getattr(args, "scheduler", None))
    execution["chunk_frames"] = request.chunk_frames
    t_open = time.perf_counter()
    tables = FrameTables(args.csv_dir, request, scan.system, held_interrupts) if args.csv_dir else None
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
            if getattr(args, "out", None):
                write_trajectory_result(args.out, result)
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
