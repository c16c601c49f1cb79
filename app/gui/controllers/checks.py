"""The window's clash check and model comparisons, run in workers and shown in their panels.

Every snapshot put on screen (a new structure, a recomputation, another trajectory frame) gets a
clash check with the panel's options; its residue pairs are ringed on the pair map.  The
electrostatics comparison runs on request (one click) for the snapshot on screen.
"""
from __future__ import annotations

from PySide6.QtCore import QObject, Signal

from app.gui.jobs import CallWorker
from energy.analysis.model_checks import clash_check, electrostatics_comparison


class ChecksController(QObject):
    clashesChecked = Signal(object)        # ClashCheck
    electrostaticsCompared = Signal(object)

    def __init__(self, window, clash_view, model_view):
        super().__init__(window)
        self.window = window
        self.clash_view = clash_view
        self.model_view = model_view
        self.check = None
        self._clash_job = None
        self._clash_pending = False
        self._elec_job = None
        self._elec_request = None        # (job id, window view id) of the newest comparison
        clash_view.optionsChanged.connect(lambda _o: self.run_clash_check())
        clash_view.overlayToggled.connect(window.map.set_show_clashes)
        model_view.compareRequested.connect(self.compare_electrostatics)

    def handles(self):
        return [h for h in (self._clash_job, self._elec_job) if h is not None]

    # -- clash check -------------------------------------------------------------------------
    def run_clash_check(self) -> None:
        snap = self.window.snapshot
        if snap is None:
            return
        if self._clash_job is not None:
            self._clash_pending = True
            return
        worker = CallWorker(clash_check, snap, self.clash_view.options())
        worker.finished.connect(self._on_clashes)
        worker.failed.connect(self._on_clash_failed)
        self._clash_snapshot = snap
        self._clash_job = self.window.start_side(worker, self._clash_thread_done)

    def _clash_thread_done(self) -> None:
        self._clash_job = None
        if self._clash_pending:
            self._clash_pending = False
            self.run_clash_check()

    def _on_clashes(self, check) -> None:
        snap = self.window.snapshot
        if snap is not self._clash_snapshot:
            self._clash_pending = True     # the screen moved on: check the new snapshot
            return
        self.check = check
        self.clash_view.set_check(snap.system, check)
        self.model_view.set_clashes(snap.system, check)
        self.window.map.set_clashes([] if self.window.second is not None else check.residue_pairs)
        self.clashesChecked.emit(check)

    def _on_clash_failed(self, msg, _details) -> None:
        self.clash_view.show_message(f"<span style='color:#b2182b'>{msg}</span>")

    # -- electrostatics models -----------------------------------------------------------------
    def compare_electrostatics(self) -> None:
        snap = self.window.snapshot
        if snap is None or self._elec_job is not None:
            return
        self.model_view.set_busy(True)
        worker = CallWorker(electrostatics_comparison, snap, self.window.energy_settings)
        self._elec_request = (worker.job_id, self.window.view_id)
        worker.result.connect(self._on_elec)
        worker.jobFailed.connect(self._on_elec_failed)
        self._elec_job = self.window.start_side(worker, self._elec_thread_done)

    def _elec_thread_done(self) -> None:
        self._elec_job = None
        self.model_view.compare_button.setEnabled(True)

    def _elec_current(self, job_id: int) -> bool:
        return self._elec_request == (job_id, self.window.view_id)

    def _on_elec(self, job_id, comparison) -> None:
        if not self._elec_current(job_id):     # computed for a structure no longer on screen
            self.model_view.show_message("The structure on screen changed during the comparison: "
                                         "press \"Compare electrostatics models\" again.")
            return
        self.model_view.set_comparison(comparison)
        self.electrostaticsCompared.emit(comparison)

    def _on_elec_failed(self, job_id, msg, _details) -> None:
        if not self._elec_current(job_id):
            return
        self.model_view.show_message(f"<span style='color:#b2182b'>{msg}</span>")
