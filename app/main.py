"""Entry point of the desktop window (``tessera``, ``tessera view FILES``)."""
from __future__ import annotations

import logging
import sys


def run_app(files) -> int:
    from PySide6.QtWidgets import QApplication

    from .dialogs.errors import install_excepthook
    from .main_window import MainWindow
    from .settings import APPLICATION, ORGANIZATION

    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setOrganizationName(ORGANIZATION)
    app.setApplicationName(APPLICATION)
    app.setStyle("Fusion")
    window = MainWindow()
    install_excepthook(lambda: window)
    window.show()
    if files:
        window.open_files(files)
    else:
        window.open_default()
    return app.exec()


if __name__ == "__main__":
    sys.exit(run_app(sys.argv[1:]))
