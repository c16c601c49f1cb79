"""The main window on the screen it opens on: size, position, dock arrangement.

* The window opens inside ``QScreen.availableGeometry()`` (the screen less panels and docks of
  the desktop): at its preferred size where that fits, else filling the available area.
* The map is square, so the height left above the bottom docks (pair ledger and term bars,
  side by side) sets its width; the width beside it holds the atom contributions and the
  distance profile side by side.  Two arrangements: *narrow* (laptop screens: residue roster
  and clash check tabbed behind the atom contributions, compute settings behind the distance
  profile) and *wide* (where the width allows, those three get a column of their own on the
  left, tabbed).
* A saved geometry is clamped to the current screen; a saved dock state is only restored on a
  screen that calls for the same arrangement.
* After the window is shown, its frame (title bar included, when a window manager draws one)
  is pulled back inside the available area.
"""
from __future__ import annotations

from PySide6.QtCore import QByteArray, QEvent, QObject, QRect, QSize, Qt, QTimer
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import QDockWidget, QMainWindow, QScrollArea, QTabBar, QWidget

#: Up to this available width (or height) the window fills the available area; on larger
#: screens it takes :data:`LARGE_SCREEN_SHARE` of it, centred (px, device-independent).
FILL_UP_TO = QSize(1600, 900)
LARGE_SCREEN_SHARE = 0.9
#: Width of the left column of the wide arrangement (px).
LEFT_COLUMN = 300
#: The window may never need more than this width (issue 21: at most 1,024 px).
MAX_MINIMUM_WIDTH = 1024
#: Minimum width of each dock (px): narrower than this a panel stops being usable.
DOCK_MIN_WIDTH = {"roster": 200, "settings": 220, "clashes": 220, "atoms": 230, "profile": 230,
                  "ledger": 380, "bars": 300, "models": 380, "series": 300,
                  "hotspots": 380}
#: Height of the window's chrome around the map's plot: menu bar, tool bar, status bar, the
#: bottom docks' title bars, the map's control bar and hover line (px, measured under Xvfb at
#: 1366 x 768 with the Fusion style; used only to share the width out, not as a limit).
_CHROME_HEIGHT = 120
#: Width the map needs beside its square plot: residue labels on the left, colour bar (px).
_MAP_SIDE_WIDTH = 200

#: Qt platforms without a screen anyone looks at.
WINDOWLESS = ("offscreen", "minimal")

LEFT = Qt.DockWidgetArea.LeftDockWidgetArea
RIGHT = Qt.DockWidgetArea.RightDockWidgetArea
BOTTOM = Qt.DockWidgetArea.BottomDockWidgetArea
H = Qt.Orientation.Horizontal
V = Qt.Orientation.Vertical


def bottom_height(size: QSize) -> int:
    """Height of the bottom docks (pair ledger, term bars) in a window of ``size`` (px)."""
    return max(200, min(320, int(size.height() * 0.3)))


def trajectory_bottom_height(size: QSize) -> int:
    """Height of the bottom docks with a trajectory open (the pair's time series needs more):
    330 px where the window is tall enough, less on a laptop screen."""
    return max(bottom_height(size), min(330, int(size.height() * 0.38)))


def map_width(size: QSize) -> int:
    """Width the map needs in a window of ``size``: its square plot as tall as the room above
    the bottom docks, plus the residue labels and the colour bar (px)."""
    return max(0, size.height() - bottom_height(size) - _CHROME_HEIGHT) + _MAP_SIDE_WIDTH


def arrangement_for(size: QSize) -> str:
    """``"wide"`` when a window of ``size`` has room beside the map for the left column and
    the two right-hand docks at a comfortable width (330 px each), else ``"narrow"``."""
    return "wide" if size.width() - map_width(size) >= LEFT_COLUMN + 2 * 330 else "narrow"


def initial_geometry(available: QRect) -> QRect:
    """The whole available area on screens up to :data:`FILL_UP_TO`, else
    :data:`LARGE_SCREEN_SHARE` of it, centred."""
    large = available.width() > FILL_UP_TO.width() and available.height() > FILL_UP_TO.height()
    share = LARGE_SCREEN_SHARE if large else 1.0
    w = int(available.width() * share)
    h = int(available.height() * share)
    x = available.x() + (available.width() - w) // 2
    y = available.y() + (available.height() - h) // 2
    return QRect(x, y, w, h)


