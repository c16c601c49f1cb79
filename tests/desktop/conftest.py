"""The window under a real X server (``make test-desktop``: Xvfb at 1280x800, 1366x768,
1600x900, 1920x1080, and 2560x1600 with QT_SCALE_FACTOR=2).

This folder is collected only with TESSERA_DESKTOP=1 (tests/conftest.py), so plain
``make test`` (Qt offscreen) leaves it out.  Every test measures the screen it runs on: the
size comes from the X server, not from a parameter.

Sample files: samples/scenario/ (invented demo data, provenance in samples/make_scenario.py);
``scenario.json`` names the planted clash pair.
"""
import json
import os
from pathlib import Path

import pytest

if os.environ.get("QT_QPA_PLATFORM", "xcb") != "xcb" or not os.environ.get("DISPLAY"):
    raise pytest.UsageError("tests/desktop needs an X server (DISPLAY) and QT_QPA_PLATFORM=xcb: "
                            "run make test-desktop (it starts Xvfb)")
os.environ["QT_QPA_PLATFORM"] = "xcb"

ROOT = Path(__file__).resolve().parents[2]
SCENARIO = json.loads((ROOT / "samples" / "scenario" / "scenario.json").read_text())
#: Screenshots of each run; the 1366 x 768 ones are kept in git for the README.
SHOTS = Path(os.environ.get("TESSERA_DESKTOP_SHOTS", ROOT / "docs" / "screenshots" / "desktop"))


@pytest.fixture(autouse=True)
def tmp_qsettings(tmp_path):
    from PySide6.QtCore import QCoreApplication, QSettings
    QSettings.setDefaultFormat(QSettings.Format.IniFormat)
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, str(tmp_path / "settings"))
    QCoreApplication.setOrganizationName("TesseraDesktopTest")
    QCoreApplication.setApplicationName("TesseraDesktopTest")
    yield


@pytest.fixture
def styled_app(qapp):
    """The application as ``tessera view`` sets it up (style, style sheet)."""
    import resources
    qapp.setStyle("Fusion")
    qapp.setStyleSheet(resources.text("window.qss"))
    return qapp


@pytest.fixture
def screen_name(styled_app):
    """e.g. ``1366x768`` or ``2560x1600_scale2`` (the physical size and the scale factor)."""
    s = styled_app.primaryScreen()
    ratio = s.devicePixelRatio()
    w, h = round(s.geometry().width() * ratio), round(s.geometry().height() * ratio)
    return f"{w}x{h}" + (f"_scale{ratio:g}" if ratio != 1 else "")


@pytest.fixture
def shown(qtbot, styled_app, monkeypatch):
    """A new main window as ``tessera view`` shows it, with the scenario opened by
    ``open_default`` (what plain ``tessera`` and ``make run`` open)."""
    from app.gui.dialogs import errors
    from app.gui.main_window import MainWindow
    shown_errors = []
    monkeypatch.setattr(errors.QMessageBox, "exec", lambda self: shown_errors.append(self.text()) or 0)
    w = MainWindow()
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    with qtbot.waitSignal(w.computeFinished, timeout=60000):
        w.open_default()
    qtbot.wait(600)      # the screen guard's second look and the deferred dock sizes
    assert not shown_errors
    yield w
    w.close()
