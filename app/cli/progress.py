"""The command line's progress display (on stderr; silenced by ``--quiet``)."""
from __future__ import annotations

import sys
import time


class ProgressBar:
    """``frames 12/40 [#####.....] 3.2 frames/s, 9 s left`` on stderr (a line every 10 % when
    stderr is not a terminal)."""

    def __init__(self, stream=None, width: int = 30, unit: str = "frames"):
        self.unit = unit
        self.stream = stream or sys.stderr
        self.width = width
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.t0 = time.perf_counter()
        self.first = None
        self.last_tenth = -1
        self.shown = False

    def update(self, done: int, total: int):
        now = time.perf_counter()
        if done and self.first is None:
            self.first = (now, done)
        rate = None
        if self.first is not None and done > self.first[1]:
            rate = (done - self.first[1]) / max(now - self.first[0], 1e-9)
        filled = int(self.width * done / max(total, 1))
        text = f"{self.unit} {done}/{total} [{'#' * filled}{'.' * (self.width - filled)}]"
        if rate:
            text += f" {rate:.2f} {self.unit}/s, {max(total - done, 0) / rate:.0f} s left"
        if self.tty:
            self.stream.write("\r" + text.ljust(78))
            self.stream.flush()
            self.shown = True
        else:
            tenth = 10 * done // max(total, 1)
            if tenth != self.last_tenth:
                self.last_tenth = tenth
                self.stream.write(text + "\n")
                self.stream.flush()

    def finish(self):
        if self.tty and self.shown:
            self.stream.write("\n")
            self.stream.flush()
