#!/usr/bin/env python
"""Grab the window with implicit solvent: the scenario's fixed complex under GB OBC2 + ACE, the
map showing the effective electrostatics (Coulomb + polar solvation), the salt bridge
A:GLU7 - B:LYS15 selected.  Writes docs/screenshots/09_effective_electrostatics_gb.png.

    QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/screenshot_solvation.py [OUT_DIR]
"""
from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "scripts"))

from PySide6.QtCore import QSettings  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402
from screenshots import SCENARIO, settle, wait_for  # noqa: E402

import app  # noqa: E402,F401  (applies the PySide6 workaround)
from app.state.document import LoadSpec  # noqa: E402
from energy.model.settings import EnergySettings  # noqa: E402


def main(out_dir: str) -> int:
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    qapp = QApplication.instance() or QApplication([])
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, tempfile.mkdtemp())
    qapp.setOrganizationName("TesseraScreens"); qapp.setApplicationName("TesseraScreens")
    qapp.setStyle("Fusion")
    import resources
    from app.gui import screen_fit
    from app.gui.main_window import MainWindow
    qapp.setStyleSheet(resources.text("window.qss"))
    w = MainWindow()
    w.resize(1600, 1000)
    screen_fit.arrange_docks(w, w.docks, screen_fit.arrangement_for(w.size()))
    screen_fit.size_docks(w, w.docks, screen_fit.arrangement_for(w.size()))
    w.show()
    w.open_spec(LoadSpec(str(SCENARIO / "complex_fixed.pdb")))
    wait_for(w.computeFinished)
    w.settings_panel.set_settings(EnergySettings(implicit_solvent="obc2"))
    w.settings_panel.recompute.click()
    wait_for(w.computeFinished)
    settle()
    w.map.set_quantity("effective_electrostatics")
    ds = w.dataset
    labels = [str(s) for s in ds.labels]
    a, b = labels.index("A:GLU7"), labels.index("B:LYS15")
    w.selection.set_pair((min(a, b), max(a, b)))
    w.ledger.set_between("A", "B", True)
    w.docks["settings"].raise_()
    settle(500)
    path = out / "09_effective_electrostatics_gb.png"
    w.grab().save(str(path))
    print("wrote", path)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1] if len(sys.argv) > 1 else str(ROOT / "docs" / "screenshots")))
