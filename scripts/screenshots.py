#!/usr/bin/env python
"""Grab the main window in its main states into docs/screenshots/ (PNG).

States: the clash scenario on open; the clash pair selected with an atom pair's curves; the
ledger filtered to chain A - chain B and sorted by total; the map ordered by clustered
interaction profiles; compare mode (fixed minus clash); the clash check panel with its map rings;
the model comparison (LJ vs exp-6 severity, electrostatics models); the trajectory with the clash
pair's time series; the mean over frames.

Offscreen, the window is 1600 x 1000 (the README's screenshots), or the size given:
    QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/screenshots.py [OUT_DIR] [--size 1280x800]
Under a real X server the window opens as it does for a user, fitted to the screen, and the
shots show the whole screen, e.g. a 1366 x 768 laptop:
    xvfb-run -a -s "-screen 0 1366x768x24" env QT_QPA_PLATFORM=xcb \
        .venv/bin/python scripts/screenshots.py docs/screenshots/1366x768
"""
from __future__ import annotations

import json
import os
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402
from PySide6.QtCore import QEventLoop, QSettings, Qt, QTimer  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402

import app  # noqa: E402,F401  (applies the PySide6 workaround)
from app.state.document import LoadSpec  # noqa: E402

SCENARIO = ROOT / "samples" / "scenario"


def wait_for(signal, timeout_ms=60000):
    loop = QEventLoop()
    signal.connect(loop.quit)
    QTimer.singleShot(timeout_ms, loop.quit)
    loop.exec()


def settle(ms=250):
    loop = QEventLoop()
    QTimer.singleShot(ms, loop.quit)
    loop.exec()


