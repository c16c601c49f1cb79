"""Result files: save what the engine computed, load it back anywhere (``docs/result-file.md``).

>>> from energy import results
>>> stored = results.load("result.h5")        # doctest: +SKIP
>>> stored.pairs_frame().nsmallest(5, "total")  # doctest: +SKIP

:func:`load` returns a :class:`~energy.output.result_file.StoredResult` holding the engine's own
objects (``ResidueTable``, ``ResiduePairEnergies``, ``EnergySettings``, ``Comparison``).  Reading
never executes anything from the file (no pickle).
"""
from __future__ import annotations

from energy.output.result_file import (
    SCHEMA_VERSION,
    InputRecord,
    ResultFileError,
    StoredResult,
    read_result,
    write_comparison_result,
    write_scan_result,
    write_trajectory_result,
)


def load(path) -> StoredResult:
    """Read the result file at ``path``.

    Parameters
    ----------
    path : str or os.PathLike
        A ``.h5`` file written by ``tessera ... --out`` or :func:`save_scan`.

    Returns
    -------
    StoredResult

    Raises
    ------
    ResultFileError
        The file is not a readable Tessera result (one-line message).
    """
    return read_result(path)


save_scan = write_scan_result
save_comparison = write_comparison_result
save_trajectory = write_trajectory_result

__all__ = ["SCHEMA_VERSION", "InputRecord", "ResultFileError", "StoredResult", "load", "save_scan",
           "save_comparison", "save_trajectory"]
