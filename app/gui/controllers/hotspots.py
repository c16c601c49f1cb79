"""The window's alanine scan: run in a worker for the structure on screen, shown in the Hot spots
panel, its hot spots marked on the map's axes."""
from __future__ import annotations

from PySide6.QtCore import QObject, Signal

from app.gui.jobs import HotspotWorker


class HotspotController(QObject):
    scanned = Signal(object)   # HotspotScan

    def __init__(self, window, view):
        super().__init__(window)
        self.window = window
        self.view = view
        self.scan = None
        self._job = None
        self._snapshot = None
        view.scanRequested.connect(self.run_scan)
        view.cancelRequested.connect(self.cancel)

    def handles(self):
        return [self._job] if self._job is not None else []

    def run_scan(self, select_a: str, select_b: str, interface: float) -> None:
        snap = self.window.snapshot
        if snap is None:
            self.view.show_message("Open a structure first.")
            return
        if not select_a or not select_b:
            self.view.show_message("Give a selection for both partners, e.g. segid A and segid B.")
            return
        if self._job is not None:
            return
        spec = snap.spec
        prep = spec.preparation() if not spec.params else None
        files = prep.forcefield_files if prep is not None else ()
        base = prep.force_field if prep is not None else ()   # the wild type's (--forcefield, --water)
        worker = HotspotWorker(snap.loaded, self.window.energy_settings, select_a, select_b, interface, files,
                               base)
        worker.progress.connect(self.view.set_progress)
        worker.finished.connect(self._on_finished)
        worker.failed.connect(self._on_failed)
        worker.cancelled.connect(lambda: self.view.show_message("Alanine scan cancelled."))
        self._snapshot = snap
        self.view.set_running(True)
        self._job = self.window.start_side(worker, self._thread_done)
        if self._job is None:
            self.view.set_running(False)

    def cancel(self) -> None:
        if self._job is not None:
            self._job.cancel()

    def _thread_done(self) -> None:
        self._job = None
        self.view.set_running(False)

    def _on_finished(self, scan) -> None:
        if self.window.snapshot is not self._snapshot:
            self.view.show_message("The structure on screen changed during the scan; scan again.")
            return
        from PySide6.QtCore import Qt

        from app.gui import screen_fit
        self.scan = scan
        self.view.set_scan(self._snapshot.system, scan)
        dock = self.window.docks.get("hotspots")
        if dock is not None and not dock.isFloating():  # table and bars need the taller bottom row
            dock.raise_()
            height = max(screen_fit.trajectory_bottom_height(self.window.size()),
                         int(self.window.height() * 0.42))
            self.window.resizeDocks([dock], [height], Qt.Orientation.Vertical)
        self.window.map.set_axis_marks(scan.residue[scan.is_hot])
        self.scanned.emit(scan)

    def _on_failed(self, msg, _details) -> None:
        self.view.show_message(f"<span style='color:#b2182b'>{msg}</span>")

    def structure_shown(self, snapshot) -> None:
        """Another snapshot on screen: keep the scan only if it is of the same system and frame."""
        shown = self._snapshot
        if self.scan is not None and (snapshot is None or shown is None or snapshot.system is not shown.system
                                      or snapshot.frame is not shown.frame):
            self.clear()
        elif self.scan is not None:
            self.window.map.set_axis_marks(self.scan.residue[self.scan.is_hot])

    def clear(self) -> None:
        """A new structure on screen: the old scan no longer applies."""
        self.scan = None
        self.view.set_scan(None, None)
        self.window.map.set_axis_marks([])
