"""Frame controls for a trajectory: slider, step and play, and the "this frame" / "mean over
frames" switch.  The bar only asks for frames (``frameRequested``); the window computes them and
reports back with :meth:`FrameBar.set_shown`, so playing never runs ahead of the computation."""
from __future__ import annotations

from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtGui import QTextDocument
from PySide6.QtWidgets import (
    QButtonGroup,
    QHBoxLayout,
    QLabel,
    QProgressBar,
    QRadioButton,
    QSizePolicy,
    QSlider,
    QSpinBox,
    QToolButton,
    QWidget,
)

PLAY_INTERVAL_MS = 150


class ElidedLabel(QLabel):
    """A one-line label that takes the width it is given: a text too long for it is shown
    elided (as plain text), whole in its tool tip.  It never sets the window's minimum width."""

    def __init__(self, text: str = "", parent=None):
        super().__init__(parent)
        self._full = ""
        self.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        self.setMinimumWidth(60)
        self.set_full_text(text)

    def set_full_text(self, text: str) -> None:
        self._full = text
        self._fit()

    def text(self) -> str:
        """The whole text (what is shown may be elided)."""
        return self._full

    def resizeEvent(self, ev) -> None:  # noqa: N802 (Qt's name)
        super().resizeEvent(ev)
        self._fit()

    def _fit(self) -> None:
        doc = QTextDocument(); doc.setHtml(self._full)
        plain = doc.toPlainText()
        fm = self.fontMetrics()
        if fm.horizontalAdvance(plain) <= self.width():
            super().setText(self._full)
            self.setToolTip("")
        else:
            super().setText(fm.elidedText(plain, Qt.TextElideMode.ElideRight, self.width()))
            self.setToolTip(plain)


