"""Tessera's main window: the pair map in the centre, docks around it, one shared selection."""
from __future__ import annotations

import os
from pathlib import Path

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (
    QDockWidget,
    QFileDialog,
    QFrame,
    QLabel,
    QMainWindow,
    QProgressBar,
    QPushButton,
    QToolBar,
)

import resources
from app.gui import exports, screen_fit
from app.gui.controllers.checks import ChecksController
from app.gui.controllers.hotspots import HotspotController
from app.gui.controllers.trajectory import TrajectoryController
from app.gui.dialogs.errors import show_error
from app.gui.jobs import CallWorker, JobQueue, WorkerHandle
from app.gui.models.atom_table import pair_contributions
from app.gui.selection import SelectionModel
from app.gui.settings import AppSettings
from app.gui.views.atom_panel import AtomContributionsView
from app.gui.views.clash_panel import ClashCheckView
from app.gui.views.frame_bar import FrameBar
from app.gui.views.hotspot_panel import HotspotView
from app.gui.views.model_panel import ModelComparisonView
from app.gui.views.pair_ledger import PairLedgerView
from app.gui.views.pair_map import PairMapView
from app.gui.views.profile_plot import DistanceProfileView
from app.gui.views.roster import ResidueRosterView, describe_interaction
from app.gui.views.settings_panel import ComputeSettingsPanel
from app.gui.views.term_bars import TermBarsView
from app.gui.views.time_series import TimeSeriesView
from app.state.defaults import settings_for_input
from app.state.document import SOLVENT_CHAIN, Dataset, LoadSpec
from energy import results
from energy.analysis.compare import compare_results
from energy.decomposition.atom_pairs import selection_interaction
from energy.errors import EnergyError
from energy.model.settings import EnergySettings
from energy.terms.registry import map_quantities
from energy.units import ENERGY_UNITS


def _group_energy(snapshots, a: str, b: str):
    """The group interaction (A vs B) of each snapshot (run in a background job)."""
    return [selection_interaction(s.system, s.frame, s.result.settings, a, b) for s in snapshots]


#: Suffixes of result files (opened without recomputation; docs/result-file.md).
RESULT_SUFFIXES = (".h5", ".hdf5")


def status_separator() -> QFrame:
    """A thin vertical line between two items of the status bar."""
    line = QFrame()
    line.setObjectName("statusSeparator")
    line.setFrameShape(QFrame.Shape.VLine)
    line.setFrameShadow(QFrame.Shadow.Sunken)
    return line


