"""Shared test set-up: Qt offscreen before anything imports Qt; the sample registry."""
import os

# tests/desktop/ needs an X server (make test-desktop starts Xvfb and sets TESSERA_DESKTOP=1).
DESKTOP = os.environ.get("TESSERA_DESKTOP") == "1"
collect_ignore = [] if DESKTOP else ["desktop"]
if not DESKTOP:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
