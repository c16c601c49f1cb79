"""The clash finder's overlaps in the result file (``tessera overlaps --out``; kind ``"overlaps"``).

Layout (docs/result-file.md): the common groups (``inputs``, ``settings`` (empty: the search has
options, not energy settings), ``residues``) and an ``overlaps`` group with one row per flagged
atom pair, most severe first, and the search's options as JSON.  Read back by
:func:`energy.output.result_file.read_result` (``StoredResult.overlaps``).
"""
from __future__ import annotations

import json
import os

import numpy as np

from energy.analysis.clashes import ClashReport
from energy.errors import EnergyError
from energy.output.result_file import _atomic_h5, _column, _write_header, _write_residues, input_records


def write_overlap_result(path, loaded, report: ClashReport) -> None:
    """Write the ranked overlaps of one structure (``tessera overlaps --out``).

    Parameters
    ----------
    path : str or os.PathLike
        Output ``.h5`` file (replaced atomically).
    loaded : LoadedSystem
        The structure searched (residues, input files).
    report : ClashReport
        The clash finder's result.

    Returns
    -------
    None

    Raises
    ------
    EnergyError
        If a distance or overlap is not finite (nothing is written).
    """
    if not (np.all(np.isfinite(report.distance)) and np.all(np.isfinite(report.overlap))):
        raise EnergyError(f"{os.fspath(path)}: non-finite distances in the overlap list; nothing written")
    system = loaded.system

    def write(fh):
        _write_header(fh, "overlaps", input_records(loaded), None)
        fh.attrs.update({"n_atoms": int(system.n_atoms), "frame": int(loaded.frame.index),
                         "force_field": str(system.force_field)})
        _write_residues(fh, system.residues)
        g = fh.create_group("overlaps")
        g.attrs.update({"options": json.dumps(report.options.as_dict()), "notes": json.dumps(list(report.notes)),
                        "n_atoms_searched": int(report.n_atoms_searched),
                        "n_candidate_pairs": int(report.n_candidates),
                        "search_distance": float(report.search_distance)})
        pairs = np.asarray(report.pairs, np.int64).reshape(-1, 2)
        _column(g, "atom_i", pairs[:, 0])
        _column(g, "atom_j", pairs[:, 1])
        _column(g, "residue_i", np.asarray(system.resindex[pairs[:, 0]], np.int32))
        _column(g, "residue_j", np.asarray(system.resindex[pairs[:, 1]], np.int32))
        _column(g, "atom_name_i", np.asarray(system.names[pairs[:, 0]], dtype=object))
        _column(g, "atom_name_j", np.asarray(system.names[pairs[:, 1]], dtype=object))
        for name in ("distance", "contact", "overlap", "lj"):
            _column(g, name, np.asarray(getattr(report, name), np.float64))
        exp6 = report.exp6 if len(report.exp6) == len(report) else np.full(len(report), np.nan)
        _column(g, "exp6", np.asarray(exp6, np.float64))
        _column(g, "is_14", np.asarray(report.is_14, bool))
        _column(g, "is_hbond", np.asarray(report.is_hbond, bool))
    _atomic_h5(path, write)