class MainWindow(QMainWindow):
    datasetChanged = Signal()
    computeFinished = Signal()
    computeFailed = Signal(str)
    busyChanged = Signal(bool)
    groupsComputed = Signal(object)

    def __init__(self, app_settings: AppSettings | None = None):
        super().__init__()
        self.setObjectName("TesseraMain")
        self.setWindowTitle("Tessera")
        self.setAcceptDrops(True)
        self.app_settings = app_settings or AppSettings()
        self.energy_settings = self.app_settings.energy_settings()
        self.unit = self.app_settings.unit
        self.selection = SelectionModel(self)
        self.snapshot = None      # the (first) structure
        self.second = None        # compare mode: the second structure
        self.dataset = None
        self.view_id = 0          # counts the datasets shown; a side result of an older one is stale
        self._groups_job = None   # (job id, view id) of the newest group-energy job
        self.last_compute_s = None
        self.comparison = None    # compare mode: energy.analysis.compare.Comparison of the two
        self.stored = None        # a result file on screen (energy.output.result_file.StoredResult)
        self.show_blocks = True   # water and ions as one map row each ("Water (4,611)")
        self._comparison_pair = None
        #: False until the user sets compute settings (now or in an earlier session): until then
        #: each opened structure gets settings that fit it (app/state/defaults.py).
        self.settings_chosen = self.app_settings.has_energy_settings()
        self._settings_fitted = False   # energy_settings were fitted to the last input
        self.jobs = JobQueue(lambda: self.energy_settings, self._recompute_jobs, self,
                             settings_for_input=self._settings_for_input)
        self.jobs.progress.connect(self._on_progress)
        self.jobs.finished.connect(self._on_finished)
        self.jobs.failed.connect(self._on_failed)
        self.jobs.busyChanged.connect(self._on_busy)

        self.map = PairMapView(self.selection)
        self.setCentralWidget(self.map)
        self.ledger = PairLedgerView(self.selection)
        self.atoms = AtomContributionsView(self.selection)
        self.atoms.memberActivated.connect(self.show_solvent_member)
        self.profile = DistanceProfileView(self.selection)
        self.bars = TermBarsView()
        self.roster = ResidueRosterView(self.selection)
        self.settings_panel = ComputeSettingsPanel(self.energy_settings, self.unit)
        self.clash_panel = ClashCheckView(self.selection)
        self.model_panel = ModelComparisonView(self.selection)
        self.hotspot_panel = HotspotView(self.selection)
        self.time_series = TimeSeriesView()
        self.frame_bar = FrameBar()
        self.docks = {}
        for key, title, widget, area in (
                ("roster", "Residue roster", self.roster, Qt.DockWidgetArea.LeftDockWidgetArea),
                ("settings", "Compute settings", self.settings_panel, Qt.DockWidgetArea.LeftDockWidgetArea),
                ("atoms", "Atom contributions", self.atoms, Qt.DockWidgetArea.RightDockWidgetArea),
                ("profile", "Distance profile", self.profile, Qt.DockWidgetArea.RightDockWidgetArea),
                ("ledger", "Pair ledger", self.ledger, Qt.DockWidgetArea.BottomDockWidgetArea),
                ("bars", "Term bars", self.bars, Qt.DockWidgetArea.BottomDockWidgetArea),
                ("clashes", "Clash check", self.clash_panel, Qt.DockWidgetArea.LeftDockWidgetArea),
                ("models", "Model comparison", self.model_panel, Qt.DockWidgetArea.BottomDockWidgetArea),
                ("series", "Pair over time", self.time_series, Qt.DockWidgetArea.BottomDockWidgetArea),
                ("hotspots", "Hot spots", self.hotspot_panel, Qt.DockWidgetArea.BottomDockWidgetArea)):
            dock = QDockWidget(title, self)
            dock.setObjectName(f"dock_{key}")
            dock.setWidget(screen_fit.scrollable(widget) if key == "settings" else widget)
            self.addDockWidget(area, dock)
            self.docks[key] = dock
        self.trajectory = TrajectoryController(self, self.frame_bar, self.time_series)
        self.checks = ChecksController(self, self.clash_panel, self.model_panel)
        self.hotspots = HotspotController(self, self.hotspot_panel)

        self._build_status()
        self.jobs.phase.connect(self.phase_label.setText)
        self._build_menus()
        self.frame_toolbar = QToolBar("Frames"); self.frame_toolbar.setObjectName("toolbar_frames")
        self.frame_toolbar.setMovable(False)
        self.frame_toolbar.addWidget(self.frame_bar)
        self.addToolBarBreak()
        self.addToolBar(self.frame_toolbar)
        self.frame_toolbar.setVisible(False)
        self.selection.pairChanged.connect(self._on_pair)
        self.roster.groupsRequested.connect(self.compute_groups)
        self.settings_panel.settingsChanged.connect(self.set_energy_settings)
        self.settings_panel.unitChanged.connect(self.set_unit)
        self.map.set_clip(self.app_settings.clip_percentile)
        self.map.clip_box.currentIndexChanged.connect(
            lambda: setattr(self.app_settings, "clip_percentile", self.map.clip))
        self.set_unit(self.unit)
        self._restore_layout()
        self._update_actions()

    # -- construction ----------------------------------------------------------------------
    def _build_status(self) -> None:
        sb = self.statusBar()
        self.size_label = QLabel("No system loaded"); self.size_label.setObjectName("statusSize")
        self.time_label = QLabel(""); self.time_label.setObjectName("statusTime")
        self.phase_label = QLabel("")
        self.progress = QProgressBar(); self.progress.setObjectName("progress")
        self.progress.setMaximumWidth(220); self.progress.setTextVisible(True)
        self.cancel_button = QPushButton("Cancel"); self.cancel_button.setObjectName("cancel")
        self.cancel_button.clicked.connect(self.cancel)
        for w in (self.phase_label, self.progress, self.cancel_button):
            w.setVisible(False)
        sb.addWidget(self.size_label)
        self.status_separator = status_separator()
        self.status_separator.setVisible(False)      # shown with the computation time
        sb.addWidget(self.status_separator)
        sb.addWidget(self.time_label)
        sb.addPermanentWidget(self.phase_label)
        sb.addPermanentWidget(self.progress)
        sb.addPermanentWidget(self.cancel_button)

    def _action(self, text, slot, shortcut=None, tip=""):
        act = QAction(text, self)
        if shortcut:
            act.setShortcut(QKeySequence(shortcut))
        act.setStatusTip(tip)
        act.triggered.connect(slot)
        return act

    def _build_menus(self) -> None:
        mb = self.menuBar()
        f = mb.addMenu("&File")
        self.act_open = self._action("&Open structure…", self.open_dialog, QKeySequence.StandardKey.Open,
                                     "Open a PDB/mmCIF, or a PSF with parameters and coordinates")
        self.act_compare = self._action("Compare &with…", lambda: self.open_dialog(compare=True),
                                        "Ctrl+Shift+O", "Open a second structure of the same system")
        self.act_single = self._action("Back to single structure", self.leave_compare, "Ctrl+Shift+W")
        self.act_open_result = self._action("Open &result file…", self.open_result_dialog, "Ctrl+Alt+O",
                                            "Open a saved result (.h5): map and tables without recomputing")
        self.act_save_result = self._action("&Save result file…", self.save_result_dialog,
                                            QKeySequence.StandardKey.Save,
                                            "Save what is on screen as a result file (.h5)")
        self.recent_menu = f.addMenu("Recent")
        f.addAction(self.act_open); f.addMenu(self.recent_menu)
        f.addAction(self.act_compare); f.addAction(self.act_single)
        f.addSeparator(); f.addAction(self.act_open_result); f.addAction(self.act_save_result)
        f.insertAction(self.act_compare, f.addSeparator())
        ex = f.addMenu("&Export")
        self.export_actions = [
            self._action("Map image (PNG or SVG)…", lambda: self._export_dialog("map"), "Ctrl+E",
                         "Export the map as an image (PNG or SVG)"),
            self._action("Pair ledger (CSV)…", lambda: self._export_dialog("pairs")),
            self._action("Full matrix (CSV)…", lambda: self._export_dialog("matrix")),
            self._action("Report (PDF)…", lambda: self._export_dialog("report"), "Ctrl+Shift+E"),
            self._action("Structure with residue energies as B-factors (PDB)…",
                         lambda: self._export_dialog("bfactor"))]
        for a in self.export_actions:
            ex.addAction(a)
        f.addSeparator()
        f.addAction(self._action("&Quit", self.close, QKeySequence.StandardKey.Quit))
        v = mb.addMenu("&View")
        for k, (q, text) in enumerate(list(map_quantities().items())[:5], start=1):
            v.addAction(self._action(f"Show {text}", lambda _=False, q=q: self.map.set_quantity(q), f"Ctrl+{k}"))
        v.addSeparator()
        v.addAction(self._action("Fit map to window", self.fit_map, "Ctrl+0"))
        self.act_blocks = self._action("Solvent as &blocks", self.set_show_blocks, "Ctrl+B",
                                       "Water and ions as one row each; off: every water and ion its own row")
        self.act_blocks.setCheckable(True)
        self.act_blocks.setChecked(self.show_blocks)
        v.addAction(self.act_blocks)
        v.addSeparator()
        for dock in self.docks.values():
            v.addAction(dock.toggleViewAction())
        c = mb.addMenu("&Compute")
        self.act_recompute = self._action("&Recompute", self.recompute, "F5")
        self.act_cancel = self._action("&Cancel computation", self.cancel, "Esc")
        self.act_groups = self._action("Group interaction of A and B", self.roster._request, "Ctrl+I")
        for a in (self.act_recompute, self.act_cancel, self.act_groups):
            c.addAction(a)
        tb = self.addToolBar("Main"); tb.setObjectName("toolbar_main")
        tb.setMovable(False)
        # the toolbar shows an action's icon text: whole phrases, not a menu entry cut short
        self.act_open.setIconText("Open structure")
        self.act_compare.setIconText("Compare with a second structure")
        self.export_actions[0].setIconText("Export map image")
        for a in (self.act_open, self.act_compare, self.act_recompute, self.act_cancel, self.export_actions[0]):
            tb.addAction(a)
        self._fill_recent()

    def _fill_recent(self) -> None:
        self.recent_menu.clear()
        items = self.app_settings.recent()
        for d in items:
            spec = LoadSpec.from_dict(d)
            self.recent_menu.addAction(self._action(spec.short_name(), lambda _=False, s=spec: self.open_spec(s),
                                                    tip=spec.structure))
        self.recent_menu.setEnabled(bool(items))

    def _restore_layout(self) -> None:
        """Size and place the window on its screen and arrange the docks (app.gui.screen_fit)."""
        screen_fit.set_dock_minimums(self.docks)
        self.arrangement = screen_fit.place_window(self, self.docks, self.app_settings.store)
        self._screen_guard = screen_fit.ScreenGuard(self)

    def closeEvent(self, ev) -> None:
        screen_fit.save_window(self, self.app_settings.store)
        self.frame_bar.stop()
        self.jobs.shutdown()
        super().closeEvent(ev)

    # -- opening ---------------------------------------------------------------------------
    def open_default(self) -> None:
        demo = resources.demo_structure()
        if demo is not None:
            self.open_spec(LoadSpec(str(demo)))
        else:
            self.size_label.setText("No system loaded: File > Open (Ctrl+O) or drop files here")

    def open_files(self, files) -> None:
        files = [os.fspath(f) for f in files]
        if len(files) == 1 and files[0].lower().endswith(RESULT_SUFFIXES):
            self.open_result(files[0])
            return
        try:
            spec = LoadSpec.from_files(files)
        except EnergyError as exc:  # one line naming the files and what is missing
            show_error(self, "Could not open these files", str(exc), "")
            return
        self.open_spec(spec)

    # -- result files (docs/result-file.md) -------------------------------------------------
    def open_result(self, path: str) -> None:
        """Show a result file: map, ledger and term bars with no recomputation (read in a
        background job; a bad file gives one error dialog and keeps what is on screen)."""
        self._show_stored_job(lambda: _stored_dataset(results.load(path), self.show_blocks))

    def _show_stored_job(self, make) -> None:
        """Read and arrange a result file in the background (``make()`` -> (stored, dataset));
        a file that cannot be shown gives one error and keeps what is on screen."""
        worker = CallWorker(make)
        worker.finished.connect(self._on_stored)        # bound methods: queued into the GUI thread
        worker.failed.connect(self._on_stored_failed)
        self.start_side(worker)

    def _on_stored_failed(self, msg: str, details: str) -> None:
        show_error(self, "Could not open the result file", msg, details)

    def _on_stored(self, stored_and_dataset) -> None:
        stored, ds = stored_and_dataset
        self.snapshot, self.second, self.comparison, self._comparison_pair = None, None, None, None
        self.stored = stored
        self.trajectory.open(None)
        self.frame_toolbar.setVisible(False)
        full = ds.full_pairs if ds.full_pairs is not None else ds.pairs
        size = f"result file: {len(ds.labels) if ds.blocks is None else len(ds.blocks.residue_to_row):,} residues, " \
               f"{len(full):,} residue pairs ({stored.kind})"
        if ds.blocks is not None:
            size += f" | solvent as blocks: {', '.join(ds.labels[ds.blocks.n_solute:])}"
        changed = stored.changed_inputs()
        if changed:
            size += f" | {len(changed)} input file(s) missing or changed"
            self.statusBar().showMessage("; ".join(changed)[:400], 20000)
        self.last_compute_s = None
        self._display(ds, size)
        self.computeFinished.emit()

    def save_result_dialog(self) -> None:
        if self.snapshot is None:
            return
        stem = Path(self.snapshot.spec.structure).stem
        folder = self.app_settings.last_dir or os.getcwd()
        path, _ = QFileDialog.getSaveFileName(self, "Save result", os.path.join(folder, f"{stem}_result.h5"),
                                              "Tessera result (*.h5)")
        if path:
            self.save_result(path)

    def save_result(self, path: str):
        """Write what is on screen (one structure, or the comparison) as a result file in a
        background job; returns its handle (None if nothing to save)."""
        if self.snapshot is None:
            return None
        comparison = self._current_comparison() if self.second is not None else None
        worker = CallWorker(_save_result, path, self.snapshot, self.second, comparison)
        worker.finished.connect(self._on_result_saved)   # bound methods: queued into the GUI thread
        worker.failed.connect(self._on_result_save_failed)
        return self.start_side(worker)

    def _on_result_saved(self, path: str) -> None:
        self.statusBar().showMessage(f"Result saved to {path}", 8000)

    def _on_result_save_failed(self, msg: str, details: str) -> None:
        show_error(self, "Could not save the result", msg, details)

    def open_spec(self, spec: LoadSpec, compare: bool = False) -> None:
        if compare:
            self.jobs.submit([(spec, None)], "compare", compare_with=self.snapshot)
        else:
            self.jobs.submit([(spec, None)], "open")

    def open_dialog(self, compare: bool = False) -> None:
        from app.gui.dialogs.open_dialog import OpenStructureDialog
        if compare and self.snapshot is None:
            return
        dlg = OpenStructureDialog(self, self.app_settings.last_dir, compare=compare)
        if dlg.exec():
            spec = dlg.spec()
            self.app_settings.last_dir = os.path.dirname(os.path.abspath(spec.structure))
            self.open_spec(spec, compare=compare)

    def open_result_dialog(self) -> None:
        folder = self.app_settings.last_dir or os.getcwd()
        path, _ = QFileDialog.getOpenFileName(self, "Open result file", folder, "Tessera result (*.h5 *.hdf5)")
        if path:
            self.open_result(path)

    def dragEnterEvent(self, ev) -> None:
        if ev.mimeData().hasUrls() and all(u.isLocalFile() for u in ev.mimeData().urls()):
            ev.acceptProposedAction()

    def dropEvent(self, ev) -> None:
        files = [u.toLocalFile() for u in ev.mimeData().urls()]
        if files:
            self.open_files(files)
            ev.acceptProposedAction()

    def leave_compare(self) -> None:
        if self.second is not None:
            self.second = None
            self._show()

    # -- background work (app.gui.jobs.JobQueue) -------------------------------------------
    @property
    def busy(self) -> bool:
        return self.jobs.busy

    def _on_busy(self, busy: bool) -> None:
        self.phase_label.setText("")
        for w in (self.phase_label, self.progress, self.cancel_button):
            w.setVisible(busy)
        if busy:
            self.progress.setRange(0, 0)
        self._update_actions()
        self.busyChanged.emit(busy)

    def _on_progress(self, done, total) -> None:
        if total <= 0:
            self.progress.setRange(0, 0)
        else:
            self.progress.setRange(0, total)
            self.progress.setValue(done)

    def cancel(self) -> None:
        if self.jobs.cancel():
            self.statusBar().showMessage("Computation cancelled; the previous result stays on screen", 5000)

    def _on_finished(self, kind, job, elapsed) -> None:
        snaps = job.snapshots
        self.last_compute_s = elapsed
        if job.comparison is not None:
            self.comparison, self._comparison_pair = job.comparison, job.pair
        if kind == "open":
            self.snapshot, self.second = snaps[0], None
            used = snaps[0].result.settings
            if not self.settings_chosen and used != self.energy_settings:
                self.energy_settings = used          # fitted to this input; not stored as a choice
                self._settings_fitted = bool(job.notes)
                self.settings_panel.set_settings(used)
            for note in job.notes:
                self.statusBar().showMessage(note, 30000)
            self.app_settings.add_recent(snaps[0].spec.as_dict())
            self._fill_recent()
            self.selection.set_pair(None)
            self.trajectory.open(snaps[0])
            self.frame_toolbar.setVisible(self.trajectory.active)
            if self.trajectory.active:
                self.docks["series"].raise_()
                self.resizeDocks([self.docks["ledger"]], [screen_fit.trajectory_bottom_height(self.size())],
                                 Qt.Orientation.Vertical)
        elif kind == "compare":
            self.second = snaps[0]
        else:  # recompute
            self.snapshot = snaps[0]
            self.second = snaps[1] if len(snaps) > 1 else None
        self._show()
        if kind == "recompute":
            self.trajectory.settings_changed()
        self.computeFinished.emit()

    def show_frame_snapshot(self, snap) -> None:
        """Put another frame of the open trajectory on screen (zoom, sort and selection kept)."""
        self.snapshot = snap
        self._show(keep_view=True)

    def _on_failed(self, kind, msg, details) -> None:
        what = {"open": "Could not open the structure", "compare": "Could not open the second structure",
                "recompute": "Could not compute"}[kind]
        self.computeFailed.emit(msg)
        show_error(self, what, msg, details)

    def _recompute_jobs(self):
        return [(s.spec, s.loaded) for s in (self.snapshot, self.second) if s is not None]

    def recompute(self) -> None:
        if self.snapshot is None and self.stored is not None:
            self._recompute_stored()
            return
        jobs = self._recompute_jobs()
        if jobs:
            self.jobs.submit(jobs, "recompute")

    def _recompute_stored(self) -> None:
        """Recompute a result file from its recorded inputs (they must all be there; a changed
        one is named, and used as it is now)."""
        stored = self.stored
        if stored.kind != "scan":
            show_error(self, "Cannot recompute this result file",
                       f"a {stored.kind} result is recomputed from its structure: open it again", "")
            return
        paths = {}
        for rec in stored.inputs:            # at the recorded path, or where the user says it is now
            found = rec.path if os.path.isfile(rec.path) else self.ask_for_input(rec)
            if not found:
                show_error(self, "Cannot recompute this result file",
                           f"the input file {rec.path} is missing: open the structure again", "")
                return
            paths[id(rec)] = found
        changed = [msg for rec in stored.inputs if (msg := rec.changed(paths[id(rec)])) is not None]
        if changed:
            self.statusBar().showMessage("Recomputing with the files as they are now: " + "; ".join(changed), 20000)
        role = {r.role: paths[id(r)] for r in stored.inputs}
        params = tuple(paths[id(r)] for r in stored.inputs if r.role == "parameters")
        self.open_spec(LoadSpec(role["structure"], role.get("coordinates"), params,
                                frame=int(stored.attrs.get("frame", 0))))

    def _settings_for_input(self, loaded, settings):
        """(settings, note) to compute a newly opened system with; runs in the worker thread."""
        if self.settings_chosen:
            return settings, ""
        base = EnergySettings() if self._settings_fitted else settings   # not the last input's fit
        return settings_for_input(loaded.system.n_atoms, loaded.frame.box, base)

    def ask_for_input(self, record) -> str:
        """Ask where a result's moved input file is now ("" when the user cancels)."""
        name = os.path.basename(record.path)
        folder = os.path.dirname(self.stored.path) if self.stored is not None else ""
        path, _ = QFileDialog.getOpenFileName(
            self, f"Where is {name} now? (the {record.role} of this result, moved since)",
            os.path.join(folder, name), f"{name} (*{os.path.splitext(name)[1]});;Any file (*)")
        return path

    def set_energy_settings(self, settings) -> None:
        self.settings_chosen = True
        if settings == self.energy_settings:
            return
        self.energy_settings = settings
        self.app_settings.set_energy_settings(settings)
        self.settings_panel.set_settings(settings)
        self.recompute()

    def set_unit(self, unit: str) -> None:
        self.unit = unit
        self.app_settings.unit = unit
        factor = ENERGY_UNITS[unit]
        for view in (self.map, self.profile, self.bars, self.ledger, self.atoms, self.roster,
                     self.clash_panel, self.model_panel, self.time_series, self.hotspot_panel):
            view.set_unit(factor, unit)
        self._update_groups_label()

    # -- showing ----------------------------------------------------------------------------
    def _show(self, keep_view: bool = False) -> None:
        snap = self.snapshot
        if self.second is not None:
            ds = Dataset.from_comparison(self._current_comparison(), snap, self.second)
        else:
            ds = self.trajectory.mean_dataset(snap) or Dataset.from_snapshot(snap, blocks=self.show_blocks)
        self.stored = None
        s = snap.system
        size = f"{s.n_atoms:,} atoms, {s.n_residues:,} residues, {len(set(ds.chains) - {SOLVENT_CHAIN})} chain(s)"
        if ds.blocks is not None:
            size += f" | solvent as blocks: {', '.join(ds.labels[ds.blocks.n_solute:])} (View > Solvent as blocks)"
        if ds.is_difference:
            c = ds.comparison
            size += (f" | compare: {len(c.match)} matched, {len(c.mutated_labels)} mutated, "
                     f"{len(c.unmatched_first_labels)} + {len(c.unmatched_second_labels)} unmatched")
            if c.unmatched_first_labels or c.unmatched_second_labels:
                un = c.unmatched_first_labels[:6] + c.unmatched_second_labels[:6]
                self.statusBar().showMessage("Unmatched residues: " + ", ".join(un), 15000)
        unlisted = getattr(snap.result, "unlisted", None)
        if unlisted and not ds.is_difference:
            size += (f" | {unlisted['n_pairs']:,} residue pairs under {unlisted['below']:g} kcal/mol "
                     "not listed (no cutoff; totals include them)")
        cell_note = getattr(snap.result, "cell_note", "")
        if cell_note and not ds.is_difference:
            size += f" | {cell_note}"
        prep = getattr(snap.loaded, "preparation", None)
        if prep is not None and not ds.is_difference and prep.summary_lines():
            size += f" | prepared: {prep.short_text()}"
        self._display(ds, size, keep_view)

    def _display(self, ds, size: str, keep_view: bool = False) -> None:
        """Put dataset ``ds`` on every view (selection kept where it still exists)."""
        keep = self.selection.pair
        keep_atoms = self.selection.atom_pair
        self.selection.set_pair(None)
        self.dataset = ds
        self.selection.set_row_of_residue(*((ds.row_of_residue, ds.residue_of_row) if ds.blocks is not None
                                            else (None, None)))
        self.view_id += 1               # results of side jobs started before this are stale
        self.map.set_dataset(ds, keep_view=keep_view)
        self.ledger.set_dataset(ds, keep_sort=keep_view)
        self.roster.set_dataset(ds)
        self.bars.set_values("system", ds.totals, "second minus first" if ds.is_difference else "")
        self.bars.set_values("groups", None)
        self.size_label.setText(size)
        self.time_label.setText(f"last computation {self.last_compute_s:.2f} s"
                                if self.last_compute_s is not None else "")
        self.status_separator.setVisible(bool(self.time_label.text()))
        self.setWindowTitle(f"Tessera — {ds.title}")
        chains = sorted(set(ds.chains) - {SOLVENT_CHAIN})
        if len(chains) >= 2 and not self.roster.group_a.text() and not self.roster.group_b.text():
            self.roster.set_groups_text(f"segid {chains[0]}", f"segid {chains[1]}")
        if keep is not None and max(keep) < ds.n:
            self.selection.set_pair(keep)
            if keep_atoms is not None and keep_view:
                self.selection.set_atom_pair(keep_atoms)
        self.map.set_clashes([])
        self.checks.run_clash_check()
        self.hotspots.structure_shown(self.snapshot)
        self._group_results = None
        self.roster.show_group_result("—")
        if all(self.selection.groups) and self.snapshot is not None:
            self.compute_groups(*self.selection.groups)
        self._update_actions()
        self.datasetChanged.emit()

    def _current_comparison(self):
        """The comparison of the snapshot and the second structure: the one the job computed in
        the background, or (when another frame of a trajectory replaced the snapshot since)
        computed now."""
        pair = self._comparison_pair
        if self.comparison is None or pair is None or pair[0] is not self.snapshot or pair[1] is not self.second:
            self.comparison = compare_results(self.snapshot.system, self.snapshot.result,
                                              self.second.system, self.second.result)
            self._comparison_pair = (self.snapshot, self.second)
        return self.comparison

    def _update_actions(self) -> None:
        have = self.dataset is not None
        for a in self.export_actions:
            a.setEnabled(have)
        self.act_compare.setEnabled(self.snapshot is not None and not self.busy)
        self.act_single.setEnabled(self.second is not None)
        self.act_save_result.setEnabled(self.snapshot is not None)
        self.act_recompute.setEnabled(have and not self.busy)
        self.act_cancel.setEnabled(self.busy)

    def fit_map(self) -> None:
        n = self.dataset.n if self.dataset else 0
        if n:
            self.map.plot.setRange(xRange=(-0.5, n - 0.5), yRange=(-0.5, n - 0.5), padding=0)

    def _pair_snapshot(self, pair):
        """The snapshot and residue pair whose atoms are shown (compare: the second structure)."""
        ds = self.dataset
        if ds.is_difference:
            m = ds.comparison.match
            return self.second, (int(m.second[pair[0]]), int(m.second[pair[1]]))
        return self.snapshot, (ds.residue_of_row(pair[0]), ds.residue_of_row(pair[1]))

    def _on_pair(self, pair) -> None:
        pair = pair or None
        if pair is None or self.dataset is None:
            self.atoms.show_contributions(None, None, "Select a residue pair in the map or the ledger.")
            self.profile.show_pair(None, None, None)
            self.bars.set_values("pair", None)
            return
        ds = self.dataset
        contacts = ds.solvent_contacts(pair)
        if contacts is not None or any(ds.is_block(p) for p in pair):
            self._show_block_pair(ds, pair, contacts)
            return
        if self.snapshot is None:  # a result file: the table is there, the atoms are not
            self.atoms.show_contributions(None, None, "Atom pairs need the structure: Compute > Recompute "
                                          "opens the result's input files, or File > Open structure.")
            self.profile.show_pair(None, None, None)
            self._show_pair_bars(ds, pair)
            return
        snap, (i, j) = self._pair_snapshot(pair)
        contrib = pair_contributions(snap, i, j)
        lab = snap.system.residues.label
        where = " (second structure)" if ds.is_difference else ""
        if self.trajectory.mode == "mean" and not ds.is_difference:
            where = f" (atoms of frame {snap.frame.index}; map and bars: mean over frames)"
        caption = (f"<b>{lab(i)} – {lab(j)}</b>{where}: {contrib.n_nonbonded} atom pairs, "
                   f"{len(contrib.bonded)} bonded terms" if i != j else
                   f"<b>Within {lab(i)}</b>{where}: {contrib.n_nonbonded} atom pairs, "
                   f"{len(contrib.bonded)} bonded terms")
        self.atoms.show_contributions(snap.system, contrib, caption)
        self.profile.show_pair(snap.system, snap.result.settings, contrib)
        self._show_pair_bars(ds, pair)

    def _show_block_pair(self, ds, pair, contacts) -> None:
        """A solute residue with a solvent block: the block's members it interacts with (double
        click one for its atom pairs); a block with itself or another block: its sums only."""
        self.profile.show_pair(None, None, None)
        self._show_pair_bars(ds, pair)
        if contacts is None:
            a, b = (ds.labels[p] for p in pair)
            what = f"within {a}" if pair[0] == pair[1] else f"{a} – {b}"
            self.atoms.show_contributions(None, None, f"<b>{what}</b>: solvent-solvent energy, summed over the "
                                          "block (the bars). Turn off View > Solvent as blocks to list "
                                          "every water and ion.")
            return
        residues = ds.snapshot.system.residues if ds.snapshot is not None else ds.stored.residues
        block = next(ds.labels[p] for p in pair if ds.is_block(p))
        more = ("Double-click one for its atom pairs." if ds.snapshot is not None else
                "Atom pairs need the structure (Compute > Recompute).")
        self.atoms.show_solvent_contacts(residues, contacts,
                                         f"<b>{residues.label(contacts.residue)} – {block}</b>: "
                                         f"{len(contacts):,} of its residues interact, strongest first. {more}")

    def show_solvent_member(self, residue: int, member: int) -> None:
        """Atom pairs of a solute residue with one water or ion of a block (from the contacts
        list; the map keeps the block selected)."""
        snap = self.snapshot
        if snap is None:
            return
        contrib = pair_contributions(snap, residue, member)
        lab = snap.system.residues.label
        self.atoms.show_contributions(snap.system, contrib,
                                      f"<b>{lab(residue)} – {lab(member)}</b> (one residue of the block): "
                                      f"{contrib.n_nonbonded} atom pairs, {len(contrib.bonded)} bonded terms",
                                      from_solvent_list=True)
        self.profile.show_pair(snap.system, snap.result.settings, contrib)

    def set_show_blocks(self, on: bool) -> None:
        """Show water and ions as blocks (``on``) or every solvent residue as its own row."""
        self.show_blocks = bool(on)
        self.act_blocks.setChecked(self.show_blocks)
        if self.snapshot is not None and self.stored is None:
            self._show(keep_view=False)
        elif self.stored is not None:
            stored, blocks = self.stored, self.show_blocks
            self._show_stored_job(lambda: _stored_dataset(stored, blocks))

    def _show_pair_bars(self, ds, pair) -> None:
        k = ds.pairs.lookup(*pair)
        values = {q: (float(ds.pairs.values[q][k]) if k is not None else 0.0) for q in ds.pairs.values}
        values["total"] = sum(values.values())
        self.bars.set_values("pair", values, ("change: " if ds.is_difference else "")
                             + f"{ds.labels[pair[0]]} – {ds.labels[pair[1]]}")

    # -- groups -----------------------------------------------------------------------------
    def compute_groups(self, a: str, b: str) -> None:
        if self.snapshot is None or not a or not b:
            self.roster.show_group_result("Give a selection for both groups, e.g. segid A and segid B.")
            return
        self.selection.set_groups(a, b)
        snaps = [s for s in (self.snapshot, self.second) if s is not None]
        worker = CallWorker(_group_energy, snaps, a, b)
        # the result counts only while this job is the newest group request and the structure
        # it was computed for is still on screen (self.view_id changes with every dataset shown)
        self._groups_job = (worker.job_id, self.view_id)
        worker.result.connect(self._on_groups)
        worker.jobFailed.connect(self._on_groups_failed)
        if self.start_side(worker) is not None:
            self.roster.show_group_result("computing…")

    def _groups_current(self, job_id: int) -> bool:
        """Whether group job ``job_id`` is the newest one and its structure still on screen."""
        return self._groups_job == (job_id, self.view_id)

    def _on_groups_failed(self, job_id, msg, _details) -> None:
        if not self._groups_current(job_id):
            return                      # a stale job's failure: the screen has moved on
        self.roster.show_group_result(f"<span style='color:#b2182b'>{msg}</span>")

    def start_side(self, worker, on_done=None) -> WorkerHandle | None:
        """Run a side worker (clash check, frame, scan, ...) in its own thread; ``on_done`` after
        its thread has stopped.  The window waits for every side job when it closes, and starts
        none after that (returns None)."""
        return self.jobs.start_side(worker, on_done)

    def _on_groups(self, job_id, results) -> None:
        if not self._groups_current(job_id):
            return                      # stale: computed for what was on screen before
        self._group_results = results
        self._update_groups_label()
        r = results[-1] if len(results) == 1 else {
            k: results[1][k] - results[0][k] for k in ("coulomb", "lj", "total")}
        self.bars.set_values("groups", {"coulomb": r["coulomb"], "lj": r["lj"], "total": r["total"]},
                             ("change: " if len(results) > 1 else "") + " vs ".join(self.selection.groups))
        self.groupsComputed.emit(results)

    def _update_groups_label(self) -> None:
        results = getattr(self, "_group_results", None)
        if not results:
            return
        f = ENERGY_UNITS[self.unit]
        text = describe_interaction(results[0], f, self.unit)
        if len(results) > 1:
            text = "first " + text + "<br>second " + describe_interaction(results[1], f, self.unit)
        self.roster.show_group_result(text)

    # -- exports ----------------------------------------------------------------------------
    def _export_dialog(self, what: str) -> None:
        if self.dataset is None:
            return
        filters = {"map": "PNG image (*.png);;SVG image (*.svg)", "pairs": "CSV table (*.csv)",
                   "matrix": "CSV table (*.csv)", "report": "PDF document (*.pdf)",
                   "bfactor": "PDB file (*.pdb)"}
        stem = Path(self.snapshot.spec.structure if self.snapshot is not None else self.stored.path).stem
        default = {"map": f"{stem}_map.png", "pairs": f"{stem}_pairs.csv", "matrix": f"{stem}_matrix.csv",
                   "report": f"{stem}_report.pdf", "bfactor": f"{stem}_energies.pdb"}[what]
        folder = self.app_settings.last_dir or os.getcwd()
        path, _ = QFileDialog.getSaveFileName(self, "Export", os.path.join(folder, default), filters[what])
        if path:
            self.export(what, path)

    def export(self, what: str, path: str) -> bool:
        """Write one export; a failure shows a message and leaves no partial file."""
        try:
            exports.export(self, what, path)
        except Exception as exc:  # OSError, EnergyError, ValueError from writers
            show_error(self, "Export failed", f"{os.path.basename(path)}: {exc}")
            return False
        self.statusBar().showMessage(f"Wrote {path}", 6000)
        return True


def _stored_dataset(stored, blocks: bool):
    """(stored, its Dataset) for a worker thread; kinds without a map raise EnergyError."""
    return stored, Dataset.from_stored(stored, blocks=blocks)


def _save_result(path: str, snap, second, comparison) -> str:
    """Write one structure (``second`` None) or a comparison as a result file; returns ``path``."""
    if second is None:
        results.save_scan(path, snap.loaded, snap.result)
    else:
        results.save_comparison(path, (snap.loaded, snap.result), (second.loaded, second.result),
                                comparison, snap.result.settings)
    return path