class FrameBar(QWidget):
    frameRequested = Signal(int)      # frame index in the trajectory file
    modeChanged = Signal(str)         # "frame" or "mean"
    stopScanRequested = Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setObjectName("frameBar")
        self.n_frames = 0
        self.shown = -1               # frame whose results are on screen
        self.mode = "frame"
        self._timer = QTimer(self, interval=PLAY_INTERVAL_MS)
        self._timer.timeout.connect(self._tick)

        self.title = QLabel("<b>Frames</b>")
        self.first = QToolButton(); self.first.setText("|◀"); self.first.setToolTip("First frame")
        self.back = QToolButton(); self.back.setText("◀"); self.back.setToolTip("Previous frame")
        self.play = QToolButton(); self.play.setObjectName("framePlay"); self.play.setCheckable(True)
        self.play.setText("▶ Play"); self.play.setToolTip("Play through the frames (loops)")
        self.forward = QToolButton(); self.forward.setText("▶"); self.forward.setToolTip("Next frame")
        self.last = QToolButton(); self.last.setText("▶|"); self.last.setToolTip("Last frame")
        self.slider = QSlider(Qt.Orientation.Horizontal); self.slider.setObjectName("frameSlider")
        self.slider.setMinimumWidth(100)
        self.spin = QSpinBox(); self.spin.setObjectName("frameSpin"); self.spin.setPrefix("frame ")
        self.of_label = QLabel("")
        self.this_frame = QRadioButton("This frame"); self.this_frame.setObjectName("modeFrame")
        self.mean = QRadioButton("Mean over frames"); self.mean.setObjectName("modeMean")
        self.this_frame.setChecked(True)
        group = QButtonGroup(self); group.addButton(self.this_frame); group.addButton(self.mean)
        self.status = ElidedLabel(""); self.status.setObjectName("frameStatus")
        self.scan_progress = QProgressBar(); self.scan_progress.setObjectName("scanProgress")
        self.scan_progress.setMaximumWidth(170)
        self.scan_progress.setToolTip("Frames of the trajectory computed so far")
        self.scan_progress.setFormat("frames %v/%m")
        self.stop_scan = QToolButton(); self.stop_scan.setObjectName("stopScan"); self.stop_scan.setText("Stop")
        self.stop_scan.setToolTip("Stop computing the frames; the frames done so far are kept")
        self.stop_scan.clicked.connect(self.stopScanRequested)
        self.set_scanning(False)

        lay = QHBoxLayout(self); lay.setContentsMargins(4, 2, 4, 2); lay.setSpacing(4)
        for w in (self.title, self.first, self.back, self.play, self.forward, self.last):
            lay.addWidget(w)
        lay.addWidget(self.slider, 1)
        lay.addWidget(self.spin); lay.addWidget(self.of_label)
        lay.addSpacing(6)
        lay.addWidget(self.this_frame); lay.addWidget(self.mean)
        lay.addSpacing(6)
        lay.addWidget(self.status, 1)
        lay.addWidget(self.scan_progress); lay.addWidget(self.stop_scan)

        self.slider.valueChanged.connect(self._on_value)
        self.spin.valueChanged.connect(self._on_value)
        self.first.clicked.connect(lambda: self.set_frame(0))
        self.last.clicked.connect(lambda: self.set_frame(self.n_frames - 1))
        self.back.clicked.connect(lambda: self.set_frame(self.frame - 1))
        self.forward.clicked.connect(lambda: self.set_frame(self.frame + 1))
        self.play.toggled.connect(self._on_play)
        self.mean.toggled.connect(self._on_mode)
        self.set_range(0)

    # -- state ------------------------------------------------------------------------------
    @property
    def frame(self) -> int:
        return self.slider.value()

    @property
    def playing(self) -> bool:
        return self._timer.isActive()

    def set_range(self, n_frames: int, frame: int = 0) -> None:
        self.n_frames = int(n_frames)
        for w in (self.slider, self.spin):
            w.blockSignals(True)
            w.setRange(0, max(0, self.n_frames - 1))
            w.setValue(min(max(0, frame), max(0, self.n_frames - 1)))
            w.blockSignals(False)
        self.of_label.setText(f"of 0–{self.n_frames - 1}" if self.n_frames else "")
        self.shown = frame if self.n_frames else -1
        self._enable()

    def set_frame(self, frame: int) -> None:
        """Move to ``frame`` (clamped) and ask for it."""
        if not self.n_frames:
            return
        frame = min(max(0, int(frame)), self.n_frames - 1)
        if frame == self.slider.value():
            return
        self.slider.setValue(frame)          # -> _on_value -> frameRequested

    def set_shown(self, frame: int) -> None:
        self.shown = int(frame)

    def set_mode(self, mode: str) -> None:
        (self.mean if mode == "mean" else self.this_frame).setChecked(True)

    def set_mean_available(self, on: bool, note: str = "") -> None:
        self.mean.setEnabled(on)
        self.mean.setToolTip(note)
        if not on and self.mean.isChecked():
            self.this_frame.setChecked(True)

    def set_status(self, text: str) -> None:
        self.status.set_full_text(text)

    def set_scanning(self, on: bool, done: int = 0, total: int = 0) -> None:
        self.scan_progress.setVisible(on); self.stop_scan.setVisible(on)
        if on:
            self.scan_progress.setRange(0, max(total, 0)); self.scan_progress.setValue(done)

    def stop(self) -> None:
        self.play.setChecked(False)

    # -- internals ----------------------------------------------------------------------------
    def _enable(self) -> None:
        many = self.n_frames > 1
        for w in (self.first, self.back, self.play, self.forward, self.last, self.slider, self.spin):
            w.setEnabled(many)

    def _on_value(self, value: int) -> None:
        for w in (self.slider, self.spin):
            if w.value() != value:
                w.blockSignals(True); w.setValue(value); w.blockSignals(False)
        self.frameRequested.emit(int(value))

    def _on_play(self, on: bool) -> None:
        self.play.setText("❚❚ Pause" if on else "▶ Play")
        if on:
            self._timer.start()
        else:
            self._timer.stop()

    def _tick(self) -> None:
        if self.shown != self.frame:     # the last frame asked for is not on screen yet
            return
        self.set_frame((self.frame + 1) % max(1, self.n_frames))

    def _on_mode(self) -> None:
        mode = "mean" if self.mean.isChecked() else "frame"
        if mode != self.mode:
            self.mode = mode
            self.modeChanged.emit(mode)