def clamp_rect(rect: QRect, available: QRect) -> QRect:
    """``rect`` shrunk to fit ``available`` and moved inside it (as little as possible)."""
    w = min(rect.width(), available.width())
    h = min(rect.height(), available.height())
    x = min(max(rect.x(), available.x()), available.x() + available.width() - w)
    y = min(max(rect.y(), available.y()), available.y() + available.height() - h)
    return QRect(x, y, w, h)


def available_geometry(window: QWidget) -> QRect:
    """The available area of the screen the window is on (the primary screen before it is
    placed)."""
    screen = window.screen()
    return screen.availableGeometry()


def keep_inside(window: QWidget) -> None:
    """Move and shrink ``window`` so that its frame lies inside its screen's available area
    (not on Qt's offscreen and minimal platforms: no one sees their screen, and tests and
    scripts size windows there at will)."""
    if window.isMaximized() or window.isFullScreen() or QGuiApplication.platformName() in WINDOWLESS:
        return
    avail = available_geometry(window)
    frame = window.frameGeometry()
    if avail.contains(frame):
        return
    inner = window.geometry()
    left, top = inner.x() - frame.x(), inner.y() - frame.y()
    right, bottom = frame.right() - inner.right(), frame.bottom() - inner.bottom()
    target = clamp_rect(frame, avail)
    window.setGeometry(QRect(target.x() + left, target.y() + top,
                             max(1, target.width() - left - right), max(1, target.height() - top - bottom)))


class ScreenGuard(QObject):
    """Keeps a window's frame inside the available area: right after it is first shown (when a
    window manager has added its frame) and whenever it moves to another screen."""

    def __init__(self, window: QWidget):
        super().__init__(window)
        self.window = window
        self._connected = False
        window.installEventFilter(self)

    @staticmethod
    def on_first_show(window: QWidget, callback) -> None:
        """Call ``callback`` once, right after ``window`` is first shown and laid out."""
        class _Once(QObject):
            def eventFilter(self, obj, ev):  # noqa: N802
                if ev.type() == QEvent.Type.Show:
                    window.removeEventFilter(self)
                    QTimer.singleShot(0, callback)
                    self.deleteLater()
                return False
        window.installEventFilter(_Once(window))

    def eventFilter(self, obj, ev) -> bool:  # noqa: N802 (Qt's name)
        if obj is self.window and ev.type() == QEvent.Type.Show:
            # twice: once the window is mapped, and once a window manager has framed it
            QTimer.singleShot(0, self._check)
            QTimer.singleShot(400, self._check)
            handle = self.window.windowHandle()
            if handle is not None and not self._connected:
                handle.screenChanged.connect(lambda _s: QTimer.singleShot(0, self._check))
                self._connected = True
        return False

    def _check(self) -> None:
        if self.window.isVisible():
            keep_inside(self.window)
            label_dock_tabs(self.window)


def label_dock_tabs(window: QMainWindow) -> None:
    """Give each tab of the tabbed docks its title as tool tip: on a narrow screen Qt elides
    the titles of the tabs ("Residue r…")."""
    for bar in window.findChildren(QTabBar):
        if bar.parent() is window:
            for i in range(bar.count()):
                bar.setTabToolTip(i, bar.tabText(i))


def scrollable(widget: QWidget) -> QScrollArea:
    """``widget`` in a frameless scroll area: a form can then be narrower or lower than its
    fields' preferred size (it scrolls) instead of setting the window's minimum size."""
    area = QScrollArea()
    area.setObjectName(f"{widget.objectName() or 'panel'}Scroll")
    area.setWidget(widget)
    area.setWidgetResizable(True)
    area.setFrameShape(QScrollArea.Shape.NoFrame)
    area.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAsNeeded)
    return area


def set_dock_minimums(docks: dict[str, QDockWidget]) -> None:
    """Apply :data:`DOCK_MIN_WIDTH` to the docks."""
    for key, dock in docks.items():
        dock.setMinimumWidth(DOCK_MIN_WIDTH.get(key, 240))


