"""Exports of what the window shows (figures through :mod:`app.figures`, tables through
:mod:`energy.output.report` / :mod:`energy.analysis.compare`).  Every file is written atomically."""
from __future__ import annotations

import io
import os

import numpy as np

from app import figures
from app.state.map_raster import REDUCTION, raster
from energy.analysis.ordering import ORDERS
from energy.output import report
from energy.output.comparison import difference_csv
from energy.output.files import atomic_write_text
from energy.units import ENERGY_UNITS

#: B-factor column: 6.2 format, so values are clipped to this range (display unit).
BFACTOR_RANGE = (-999.99, 9999.99)


def _settings(window):
    """The settings of what is on screen (a computed snapshot, or a result file)."""
    if window.snapshot is not None:
        return window.snapshot.result.settings
    return window.dataset.stored.settings


def _title(window) -> str:
    settings = _settings(window)
    return f"{window.dataset.title}\n{settings.describe() if settings is not None else ''}"


def matrix_csv(labels, matrix, unit: str) -> str:
    out = io.StringIO()
    out.write(",".join([f"residue ({unit})", *labels]) + "\n")
    for lab, row in zip(labels, matrix):
        out.write(",".join([lab, *(repr(float(v)) for v in row)]) + "\n")
    return out.getvalue()


def pdb_with_bfactors(system, frame, per_residue, quantity: str, unit: str) -> str:
    """PDB text with each atom's B-factor set to its residue's energy (clipped to fit)."""
    lo, hi = BFACTOR_RANGE
    # REMARK 1 holds references in the PDB format; 99 lies in the block the format leaves without
    # a defined content (wwPDB PDB format 2.3 index: "REMARKs 5-99"), so the text is free remarks
    clipped = int(np.sum((per_residue < lo) | (per_residue > hi)))
    lines = [f"REMARK  99 TESSERA PER-RESIDUE {quantity.upper()} ENERGY IN B-FACTOR COLUMN, {unit}",
             f"REMARK  99 VALUES CLIPPED TO [{lo}, {hi}]: {clipped} RESIDUE(S)"]
    r = system.residues
    x = frame.positions
    serial = 0
    prev_chain = None
    for a in range(system.n_atoms):
        k = system.resindex[a]
        chain = (str(r.chain[k]).strip() or " ")[:1]
        if prev_chain is not None and chain != prev_chain:
            lines.append("TER")
        prev_chain = chain
        serial += 1
        name = str(system.names[a])
        name = f" {name:<3}" if len(name) < 4 else name[:4]
        b = min(max(float(per_residue[k]), lo), hi)
        el = str(system.elements[a])[:2].upper()
        lines.append(f"ATOM  {serial % 100000:>5} {name}{' '}{str(r.resname[k])[:3]:>3} {chain}"
                     f"{int(r.resid[k]) % 10000:>4}{(str(r.icode[k]) or ' ')[:1]}   "
                     f"{x[a, 0]:8.3f}{x[a, 1]:8.3f}{x[a, 2]:8.3f}{1.0:6.2f}{b:6.2f}          {el:>2}")
    lines += ["TER", "END"]
    return "\n".join(lines) + "\n"


def export(window, what: str, path: str) -> None:
    ds, snap, mp = window.dataset, window.snapshot, window.map
    if ds is None:
        raise ValueError("nothing to export: no system is loaded")
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise OSError(f"the folder {folder} does not exist")
    unit = window.unit
    order_note = f"order: {ORDERS[mp.order_mode].lower()}"
    if what == "map":
        matrix, labels, chains = mp.matrix, ds.labels[mp.order], ds.chains[mp.order]
        if mp.large:   # no dense matrix: the whole map rastered, each pixel labelled by its first row
            r = raster(mp.position[ds.pairs.pair_i], mp.position[ds.pairs.pair_j],
                       ds.pairs.column(mp.quantity) * mp.factor, ds.n)
            matrix, labels, chains = r.image, labels[::r.bin_rows], chains[::r.bin_rows]
            order_note += f"; {REDUCTION} of {r.bin_rows} x {r.bin_cols} residues"
        fig = figures.map_figure(matrix, labels, chains, _title(window),
                                 unit, mp.quantity, limit=mp.level, difference=ds.is_difference,
                                 order_note=order_note)
        figures.save_figure(fig, path)
    elif what == "pairs":
        if ds.is_difference:
            text = difference_csv(ds.comparison)
        elif snap is not None:
            text = report.pair_table_csv(snap.system, snap.result)
        else:
            text = report.pair_rows_csv(ds.labels, ds.pairs)
        atomic_write_text(path, text)
    elif what == "matrix":
        m = ds.pairs.dense(mp.quantity) * ENERGY_UNITS[unit]
        atomic_write_text(path, matrix_csv(list(ds.labels), m, unit))
    elif what == "report":
        if snap is not None:
            files = [snap.spec.structure, snap.spec.coords, *snap.spec.params]
        else:
            files = [f"{r.role}: {r.path}" for r in ds.stored.inputs] + [f"result file: {ds.stored.path}"]
        notes = []
        if ds.is_difference and window.second is not None:
            sec = window.second.spec
            files += ["second: " + sec.structure, sec.coords]
            c = ds.comparison
            notes = [f"Compared: {len(c.match)} residues matched by chain and number; mutated: "
                     f"{', '.join(c.mutated_labels) or 'none'}; unmatched: "
                     f"{', '.join(c.unmatched_first_labels + c.unmatched_second_labels) or 'none'}"]
        figures.save_report(path, labels=ds.labels, chains=ds.chains, pairs=ds.pairs, totals=ds.totals,
                            settings=_settings(window), files=files, title=_title(window), unit=unit,
                            quantity=mp.quantity, percentile=mp.clip, order=mp.order,
                            order_note=order_note, difference=ds.is_difference, notes=notes)
    elif what == "bfactor":
        if snap is None:
            raise ValueError("the B-factor structure needs the atoms: recompute the result from its inputs first")
        target, per = snap, ds.pairs.per_residue(mp.quantity)
        if ds.is_difference:  # colour the second structure by the change
            target = window.second
            full = np.zeros(target.system.n_residues)
            full[ds.comparison.match.second] = per
            per = full
        text = pdb_with_bfactors(target.system, target.frame, per * ENERGY_UNITS[unit], mp.quantity, unit)
        atomic_write_text(path, text)
    else:
        raise ValueError(f"unknown export {what!r}")