def main(out_dir: str, size: tuple = (1600, 1000)) -> int:
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    qapp = QApplication.instance() or QApplication([])
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, tempfile.mkdtemp())
    qapp.setOrganizationName("TesseraScreens"); qapp.setApplicationName("TesseraScreens")
    qapp.setStyle("Fusion")
    import resources
    from app.gui.main_window import MainWindow
    qapp.setStyleSheet(resources.text("window.qss"))
    offscreen = qapp.platformName() == "offscreen"
    sx = size[0] / 1600       # the dock sizes below are those of the 1600 x 1000 window, scaled
    px = lambda *v: [int(round(x * sx)) for x in v]  # noqa: E731
    w = MainWindow()
    from app.gui import screen_fit
    if offscreen:     # no real screen (the offscreen one is 800 x 600): the README's 1600 x 1000
        w.resize(*size)
        screen_fit.arrange_docks(w, w.docks, screen_fit.arrangement_for(w.size()))
        screen_fit.size_docks(w, w.docks, screen_fit.arrangement_for(w.size()))
    w.show()
    w.open_spec(LoadSpec(str(SCENARIO / "complex_clash.pdb")))
    wait_for(w.computeFinished)
    settle()

    def shot(name):
        settle()
        path = out / f"{name}.png"
        # offscreen: the window alone; on a real screen: the whole screen, as a user sees it
        image = w.grab() if offscreen else w.screen().grabWindow(0)
        image.save(str(path))
        print("wrote", path)

    shot("01_scenario_opened")
    rp = w.dataset.pairs
    inter = np.flatnonzero(rp.pair_i != rp.pair_j)
    k = inter[np.argmax(rp.total[inter])]
    w.selection.set_pair((int(rp.pair_i[k]), int(rp.pair_j[k])))
    model = w.atoms.model
    total_col = model.column_of("Total")
    w.atoms.table.sortByColumn(total_col, Qt.SortOrder.DescendingOrder)
    w.atoms.table.selectRow(0)
    shot("02_clash_selected_atom_curves")
    w.ledger.set_between("A", "B", True)
    w.ledger.hide_self.setChecked(True)
    w.ledger.table.sortByColumn(w.ledger.model.column_of("Total"), Qt.SortOrder.AscendingOrder)
    w.ledger.table.selectRow(0)
    w.roster.apply.click()
    wait_for(w.groupsComputed, 20000)
    shot("03_interface_pairs_and_groups")
    w.docks["roster"].raise_()
    shot("03b_residue_roster")
    w.docks["atoms"].raise_()
    w.map.set_order("profile")
    w.map.set_quantity("nonbonded")
    shot("04_clustered_order_nonbonded")
    w.map.set_order("sequence")
    w.map.set_quantity("total")
    w.open_spec(LoadSpec(str(SCENARIO / "complex_fixed.pdb")), compare=True)
    wait_for(w.computeFinished)
    w.ledger.table.selectRow(0)
    shot("05_compare_fixed_minus_clash")
    w.leave_compare()
    w.ledger.set_between("A", "B", False)
    w.ledger.hide_self.setChecked(False)
    if w.checks.check is None or w.checks.check.report.options.overlap != 0.4:
        wait_for(w.checks.clashesChecked, 20000)
    w.docks["clashes"].raise_()
    if offscreen:   # the README's 1600 x 1000 layout; on a real screen the user's layout stays
        w.resizeDocks([w.docks["clashes"], w.docks["atoms"]], px(560, 400), Qt.Orientation.Horizontal)
    w.clash_panel.table.selectRow(0)
    i, j = w.selection.pair
    pi, pj = int(w.map.position[i]), int(w.map.position[j])
    w.map.plot.setRange(xRange=(pj - 18, pj + 18), yRange=(pi - 18, pi + 18), padding=0)
    shot("06_clash_check_panel")
    if offscreen:
        w.resizeDocks([w.docks["clashes"], w.docks["atoms"]], px(300, 460), Qt.Orientation.Horizontal)
    w.fit_map()
    w.docks["models"].raise_()
    w.docks["bars"].hide(); w.docks["series"].hide()     # give the comparison the whole width
    if offscreen:
        w.resizeDocks([w.docks["models"]], [330], Qt.Orientation.Vertical)
    w.model_panel.compare_button.click()
    wait_for(w.checks.electrostaticsCompared, 30000)
    w.model_panel.severity.selectRow(0)
    shot("07_model_comparison")
    w.docks["bars"].show(); w.docks["series"].show()
    w.docks["roster"].raise_()
    w.docks["ledger"].raise_()
    if offscreen:
        w.resizeDocks([w.docks["ledger"], w.docks["bars"]], px(700, 900), Qt.Orientation.Horizontal)
        w.resizeDocks([w.docks["ledger"]], [250], Qt.Orientation.Vertical)
    else:
        screen_fit.size_docks(w, w.docks, w.arrangement)
    w.open_spec(LoadSpec(str(SCENARIO / "complex_clash.pdb"), str(SCENARIO / "relax.dcd")))
    wait_for(w.computeFinished)
    if w.trajectory.state.result is None:
        wait_for(w.trajectory.scanFinished, 120000)
    meta = json.loads((SCENARIO / "scenario.json").read_text())
    labels = [w.snapshot.system.residues.label(k) for k in range(w.snapshot.system.n_residues)]
    w.selection.set_pair(tuple(sorted(labels.index(x) for x in meta["clash"])))
    w.frame_bar.set_frame(6)
    wait_for(w.trajectory.frameShown, 30000)
    w.atoms.table.selectRow(0)
    shot("08_trajectory_time_series")
    w.frame_bar.mean.setChecked(True)
    w.ledger.set_between("A", "B", True)
    w.ledger.table.sortByColumn(w.ledger.model.column_of("Total"), Qt.SortOrder.AscendingOrder)
    w.ledger.table.scrollToTop()
    shot("09_trajectory_mean_over_frames")
    # a solvated box (OpenMM's bundled test.pdb): settings fitted to it, water and ions as blocks
    import openmm
    w.frame_bar.mean.setChecked(False)
    w.open_spec(LoadSpec(str(Path(openmm.__file__).parent / "app" / "data" / "test.pdb")))
    wait_for(w.computeFinished)
    lys = next(k for k, lab in enumerate(w.dataset.labels) if lab.startswith("LYS29"))
    w.selection.set_pair((lys, w.dataset.n - 2))
    w.docks["atoms"].raise_()
    shot("10_solvent_blocks")
    w.close()
    return 0


if __name__ == "__main__":
    args = sys.argv[1:]
    size = (1600, 1000)
    if "--size" in args:
        k = args.index("--size")
        size = tuple(int(v) for v in args[k + 1].lower().split("x"))
        del args[k:k + 2]
    sys.exit(main(args[0] if args else str(ROOT / "docs" / "screenshots"), size))