def arrange_docks(window: QMainWindow, docks: dict[str, QDockWidget], arrangement: str) -> None:
    """Place the docks for ``arrangement`` (``"wide"`` or ``"narrow"``); :func:`size_docks`
    then shares out the room."""
    d = docks
    for dock in d.values():
        if window.dockWidgetArea(dock) != Qt.DockWidgetArea.NoDockWidgetArea:
            window.removeDockWidget(dock)
    window.addDockWidget(BOTTOM, d["ledger"])
    window.splitDockWidget(d["ledger"], d["bars"], H)
    window.tabifyDockWidget(d["ledger"], d["models"])
    if "hotspots" in d:
        window.tabifyDockWidget(d["ledger"], d["hotspots"])
    window.tabifyDockWidget(d["bars"], d["series"])
    window.addDockWidget(RIGHT, d["atoms"])
    window.splitDockWidget(d["atoms"], d["profile"], H)
    if arrangement == "wide":
        window.addDockWidget(LEFT, d["roster"])
        window.tabifyDockWidget(d["roster"], d["settings"])
        window.tabifyDockWidget(d["roster"], d["clashes"])
    else:
        window.tabifyDockWidget(d["atoms"], d["roster"])
        window.tabifyDockWidget(d["atoms"], d["clashes"])
        window.tabifyDockWidget(d["profile"], d["settings"])
    for dock in d.values():
        dock.show()
    for key in ("ledger", "bars", "atoms", "profile", "roster"):
        d[key].raise_()
    label_dock_tabs(window)


def size_docks(window: QMainWindow, docks: dict[str, QDockWidget], arrangement: str) -> None:
    """Share the window's room out between the map and the docks of ``arrangement``.

    The map gets :func:`map_width`, the left column (wide) :data:`LEFT_COLUMN`, the atom
    contributions (60 %) and the distance profile share the rest.  The bottom docks: the ledger gets a
    little more than half the width (its energy columns must show), the term bars the rest.
    """
    d = docks
    size = window.size()
    bottom = bottom_height(size)
    left = LEFT_COLUMN if arrangement == "wide" else 0
    right = max(DOCK_MIN_WIDTH["atoms"] + DOCK_MIN_WIDTH["profile"], size.width() - map_width(size) - left)
    if left:
        window.resizeDocks([d["roster"]], [left], H)
    atoms = int(right * 0.6)       # the atom table's energy columns need more than half
    window.resizeDocks([d["atoms"], d["profile"]], [atoms, right - atoms], H)
    ledger = int(size.width() * (0.5 if size.width() >= 1600 else 0.56))
    window.resizeDocks([d["ledger"]], [bottom], V)
    window.resizeDocks([d["ledger"], d["bars"]], [ledger, size.width() - ledger], H)


def place_window(window: QMainWindow, docks: dict[str, QDockWidget], store) -> str:
    """Size and place ``window`` on its screen, arrange its docks; return the arrangement.

    ``store`` (a ``QSettings``) may hold ``window/geometry``, ``window/state`` and
    ``window/arrangement`` from an earlier session: the geometry is restored and clamped to the
    current screen; the dock state only when it was saved for the same arrangement.
    """
    avail = available_geometry(window)
    geo = store.value("window/geometry")
    restored = isinstance(geo, QByteArray) and window.restoreGeometry(geo)
    if restored and not window.isMaximized():
        window.setGeometry(clamp_rect(window.geometry(), available_geometry(window)))
    elif not restored:
        window.setGeometry(initial_geometry(avail))
    arrangement = arrangement_for(window.size())
    arrange_docks(window, docks, arrangement)
    size_docks(window, docks, arrangement)
    state = store.value("window/state")
    if isinstance(state, QByteArray) and store.value("window/arrangement") == arrangement \
            and window.restoreState(state):
        pass
    else:   # the shares again once the window is laid out at its real size
        ScreenGuard.on_first_show(window, lambda: size_docks(window, docks, arrangement))
    window.setProperty("arrangement", arrangement)
    return arrangement


def save_window(window: QMainWindow, store) -> None:
    """Store geometry, dock state and arrangement for :func:`place_window`."""
    store.setValue("window/geometry", window.saveGeometry())
    store.setValue("window/state", window.saveState())
    store.setValue("window/arrangement", window.property("arrangement") or "")
