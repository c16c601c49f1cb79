"""``tessera view [FILES...]`` (and plain ``tessera``): open the desktop window.

The window's modules are imported only here, inside :func:`run`, so the headless commands
never load Qt.
"""
from __future__ import annotations

import argparse
import os
import sys

from energy.errors import EnergyError

#: Exit status when the window cannot open for want of a display (``make run`` accepts it).
EXIT_NO_DISPLAY = 3
#: Exit status when Qt's platform plugin cannot load (missing system libraries).
EXIT_MISSING_LIBRARIES = 2


def configure_parser(p: argparse.ArgumentParser) -> None:
    """The arguments of ``tessera view``."""
    p.add_argument("files", nargs="*")


def _has_display() -> bool:
    """A Qt window can open: a platform is forced, or an X11/Wayland display is there (or not Linux)."""
    if os.environ.get("QT_QPA_PLATFORM"):
        return True
    if not sys.platform.startswith("linux"):
        return True
    return bool(os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"))


def run(files) -> int:
    """Open the window on ``files`` (the demo scenario when none are given)."""
    if not _has_display():
        print("tessera: no display to open the window on (DISPLAY is not set); for results without "
              "a window run: tessera scan samples/scenario/complex_clash.pdb (README: 'Headless "
              "commands')", file=sys.stderr)
        return EXIT_NO_DISPLAY
    from app.cli.display_check import diagnose
    advice = diagnose()      # before any QApplication: Qt would abort with a generic message
    if advice:
        print(f"tessera: {advice}", file=sys.stderr)
        return EXIT_MISSING_LIBRARIES
    try:
        from app.gui.main import run_app
    except ImportError as exc:
        raise EnergyError(f"the desktop window is not available: {exc}") from None
    return run_app(files)
