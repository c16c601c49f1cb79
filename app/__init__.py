"""Tessera's desktop window: thin Qt views over the models of :mod:`energy`.

Nothing in here does energy arithmetic; the computation runs in :mod:`energy` inside a
background worker (:mod:`app.workers`).  Every view reads and writes one shared
:class:`app.selection.SelectionModel`.
"""

import sys as _sys


def _pin_singletons() -> None:
    """Work around a reference-count defect of PySide6 6.12.0 on CPython 3.11.

    In this build every signal emitted from Python drops one reference to ``True``, and every
    ``None`` returned from a model's ``data()`` to Qt drops one reference to ``None``.  After a
    few thousand emits (minutes of hovering) CPython frees the singleton and aborts with
    "none_dealloc" / "bool_dealloc".  CPython 3.12 makes these objects immortal; on 3.11 we add
    2**40 references once, which has the same effect (they are never freed anyway).
    Reproduce: emit any Signal 10 times and watch ``sys.getrefcount(True)`` fall by 10.
    """
    if _sys.version_info >= (3, 12) or _sys.implementation.name != "cpython":
        return
    import ctypes
    for obj in (None, True, False):
        ctypes.c_ssize_t.from_address(id(obj)).value += 1 << 40


_pin_singletons()
