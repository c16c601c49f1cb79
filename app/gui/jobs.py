"""Background work: loading and computing in a QThread, with progress and cancellation.

The energy core is a generator (:func:`energy.decomposition.pipeline.compute_steps`) yielding ``(done,
total)``; the worker drives it and checks the cancel flag between steps.  Only Qt glue here.
"""
from __future__ import annotations

import threading
import time
import traceback

from PySide6.QtCore import QObject, QThread, Signal

from app.state.document import LoadSpec, Snapshot
from energy.decomposition.pipeline import compute_steps
from energy.errors import EnergyError
from energy.io.loaders import load_system


def failure_message(exc: BaseException) -> tuple[str, str]:
    """(one-line message, details) for the error dialog: expected failures (engine errors,
    unreadable files) say what happened; anything else also carries its traceback."""
    if isinstance(exc, EnergyError):
        return str(exc), ""
    if isinstance(exc, OSError):
        name = getattr(exc, "filename", None)
        return f"{name + ': ' if name else ''}{exc.strerror or exc}", ""
    return f"unexpected error: {exc}", traceback.format_exc()

class Cancelled(Exception):
    pass


class EnergyWorker(QObject):
    """Load (unless a loaded system is given) and compute one or more systems.

    ``jobs`` is a list of ``(LoadSpec, LoadedSystem or None)``; ``finished`` carries the list
    of :class:`Snapshot` in the same order.  ``failed`` carries a one-line message (expected
    errors) or a message plus traceback text (unexpected ones, shown under "Details").
    """

    progress = Signal(int, int)       # done, total (total 0: busy, no estimate)
    phase = Signal(str)
    finished = Signal(object)         # list[Snapshot]
    failed = Signal(str, str)         # message, details
    cancelled = Signal()

    def __init__(self, jobs, settings):
        super().__init__()
        self._jobs = list(jobs)
        self._settings = settings
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
            out = []
            for spec, loaded in self._jobs:
                self._check()
                if loaded is None:
                    self.phase.emit(f"Reading {spec.short_name()}")
                    self.progress.emit(0, 0)
                    loaded = load_system(spec.structure, spec.coords, spec.params, frame=spec.frame,
                                         preparation=None if spec.params else spec.preparation())
                self._check()
                self.phase.emit(f"Computing {spec.short_name()}")
                steps = compute_steps(loaded.system, loaded.frame, self._settings)
                while True:
                    self._check()
                    try:
                        done, total = next(steps)
                    except StopIteration as stop:
                        result = stop.value
                        break
                    self.progress.emit(int(done), int(total))
                out.append(Snapshot(spec, loaded, result))
            self.elapsed = time.perf_counter() - t0
            self.finished.emit(out)
        except Cancelled:
            self.cancelled.emit()
        except EnergyError as exc:
            self.failed.emit(str(exc), "")
        except OSError as exc:
            name = getattr(exc, "filename", None)
            self.failed.emit(f"{name + ': ' if name else ''}{exc.strerror or exc}", "")
        except Exception as exc:  # unexpected: message plus traceback under Details
            self.failed.emit(f"unexpected error: {exc}", traceback.format_exc())


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


__all__ = ["EnergyWorker", "WorkerHandle", "LoadSpec"]


class CallWorker(QObject):
    """Run one plain function in a thread (short jobs: interface energies, exports)."""

    finished = Signal(object)
    failed = Signal(str, str)

    def __init__(self, func, *args):
        super().__init__()
        self._func, self._args = func, args

    def run(self) -> None:
        try:
            self.finished.emit(self._func(*self._args))
        except Exception as exc:  # noqa: BLE001  (every failure reaches the window as a message)
            self.failed.emit(*failure_message(exc))


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
            self.phase.emit(f"Scanning {self._label}")
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
