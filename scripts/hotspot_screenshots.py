#!/usr/bin/env python
"""Screenshots of the Hot spots panel (offscreen): the window after an alanine scan of the fixed
scenario model with A:GLU7 picked, and the panel alone (floated, 1100 x 560).

Run:  QT_QPA_PLATFORM=offscreen .venv/bin/python scripts/hotspot_screenshots.py
Writes docs/screenshots/10_hotspots_window.png and 11_hotspots_panel.png.
"""
import os
import sys

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

from PySide6.QtCore import QEventLoop  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402


def main() -> int:
    app = QApplication([])
    from app.gui.main_window import MainWindow
    from app.state.document import LoadSpec
    out = os.path.join(ROOT, "docs", "screenshots")
    w = MainWindow()
    w.resize(1500, 940)
    w.show()
    loop = QEventLoop()
    w.computeFinished.connect(loop.quit)
    w.open_spec(LoadSpec(os.path.join(ROOT, "samples", "scenario", "complex_fixed.pdb")))
    loop.exec()
    loop = QEventLoop()
    w.hotspots.scanned.connect(loop.quit)
    w.hotspot_panel.run_button.click()
    loop.exec()
    system = w.snapshot.system
    w.hotspot_panel.select_residue(next(i for i in range(system.n_residues)
                                        if system.residues.label(i) == "A:GLU7"))
    for _ in range(20):
        app.processEvents()
    w.grab().save(os.path.join(out, "10_hotspots_window.png"))
    w.docks["hotspots"].setFloating(True)
    w.docks["hotspots"].resize(1100, 560)
    for _ in range(20):
        app.processEvents()
    w.hotspot_panel.grab().save(os.path.join(out, "11_hotspots_panel.png"))
    w.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
