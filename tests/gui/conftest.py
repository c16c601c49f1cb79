"""GUI test setup: offscreen Qt before any Qt import, QSettings in tmp_path, no blocking dialogs.

Sample files (provenance in samples/make_scenario.py, invented demo data):
  SCENARIO_CLASH  samples/scenario/complex_clash.pdb  binder (chain B) on a helix bundle (chain A)
                  with a planted Trp clash; built-in Amber 14 force field, hydrogens present.
  SCENARIO_FIXED  samples/scenario/complex_fixed.pdb  the same atoms with the clash removed.
"""
import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from pathlib import Path  # noqa: E402

import pytest  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
SCENARIO_DIR = ROOT / "samples" / "scenario"
SCENARIO_CLASH = SCENARIO_DIR / "complex_clash.pdb"
SCENARIO_FIXED = SCENARIO_DIR / "complex_fixed.pdb"


@pytest.fixture(autouse=True)
def tmp_qsettings(tmp_path, monkeypatch):
    from PySide6.QtCore import QCoreApplication, QSettings
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, str(tmp_path / "settings"))
    QCoreApplication.setOrganizationName("TesseraTest")
    QCoreApplication.setApplicationName("TesseraTest")
    yield


@pytest.fixture
def error_boxes(monkeypatch):
    """Record every error dialog instead of blocking on it."""
    from app.gui.dialogs import errors
    shown = []
    monkeypatch.setattr(errors.QMessageBox, "exec", lambda self: shown.append(self.text()) or 0)
    return shown


@pytest.fixture(scope="session")
def scenario_snapshot():
    """The clash scenario loaded and computed once (default settings) for view-level tests."""
    from app.state.document import LoadSpec, Snapshot
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    assert SCENARIO_CLASH.exists(), f"missing sample {SCENARIO_CLASH}"
    loaded = load_system(str(SCENARIO_CLASH))
    return Snapshot(LoadSpec(str(SCENARIO_CLASH)), loaded, compute(loaded.system, loaded.frame))


@pytest.fixture
def window(qtbot, error_boxes):
    from app.gui.main_window import MainWindow
    w = MainWindow()
    qtbot.addWidget(w)
    w.resize(1500, 940)
    w.show()
    yield w
    w.close()


@pytest.fixture
def opened(qtbot, window):
    """The window with the clash scenario loaded through the real worker."""
    from app.state.document import LoadSpec
    with qtbot.waitSignal(window.computeFinished, timeout=30000):
        window.open_spec(LoadSpec(str(SCENARIO_CLASH)))
    return window
