"""Process-wide tuning applied by Tessera's entry points (the command line, the window, workers).

Transparent huge pages: NumPy asks the kernel for huge pages on every array of 4 MiB or more
(``madvise(MADV_HUGEPAGE)``, NumPy's "global state" documentation).  Where the kernel's THP
``defrag`` policy makes such a fault compact memory synchronously (``always``, ``madvise``,
``defer+madvise``), a fresh 45 MB array can take 0.1 s of system time to touch instead of 0.02 s
(measured on the project's 2-core build machine, benchmarks/README.md), and one 100k-atom
evaluation touches a dozen of them.  There Tessera switches NumPy's advice off, unless the user
chose with ``NUMPY_MADVISE_HUGEPAGE``.
"""
from __future__ import annotations

import os

_DEFRAG = "/sys/kernel/mm/transparent_hugepage/defrag"
_STALLING_POLICIES = {"always", "madvise", "defer+madvise"}


def selected_defrag_policy(path: str = _DEFRAG) -> str | None:
    """The bracketed entry of the kernel's THP defrag setting, or None where there is none.

    Parameters
    ----------
    path : str, optional
        File holding the setting (default ``/sys/kernel/mm/transparent_hugepage/defrag``).

    Returns
    -------
    str or None
        The selected policy (e.g. ``"madvise"``), or ``None`` if the file cannot be read or has no
        bracketed entry.
    """
    try:
        with open(path) as fh:
            text = fh.read()
    except OSError:
        return None
    for word in text.split():
        if word.startswith("[") and word.endswith("]"):
            return word[1:-1]
    return None


def tune_memory() -> bool:
    """Turn off NumPy's huge-page advice where faults would stall on compaction; True if done.

    Nothing is changed when ``NUMPY_MADVISE_HUGEPAGE`` is set in the environment (the user chose)
    or when the selected defrag policy is not one that compacts synchronously (``always``,
    ``madvise``, ``defer+madvise``).

    Returns
    -------
    bool
        True if NumPy's huge-page advice was switched off.
    """
    if "NUMPY_MADVISE_HUGEPAGE" in os.environ:
        return False
    if selected_defrag_policy() not in _STALLING_POLICIES:
        return False
    try:
        from numpy._core.multiarray import _set_madvise_hugepage
    except ImportError:  # NumPy < 2
        from numpy.core.multiarray import _set_madvise_hugepage
    _set_madvise_hugepage(False)
    return True
