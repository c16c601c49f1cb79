"""Outputs of a solvated system with its solvent as blocks (:mod:`energy.decomposition.blocks`).

* JSON: ``pairs`` keeps the solute-solute rows (original residue indices); ``blocks`` names each
  block and its size; ``block_pairs`` holds every entry with a block: a solute residue with a
  block (``residue`` = its index), a block with itself (``residue`` null, ``other_block`` equal
  to ``block``: the solvent-solvent energy) or the water-ion pair.
* CSV: ``residue_pairs.csv`` lists solute pairs and block entries; a block's ``i``/``j`` is
  empty and its label is the block's (``Water (4,611)``).  ``residues.csv`` lists the solute
  residues and then one row per block (``index``, ``chain``, ``resid`` and ``icode`` empty,
  ``resname`` the block's label).
"""
from __future__ import annotations

import csv
import io

import numpy as np

from energy.model.residue_classes import SOLVENT_CLASSES
from energy.terms.registry import TERMS


def solute_rows(rp, classes) -> np.ndarray:
    """Rows of the full table ``rp`` whose two residues are both solute.

    Parameters
    ----------
    rp : ResiduePairEnergies
        The full residue-pair table.
    classes : (n_residues,) str array
        Residue classes.

    Returns
    -------
    (n_rows,) intp
        Row indices into ``rp``.
    """
    solvent = np.isin(np.asarray(classes, dtype=object), SOLVENT_CLASSES)
    return np.flatnonzero(~solvent[rp.pair_i] & ~solvent[rp.pair_j])


def block_records(blocked, classes) -> tuple[list, list]:
    """(``blocks``, ``block_pairs``) of the JSON document.

    Parameters
    ----------
    blocked : BlockedPairs
        The table over solute residues and blocks.
    classes : (n_residues,) str array
        Residue classes of the full system.

    Returns
    -------
    (list of dict, list of dict)
        ``blocks``: ``name`` (class), ``label``, ``n_residues``; ``block_pairs``: ``residue``
        (original index or None), ``block``, ``other_block`` (None for a solute residue), every
        term, ``total`` (kcal/mol) and ``min_heavy_distance`` (A, None where none was examined).
    """
    classes = np.asarray(classes, dtype=object)
    n_solute = blocked.n_solute
    block_of_row = {}
    blocks = []
    for r in range(n_solute, len(blocked.labels)):
        name = str(classes[blocked.members[r][0]])
        block_of_row[r] = name
        blocks.append({"name": name, "label": str(blocked.labels[r]), "n_residues": int(len(blocked.members[r]))})
    rp = blocked.pairs
    total = rp.total
    out = []
    for k in np.flatnonzero(rp.pair_j >= n_solute):
        i, j = int(rp.pair_i[k]), int(rp.pair_j[k])
        d = float(rp.min_heavy_distance[k])
        out.append({"residue": int(blocked.members[i][0]) if i < n_solute else None,
                    "block": block_of_row[j],
                    "other_block": block_of_row[i] if i >= n_solute else None,
                    **{t: float(rp.values[t][k]) for t in TERMS}, "total": float(total[k]),
                    "min_heavy_distance": d if np.isfinite(d) else None})
    return blocks, out


def blocked_residue_csv(system, blocked) -> str:
    """``residues.csv`` of a blocked table: per-row totals of the solute residues, then the blocks.

    Parameters
    ----------
    system : MolecularSystem
        The full system (residue labels and classes).
    blocked : BlockedPairs
        The table over solute residues and solvent blocks.

    Returns
    -------
    str
        CSV text with the columns of :func:`energy.output.report.residue_table_csv`; a block's
        ``index``, ``chain``, ``resid`` and ``icode`` are empty, its ``resname`` is its label.
        Values are half of each off-diagonal entry and all of the diagonal (kcal/mol, 6 decimals),
        so the rows sum to the totals.
    """
    rp = blocked.pairs
    per = {t: rp.per_residue(t) for t in (*TERMS, "total")}
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["index", "chain", "resid", "icode", "resname", "class", *TERMS, "total"])
    r, classes = system.residues, system.residue_classes
    for row in range(len(blocked.labels)):
        first = int(blocked.members[row][0])
        if row < blocked.n_solute:
            head = [first, r.chain[first], int(r.resid[first]), r.icode[first], r.resname[first]]
        else:
            head = ["", "", "", "", blocked.labels[row]]
        w.writerow([*head, classes[first], *(f"{per[t][row]:.6f}" for t in (*TERMS, "total"))])
    return out.getvalue()


def blocked_pair_csv(blocked) -> str:
    """``residue_pairs.csv`` of a blocked table (module docstring).

    Parameters
    ----------
    blocked : BlockedPairs
        The table over solute residues and solvent blocks.

    Returns
    -------
    str
        CSV text: ``i``, ``j`` (original residue index; empty for a block), ``label_i``,
        ``label_j``, every term, ``total`` (kcal/mol, 6 decimals), ``min_heavy_distance`` (A).
    """
    rp = blocked.pairs
    total = rp.total
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["i", "j", "label_i", "label_j", *TERMS, "total", "min_heavy_distance"])
    n_solute = blocked.n_solute
    index = lambda r: int(blocked.members[r][0]) if r < n_solute else ""  # noqa: E731
    nonzero = np.any([rp.values[t] != 0 for t in TERMS], axis=0) if len(rp) else np.zeros(0, bool)
    for k in np.flatnonzero(nonzero):
        i, j = int(rp.pair_i[k]), int(rp.pair_j[k])
        d = rp.min_heavy_distance[k]
        w.writerow([index(i), index(j), blocked.labels[i], blocked.labels[j],
                    *(f"{rp.values[t][k]:.6f}" for t in TERMS), f"{total[k]:.6f}",
                    f"{d:.3f}" if np.isfinite(d) else ""])
    return out.getvalue()
