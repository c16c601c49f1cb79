"""Background work: loading and computing in a QThread, with progress and cancellation.

The energy core is a generator (:func:`energy.decomposition.pipeline.compute_steps`) yielding ``(done,
total)``; the worker drives it and checks the cancel flag between steps.  Only Qt glue here.
"""
from __future__ import annotations

import itertools
import threading
import time
import traceback
from dataclasses import dataclass

from PySide6.QtCore import QObject, QThread, Signal

from app.gui.collector import collections_paused
from app.state.document import Snapshot
from energy.analysis.compare import compare_results
from energy.decomposition.pipeline import compute_steps
from energy.errors import EnergyError, one_line
from energy.io.loaders import load_system


def failure_message(exc: BaseException) -> tuple[str, str]:
    """(one-line message, details) for the error dialog: expected failures (engine errors,
    unreadable files) say what happened; anything else also carries its traceback."""
    if isinstance(exc, EnergyError):
        return str(exc), ""
    if isinstance(exc, OSError):
        name = getattr(exc, "filename", None)
        return one_line(f"{str(name) + ': ' if name else ''}{exc.strerror or exc}"), ""
    return unexpected_message(exc), traceback.format_exc()


def unexpected_message(exc: BaseException) -> str:
    """One line for an exception that is a bug (its traceback goes under "Details")."""
    return one_line(f"unexpected error ({type(exc).__name__}: {one_line(exc, 120)}); this is a bug, "
                    "please report it with the input files (details below)")



class Cancelled(Exception):
    pass


@dataclass(frozen=True)
class JobResult:
    """What a main job produced: the snapshots in job order, and the comparison of ``pair``
    (first, second snapshot) when the job compared two structures."""

    snapshots: list
    comparison: object = None
    pair: tuple | None = None
    #: Status-bar lines from ``settings_for`` (settings chosen to fit an input), in job order.
    notes: tuple = ()


class EnergyWorker(QObject):
    """Load (unless a loaded system is given) and compute one or more systems.

    ``jobs`` is a list of ``(LoadSpec, LoadedSystem or None)``; ``finished`` carries the list
    of :class:`Snapshot` in the same order.  ``failed`` carries a one-line message (expected
    errors) or a message plus traceback text (unexpected ones, shown under "Details").
    """

    progress = Signal(int, int)       # done, total (total 0: busy, no estimate)
    phase = Signal(str)
    finished = Signal(object)         # JobResult
    failed = Signal(str, str)         # message, details
    cancelled = Signal()

    def __init__(self, jobs, settings, compare_with=None, settings_for=None):
        """``compare_with``: a :class:`Snapshot` to compare the first computed snapshot with
        (first = ``compare_with``, second = the new one); with two jobs and ``compare_with``
        None, the two new snapshots are compared.  The comparison is attached to the result
        (:class:`JobResult`), so it never runs on the GUI thread.  ``settings_for(loaded,
        settings)``, when given, returns the ``(settings, note)`` to compute a loaded system with
        (app/state/defaults.py); it runs in this worker's thread."""
        super().__init__()
        self._jobs = list(jobs)
        self._settings = settings
        self._compare_with = compare_with
        self._settings_for = settings_for
        self._cancel = threading.Event()
        self.elapsed = 0.0

    def cancel(self) -> None:
        self._cancel.set()

    def _check(self):
        if self._cancel.is_set():
            raise Cancelled

    def run(self) -> None:
        t0 = time.perf_counter()
        try:
            out, notes = [], []
            for spec, loaded in self._jobs:
                self._check()
                if loaded is None:
                    self.phase.emit(f"Reading {spec.short_name()}")
                    self.progress.emit(0, 0)
                    with collections_paused():   # see app/gui/collector.py: no full-heap pauses
                        loaded = load_system(spec.structure, spec.coords, spec.params, frame=spec.frame,
                                             preparation=None if spec.params else spec.preparation())
                self._check()
                settings = self._settings
                if self._settings_for is not None:
                    settings, note = self._settings_for(loaded, settings)
                    if note:
                        notes.append(note)
                self.phase.emit(f"Computing {spec.short_name()}")
                steps = compute_steps(loaded.system, loaded.frame, settings)
                while True:
                    self._check()
                    try:
                        done, total = next(steps)
                    except StopIteration as stop:
                        result = stop.value
                        break
                    self.progress.emit(int(done), int(total))
                out.append(Snapshot(spec, loaded, result))
            self._check()
            pair = ((self._compare_with, out[0]) if self._compare_with is not None
                    else (out[0], out[1]) if len(out) > 1 else None)
            comparison = None
            if pair is not None:
                self.phase.emit("Comparing")
                comparison = compare_results(pair[0].system, pair[0].result, pair[1].system, pair[1].result)
            self.elapsed = time.perf_counter() - t0
            self.finished.emit(JobResult(out, comparison, pair, tuple(notes)))
        except Cancelled:
            self.cancelled.emit()
        except Exception as exc:  # expected failures: one line; unexpected: plus the traceback
            self.failed.emit(*failure_message(exc))


