"""Entry point of the desktop window (``tessera``, ``tessera view FILES``)."""
from __future__ import annotations

import logging
import sys

from PySide6.QtGui import QIcon, QPixmap
from PySide6.QtWidgets import QApplication

import resources
from app.gui.collector import freeze_long_lived
from app.gui.dialogs.errors import install_excepthook
from app.gui.main_window import MainWindow
from app.gui.settings import APPLICATION, ORGANIZATION


def application_icon() -> QIcon:
    """The application icon (``resources/tessera.svg``)."""
    pixmap = QPixmap()
    pixmap.loadFromData(resources.path("tessera.svg").read_bytes(), "SVG")
    return QIcon(pixmap)


def run_app(files) -> int:
    """Open the window on ``files`` (the demo scenario when empty) and run the event loop."""
    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setOrganizationName(ORGANIZATION)
    app.setApplicationName(APPLICATION)
    app.setStyle("Fusion")
    app.setStyleSheet(resources.text("window.qss"))
    app.setWindowIcon(application_icon())
    window = MainWindow()
    install_excepthook(lambda: window)
    window.show()
    freeze_long_lived()   # modules and widgets live as long as the window: keep them out of collections
    if files:
        window.open_files(files)
    else:
        window.open_default()
    return app.exec()


if __name__ == "__main__":
    sys.exit(run_app(sys.argv[1:]))
