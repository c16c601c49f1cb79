"""The alanine scan in the result file (``tessera hotspots --out``; kind ``"hotspots"``).

Layout (docs/result-file.md): the common groups (``inputs``, ``settings``, ``residues``) and a
``hotspots`` group with one row per scanned residue in rank order.  Read back by
:func:`energy.output.result_file.read_result` (``StoredResult.hotspots``).
"""
from __future__ import annotations

import json
import os

import numpy as np

from energy.analysis.hotspots import HotspotScan
from energy.errors import EnergyError
from energy.output.result_file import _atomic_h5, _column, _write_header, _write_residues, input_records


def write_hotspot_result(path, loaded, scan: HotspotScan) -> None:
    """Write an alanine scan (``tessera hotspots --out``).

    Parameters
    ----------
    path : str or os.PathLike
        Output ``.h5`` file (replaced atomically).
    loaded : LoadedSystem
        The wild type that was scanned (residues, input files).
    scan : HotspotScan
        The scan.

    Returns
    -------
    None

    Raises
    ------
    EnergyError
        If a value of the scan is not finite (nothing is written).
    """
    values = [scan.removed, scan.rebuilt, scan.lost_energy, *scan.delta.values(),
              np.array(list(scan.wild_type.values()))]
    if not all(np.isfinite(np.asarray(v, float)).all() for v in values):
        raise EnergyError(f"{os.fspath(path)}: non-finite values in the alanine scan; nothing written")

    def write(fh):
        _write_header(fh, "hotspots", input_records(loaded), scan.settings)
        fh.attrs.update({"n_atoms": int(loaded.system.n_atoms), "frame": int(loaded.frame.index),
                         "force_field": str(loaded.system.force_field)})
        _write_residues(fh, loaded.system.residues)
        g = fh.create_group("hotspots")
        g.attrs.update({"select_a": scan.select_a, "select_b": scan.select_b,
                        "interface_angstrom": float(scan.interface_angstrom),
                        "terms": json.dumps(list(scan.delta)), "wild_type": json.dumps(scan.wild_type)})
        _column(g, "residue", np.asarray(scan.residue, np.int32))
        for name in ("side", "resname", "side_chain_class", "method", "flag"):
            _column(g, name, np.asarray(getattr(scan, name), dtype=object))
        for term, v in scan.delta.items():
            _column(g, f"delta_{term}", np.asarray(v, np.float64))
        _column(g, "removed", np.asarray(scan.removed, np.float64))
        _column(g, "rebuilt", np.asarray(scan.rebuilt, np.float64))
        _column(g, "lost_partner", np.asarray(scan.lost_partner, np.int32))
        _column(g, "lost_energy", np.asarray(scan.lost_energy, np.float64))
        _column(g, "skipped_residue", np.array([r for r, _ in scan.skipped], np.int32))
        _column(g, "skipped_reason", np.array([why for _, why in scan.skipped], dtype=object))
    _atomic_h5(path, write)