class WorkerHandle(QObject):
    """Owns one worker and its thread; ``done`` fires after the thread has stopped."""

    done = Signal()

    def __init__(self, worker, parent=None):
        super().__init__(parent)
        self.worker = worker
        self.thread = QThread()
        worker.moveToThread(self.thread)
        self.thread.started.connect(worker.run)
        for name in ("finished", "failed", "cancelled", "stopped"):
            if hasattr(worker, name):
                getattr(worker, name).connect(self.thread.quit)
        self.thread.finished.connect(self.done)

    def start(self) -> None:
        self.thread.start()

    def cancel(self) -> None:
        if hasattr(self.worker, "cancel"):
            self.worker.cancel()

    def wait(self, ms: int = 10000) -> bool:
        self.cancel()
        self.thread.quit()
        return self.thread.wait(ms)


class JobQueue(QObject):
    """The window's background work: one *main* job at a time (open, compare, recompute) and
    any number of *side* jobs (clash check, frames, scans, group energies).

    A main job submitted while another runs cancels it and runs next (the newest request wins).
    A pending recompute is rebuilt when it starts (``recompute_jobs()``), so it sees the newest
    snapshots; every main job uses ``settings()`` as it starts.  Signals carry the job kind.
    """

    progress = Signal(int, int)       # done, total (0: no estimate)
    phase = Signal(str)
    finished = Signal(str, object, float)   # kind, JobResult, seconds
    failed = Signal(str, str, str)          # kind, message, details
    busyChanged = Signal(bool)

    def __init__(self, settings, recompute_jobs, parent=None, settings_for_input=None):
        super().__init__(parent)
        self._settings = settings
        self._settings_for_input = settings_for_input   # for "open" jobs (EnergyWorker)
        self._recompute_jobs = recompute_jobs
        self._job = None
        self._kind = None
        self._pending = None
        self._side = []
        self._closing = False

    @property
    def busy(self) -> bool:
        return self._job is not None

    def submit(self, jobs, kind: str, compare_with=None) -> None:
        """Run ``jobs`` (``(LoadSpec, LoadedSystem or None)`` pairs) as a main job of ``kind``
        (``open``, ``compare`` or ``recompute``); see :class:`EnergyWorker` for
        ``compare_with``."""
        if self._closing:
            return
        if self._job is not None:
            self._pending = (jobs, kind, compare_with)
            self._job.cancel()
            return
        worker = EnergyWorker(jobs, self._settings(), compare_with,
                              self._settings_for_input if kind == "open" else None)
        handle = WorkerHandle(worker, self)
        worker.progress.connect(self.progress)
        worker.phase.connect(self.phase)
        self._kind = kind
        worker.finished.connect(self._on_finished)   # bound methods: queued into the GUI thread
        worker.failed.connect(self._on_failed)
        handle.done.connect(self._on_thread_done)
        self._job = handle
        self.busyChanged.emit(True)
        handle.start()

    def cancel(self) -> bool:
        """Cancel the main job and drop any pending one; True if a job was running."""
        self._pending = None
        if self._job is None:
            return False
        self._job.cancel()
        return True

    def _on_finished(self, result) -> None:
        elapsed = self._job.worker.elapsed if self._job is not None else 0.0
        self.finished.emit(self._kind, result, elapsed)

    def _on_failed(self, msg, details) -> None:
        self.failed.emit(self._kind, msg, details)

    def _on_thread_done(self) -> None:
        self._job = None
        self.busyChanged.emit(False)
        if self._pending is not None:
            jobs, kind, compare_with = self._pending
            self._pending = None
            if kind == "recompute":
                jobs = self._recompute_jobs()
            if jobs:
                self.submit(jobs, kind, compare_with)

    def start_side(self, worker, on_done=None) -> WorkerHandle | None:
        """Run a side worker in its own thread; ``on_done`` after its thread has stopped.
        Returns None (and starts nothing) once :meth:`shutdown` has begun."""
        if self._closing:
            return None
        handle = WorkerHandle(worker, self)
        if on_done is not None:
            handle.done.connect(on_done)
        handle.done.connect(self._on_side_done)
        self._side.append(handle)
        handle.start()
        return handle

    def _on_side_done(self) -> None:
        self._side = [h for h in self._side if h.thread.isRunning()]

    def shutdown(self, extra_handles=(), ms: int = 5000) -> None:
        """Stop accepting work, cancel everything and wait for every thread to end."""
        self._closing = True
        self._pending = None
        for handle in [self._job, *self._side, *extra_handles]:
            if handle is not None:
                handle.wait(ms)


