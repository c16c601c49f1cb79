#!/usr/bin/env python
"""Grab the main window in its main states into docs/screenshots/ (PNG).

States: the clash scenario on open; the clash pair selected with an atom pair's curves; the
ledger filtered to chain A - chain B and sorted by total; the map ordered by clustered
interaction profiles; compare mode (fixed minus clash).  Run offscreen:
    QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/screenshots.py [OUT_DIR]
"""
from __future__ import annotations

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
from app.document import LoadSpec  # noqa: E402

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


def main(out_dir: str) -> int:
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    qapp = QApplication.instance() or QApplication([])
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, tempfile.mkdtemp())
    qapp.setOrganizationName("TesseraScreens"); qapp.setApplicationName("TesseraScreens")
    qapp.setStyle("Fusion")
    from app.main_window import MainWindow
    w = MainWindow()
    w.resize(1600, 1000)
    w.show()
    w.open_spec(LoadSpec(str(SCENARIO / "complex_clash.pdb")))
    wait_for(w.computeFinished)
    settle()

    def shot(name):
        settle()
        path = out / f"{name}.png"
        w.grab().save(str(path))
        print("wrote", path)

    shot("01_scenario_opened")
    rp = w.dataset.pairs
    inter = np.flatnonzero(rp.pair_i != rp.pair_j)
    k = inter[np.argmax(rp.total[inter])]
    w.selection.set_pair((int(rp.pair_i[k]), int(rp.pair_j[k])))
    model = w.atoms.model
    total_col = model.columnCount() - 1
    w.atoms.table.sortByColumn(total_col, Qt.SortOrder.DescendingOrder)
    w.atoms.table.selectRow(0)
    shot("02_clash_selected_atom_curves")
    w.ledger.set_between("A", "B", True)
    w.ledger.hide_self.setChecked(True)
    w.ledger.table.sortByColumn(w.ledger.model.columnCount() - 1, Qt.SortOrder.AscendingOrder)
    w.ledger.table.selectRow(0)
    w.roster.apply.click()
    wait_for(w.groupsComputed, 20000)
    shot("03_interface_pairs_and_groups")
    w.map.set_order("profile")
    w.map.set_quantity("nonbonded")
    shot("04_clustered_order_nonbonded")
    w.map.set_order("sequence")
    w.map.set_quantity("total")
    w.open_spec(LoadSpec(str(SCENARIO / "complex_fixed.pdb")), compare=True)
    wait_for(w.computeFinished)
    w.ledger.table.selectRow(0)
    shot("05_compare_fixed_minus_clash")
    w.close()
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1] if len(sys.argv) > 1 else str(ROOT / "docs" / "screenshots")))
