"""The window's trajectory logic: scan in the background, frames on demand, time series.

When the open system's coordinates are a trajectory, :class:`TrajectoryController` runs the
engine's scan over every frame (a :class:`app.gui.jobs.TrajectoryWorker`, progress and stop in
the frame bar) keeping every residue pair's per-frame entries, then enables "mean over frames".
Moving the frame slider computes that frame in a worker (recent frames are cached) and hands the
snapshot to the window; the time series of the selected pair follows the selection.
"""
from __future__ import annotations

from PySide6.QtCore import QObject, Signal

from app.gui.jobs import CallWorker, TrajectoryWorker
from app.state.document import Dataset
from app.state.trajectory import (
    FrameCache,
    PairSeriesStore,
    TrajectoryView,
    frame_snapshot,
    make_request,
    mean_pairs,
    pair_series_request,
    series_from_result,
)
from energy.analysis.trajectory import COLUMNS
from energy.io.coordinates import is_trajectory_path


class TrajectoryController(QObject):
    scanFinished = Signal()           # the scan ended (complete or stopped)
    frameShown = Signal(int)          # a frame's results are on screen
    seriesChanged = Signal()          # the time series plot was updated

    def __init__(self, window, bar, series_view):
        super().__init__(window)
        self.window = window
        self.bar = bar
        self.view = series_view
        self.state: TrajectoryView | None = None
        self.base = None                  # snapshot the trajectory was opened with
        self.cache = FrameCache()
        self._scan = None                 # WorkerHandle of the scan
        self._frame_job = None            # WorkerHandle of the frame being computed
        self._pending_frame = None
        self._series_job = None
        self._restart = False
        bar.frameRequested.connect(self.request_frame)
        bar.modeChanged.connect(self._on_mode)
        bar.stopScanRequested.connect(self.stop_scan)
        series_view.frameClicked.connect(bar.set_frame)
        window.selection.pairChanged.connect(lambda _p: self.update_series())

    # -- state -------------------------------------------------------------------------------
    @property
    def active(self) -> bool:
        return self.state is not None

    @property
    def mode(self) -> str:
        return self.bar.mode if self.active else "frame"

    @property
    def scanning(self) -> bool:
        return self._scan is not None

    def handles(self):
        return [h for h in (self._scan, self._frame_job, self._series_job) if h is not None]

    # -- opening -----------------------------------------------------------------------------
    def open(self, snapshot) -> None:
        """A new system was opened: follow its trajectory, or switch off."""
        self.stop_scan()
        self.bar.stop()
        self.cache.clear()
        if snapshot is None or not is_trajectory_path(snapshot.spec.coords):
            self.state, self.base = None, None
            self.bar.set_range(0)
            self.view.set_series(None, message="Open a structure with a trajectory (DCD, XTC, …) to "
                                                "follow a residue pair over the frames.")
            return
        self.base = snapshot
        self.cache.put(snapshot.frame.index, snapshot)
        self._start_scan(snapshot)

    def _start_scan(self, snapshot) -> None:
        request = make_request(snapshot.spec, self.window.energy_settings)
        self.state = TrajectoryView(request, n_frames=0, store=PairSeriesStore(snapshot.system.n_residues))
        self.bar.set_mean_available(False, "available when every frame has been computed")
        self.bar.set_mode("frame")
        self.bar.set_status("reading the trajectory…")
        self.bar.set_scanning(True, 0, 0)
        worker = TrajectoryWorker(snapshot.loaded, request, self.state.store,
                                  label=f"{snapshot.spec.short_name()}")
        worker.progress.connect(self._on_scan_progress)
        worker.finished.connect(self._on_scan_done)
        worker.stopped.connect(self._on_scan_done)
        worker.failed.connect(self._on_scan_failed)
        self._scan = self.window.start_side(worker, self._scan_thread_done)
        self.view.set_series(None, message="Computing the frames; the time series of the selected "
                                           "pair appears when it is done.")

    def stop_scan(self) -> None:
        if self._scan is not None:
            self._scan.cancel()

    def _scan_thread_done(self) -> None:
        if self.sender() is not self._scan:
            return                        # an older scan's thread ended; the current one runs
        self._scan = None
        self.bar.set_scanning(False)
        if self._restart and self.window.snapshot is not None:
            self._restart = False
            self._start_scan(self.window.snapshot)

    def _on_scan_progress(self, done: int, total: int) -> None:
        if self.state is None:
            return
        if total and self.state.n_frames != total:
            self.state.n_frames = total
            self.bar.set_range(total, self.window.snapshot.frame.index if self.window.snapshot else 0)
        self.bar.set_scanning(True, done, total)
        self.bar.set_status(f"computing frame {done}/{total}")

    def _on_scan_done(self, result) -> None:
        st = self.state
        if st is None or result.request is not st.request:
            return                        # a scan of an earlier system or settings
        st.result = result
        if result.records:
            st.mean = mean_pairs(result.stats)
        n = len(result.records)
        self.bar.set_mean_available(n > 0, f"mean over the {n} frame(s) computed")
        note = "" if result.complete else " (stopped early)"
        kept = "" if not st.store.overflow else "; per-frame pair series not kept (too large), " \
                                                "time series computed per pair"
        self.bar.set_status(f"{n} of {len(result.requested)} frame(s) computed{note}{kept}")
        self.update_series()
        self.scanFinished.emit()

    def _on_scan_failed(self, msg, _details) -> None:
        self.bar.set_status(f"<span style='color:#b2182b'>computing the frames failed: {msg}</span>")
        self.scanFinished.emit()

    def settings_changed(self) -> None:
        """New compute settings: drop cached frames and rescan with them."""
        if not self.active or self.window.snapshot is None:
            return
        self.cache.clear()
        snap = self.window.snapshot
        self.cache.put(snap.frame.index, snap)
        if self._scan is not None:      # stop the old scan; start again when its thread ends
            self._restart = True
            self.stop_scan()
        else:
            self._start_scan(snap)

    # -- frames ------------------------------------------------------------------------------
    def request_frame(self, frame: int) -> None:
        if not self.active:
            return
        snap = self.cache.get(frame)
        if snap is not None:
            self._show(snap)
            return
        if self._frame_job is not None:
            self._pending_frame = frame
            return
        self.bar.set_status(f"computing frame {frame}…")
        worker = CallWorker(frame_snapshot, self.base, frame, self.window.energy_settings)
        worker.finished.connect(self._on_frame)
        worker.failed.connect(self._on_frame_failed)
        self._frame_job = self.window.start_side(worker, self._frame_thread_done)

    def _frame_thread_done(self) -> None:
        if self.sender() is not self._frame_job:
            return
        self._frame_job = None
        if self._pending_frame is not None:
            frame, self._pending_frame = self._pending_frame, None
            self.request_frame(frame)

    def _on_frame(self, snap) -> None:
        if snap.result.settings != self.window.energy_settings:
            return                        # computed with settings changed meanwhile
        self.cache.put(snap.frame.index, snap)
        if snap.frame.index == self.bar.frame and self._pending_frame is None:
            self._show(snap)

    def _on_frame_failed(self, msg, _details) -> None:
        self.bar.stop()
        self.bar.set_status(f"<span style='color:#b2182b'>{msg}</span>")

    def _show(self, snap) -> None:
        self.window.show_frame_snapshot(snap)
        self.bar.set_shown(snap.frame.index)
        self.view.set_current(snap.frame.index)
        if not self.scanning:
            self.bar.set_status(self._status_text(snap.frame.index))
        self.frameShown.emit(snap.frame.index)

    def _status_text(self, frame: int) -> str:
        st = self.state
        n = 0 if st is None or st.result is None else len(st.result.records)
        return f"frame {frame} on screen; {n} frame(s) computed, {len(self.cache)} cached"

    def _on_mode(self, _mode: str) -> None:
        if self.window.snapshot is not None:
            self.window.show_frame_snapshot(self.window.snapshot)

    def mean_dataset(self, snap) -> Dataset | None:
        """The mean-over-frames dataset (labels of ``snap``), or None before the scan ends."""
        st = self.state
        if st is None or st.mean is None or self.mode != "mean":
            return None
        totals = {t: float(v.mean()) for t, v in st.result.per_frame_totals().items() if t in COLUMNS}
        n = len(st.result.records)
        return Dataset.over_residue_pairs(snap, st.mean, f"{snap.spec.short_name()}, mean over {n} frames",
                                          totals, blocks=self.window.show_blocks)

    # -- time series -------------------------------------------------------------------------
    def update_series(self) -> None:
        st = self.state
        pair = self.window.selection.pair
        if st is None:
            return
        if st.result is None:
            return
        if pair is None or self.window.second is not None:
            self.view.set_series(None, message="Select a residue pair to see its energy and distance "
                                               "over the frames.")
            self.seriesChanged.emit()
            return
        ds = self.window.dataset
        residues = tuple(ds.residue_of_row(p) for p in pair) if ds is not None else pair
        if None in residues:
            self.view.set_series(None, message="A solvent block has no single time series: select a "
                                               "pair of residues (or one of a residue's waters).")
            self.seriesChanged.emit()
            return
        pair = residues
        lab = self.window.snapshot.system.residues.label
        title = f"{lab(pair[0])} – {lab(pair[1])}"
        if not st.store.overflow:
            self.view.set_series(st.store.series(*pair), title)
            self.view.set_current(self.window.snapshot.frame.index)
            self.seriesChanged.emit()
            return
        # too large to keep every pair: scan this one pair in the background
        if self._series_job is not None:
            self._series_job.cancel()
        self.view.set_series(None, message=f"computing the time series of {title}…")
        worker = TrajectoryWorker(self.base.loaded, pair_series_request(st.request, pair),
                                  label=title, frames=None)
        worker.finished.connect(self._on_pair_series)
        self._series_job = self.window.start_side(worker, self._series_thread_done)

    def _series_thread_done(self) -> None:
        if self.sender() is not self._series_job:
            return
        self._series_job = None

    def _on_pair_series(self, result) -> None:
        pair = result.request.pairs[0]
        ds, selected = self.window.dataset, self.window.selection.pair
        if ds is not None and selected is not None:
            selected = tuple(ds.residue_of_row(p) for p in selected)
        if pair != selected or self.state is None \
                or result.request.settings != self.state.request.settings:
            return
        lab = self.window.snapshot.system.residues.label
        self.view.set_series(series_from_result(result, 0), f"{lab(pair[0])} – {lab(pair[1])}")
        self.view.set_current(self.window.snapshot.frame.index)
        self.seriesChanged.emit()
