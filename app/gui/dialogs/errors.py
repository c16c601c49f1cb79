"""Error reporting: a message box with the engine's one-line message, never a raw traceback
(unexpected errors put theirs under "Show Details...")."""
from __future__ import annotations

import logging
import sys
import traceback

from PySide6.QtWidgets import QMessageBox

from app.gui.wording import in_window_terms
from energy.errors import one_line

log = logging.getLogger(__name__)


def show_error(parent, title: str, message: str, details: str = "") -> None:
    """A modal warning with ``message`` as one capped line (:func:`energy.errors.one_line`, the
    ``tessera`` options it names replaced by the window's controls) and
    ``details`` (a traceback) under "Show Details..."."""
    box = QMessageBox(parent)
    box.setIcon(QMessageBox.Icon.Warning)
    box.setWindowTitle(title)
    box.setText(one_line(in_window_terms(message)))
    if details:
        box.setDetailedText(details)
    box.setStandardButtons(QMessageBox.StandardButton.Ok)
    box.exec()


def install_excepthook(parent_getter) -> None:
    """Log unexpected exceptions in Qt slots and show them with their traceback under Details."""
    def hook(kind, value, tb):
        text = "".join(traceback.format_exception(kind, value, tb))
        log.error("unexpected error\n%s", text)
        try:
            show_error(parent_getter(), "Unexpected error", f"{kind.__name__}: {value}; this is a bug, "
                       "please report it (details below)", text)
        except Exception:  # never raise from the hook
            sys.__excepthook__(kind, value, tb)
    sys.excepthook = hook