__all__ = ["EnergyWorker", "JobQueue", "JobResult", "WorkerHandle", "CallWorker", "TrajectoryWorker",
           "HotspotWorker", "next_job_id"]


_JOB_IDS = itertools.count(1)


def next_job_id() -> int:
    """A job id never given before in this process (1, 2, 3, ...)."""
    return next(_JOB_IDS)


class CallWorker(QObject):
    """Run one plain function in a thread (short jobs: interface energies, exports).

    Each worker has its own :attr:`job_id`; ``result`` carries it with the value (``finished``
    the value alone), so that a receiver can drop a result whose job is no longer the one it
    waits for (a stale result of an earlier request)."""

    finished = Signal(object)
    result = Signal(int, object)      # job id, value
    failed = Signal(str, str)
    jobFailed = Signal(int, str, str)   # job id, message, details

    def __init__(self, func, *args):
        super().__init__()
        self._func, self._args = func, args
        self.job_id = next_job_id()

    def run(self) -> None:
        try:
            value = self._func(*self._args)
            self.result.emit(self.job_id, value)
            self.finished.emit(value)
        except Exception as exc:  # noqa: BLE001  (every failure reaches the window as a message)
            msg, details = failure_message(exc)
            self.jobFailed.emit(self.job_id, msg, details)
            self.failed.emit(msg, details)


class TrajectoryWorker(QObject):
    """Drive a trajectory scan (:func:`app.state.trajectory.scan_steps`) with progress and
    cancel.  ``finished`` carries the :class:`energy.analysis.trajectory.TrajectoryResult` (complete);
    ``stopped`` the result of the frames done when cancelled (``complete`` False)."""

    progress = Signal(int, int)
    phase = Signal(str)
    finished = Signal(object)
    stopped = Signal(object)
    failed = Signal(str, str)

    def __init__(self, loaded, request, store=None, frames=None, label="frames"):
        super().__init__()
        self._loaded, self._request, self._store, self._frames = loaded, request, store, frames
        self._label = label
        self._cancel = threading.Event()
        self.elapsed = 0.0

    def cancel(self) -> None:
        self._cancel.set()

    def run(self) -> None:
        from app.state.trajectory import scan_steps
        t0 = time.perf_counter()
        try:
            self.phase.emit(f"Computing {self._label}")
            scan, steps = scan_steps(self._loaded, self._request, self._store, self._frames)
            while True:
                if self._cancel.is_set():
                    self.elapsed = time.perf_counter() - t0
                    self.stopped.emit(scan.result())
                    return
                try:
                    done, total = next(steps)
                except StopIteration as stop:
                    self.elapsed = time.perf_counter() - t0
                    self.finished.emit(stop.value)
                    return
                self.progress.emit(int(done), int(total))
        except Exception as exc:  # noqa: BLE001  (every failure reaches the window as a message)
            self.failed.emit(*failure_message(exc))


class HotspotWorker(QObject):
    """Run an alanine scan (:func:`energy.analysis.hotspot_setup.scan_loaded`) with progress per
    residue and cancel.  ``finished`` carries the :class:`energy.analysis.hotspots.HotspotScan`."""

    progress = Signal(int, int)
    phase = Signal(str)
    finished = Signal(object)
    cancelled = Signal()
    failed = Signal(str, str)

    def __init__(self, loaded, settings, select_a: str, select_b: str, interface: float, force_field_files=(),
                 force_field=()):
        super().__init__()
        self._args = (loaded, settings, select_a, select_b, interface)
        self._files = tuple(force_field_files)
        self._force_field = tuple(force_field)
        self._cancel = threading.Event()
        self.elapsed = 0.0

    def cancel(self) -> None:
        self._cancel.set()

    def _progress(self, done: int, total: int) -> bool:
        self.progress.emit(int(done), int(total))
        return not self._cancel.is_set()

    def run(self) -> None:
        from energy.analysis.hotspot_setup import scan_loaded
        from energy.io.builtin import DEFAULT_FORCE_FIELD, build_force_field
        t0 = time.perf_counter()
        loaded, settings, a, b, interface = self._args
        try:
            self.phase.emit("Alanine scan: building the mutants")
            self.progress.emit(0, 0)
            ff = (build_force_field(self._force_field or DEFAULT_FORCE_FIELD, self._files)
                  if loaded.prepared_topology is not None else None)
            scan = scan_loaded(loaded, settings, a, b, interface, ff, self._progress)
            self.elapsed = time.perf_counter() - t0
            self.finished.emit(scan)
        except Exception as exc:  # noqa: BLE001  (every failure reaches the window as a message)
            if self._cancel.is_set():
                self.cancelled.emit()
            else:
                self.failed.emit(*failure_message(exc))
