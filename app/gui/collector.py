"""Keep CPython's cyclic garbage collector from freezing the window during long work.

A full collection holds the GIL while it walks every tracked object. With numpy, scipy, OpenMM,
MDAnalysis and numba imported that is about 150,000 objects before any file is open, and while
OpenMM parses and parameterises a structure the heap briefly holds a few hundred thousand more.
Measured on the 8,867-atom ``test.pdb`` shipped with OpenMM (2 shared cores): four full
collections ran during one load, each 270-560 ms, and the window's timer stopped for as long.

Two remedies, both from the :mod:`gc` documentation:

* :func:`freeze_long_lived` moves everything alive at start-up (modules, classes, the window's
  widgets) to the permanent generation, so later collections do not walk it;
* :func:`collections_paused` turns automatic collection off while a worker builds a system. The
  objects that die during the load are freed by reference counting as usual; the load's cyclic
  garbage (about 30,000 objects for ``test.pdb``) waits for the next collection, one short pass
  over what the load left behind instead of repeated passes over the whole heap.
"""
from __future__ import annotations

import gc
import threading
from contextlib import contextmanager

_lock = threading.Lock()
_pausing = 0          # how many workers are inside collections_paused() right now
_was_enabled = True   # the collector's state before the first of them paused it


def freeze_long_lived() -> None:
    """Exclude every object alive now from future collections (cheap: no scan is made)."""
    gc.freeze()


@contextmanager
def collections_paused():
    """Pause automatic collection while the body runs; nested and concurrent uses are counted
    and the collector's earlier state comes back when the last one leaves."""
    global _pausing, _was_enabled
    with _lock:
        if _pausing == 0:
            _was_enabled = gc.isenabled()
            gc.disable()
        _pausing += 1
    try:
        yield
    finally:
        with _lock:
            _pausing -= 1
            if _pausing == 0 and _was_enabled:
                gc.enable()
