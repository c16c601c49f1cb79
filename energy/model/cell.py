"""Is a frame's unit cell a real periodic box?  The one rule, used wherever a cell could matter.

A structure file's cell is not always a simulation box.  Two cases are refused here
(docs/physics.md, "Periodic cells"):

* the PDB's placeholder ``CRYST1 1.000 1.000 1.000 90 90 90`` that NMR and cryo-EM entries carry
  (their own REMARK 215/247 says so: "PROTEIN DATA BANK CONVENTIONS REQUIRE THAT CRYST1 AND SCALE
  RECORDS BE INCLUDED, BUT THE VALUES ON THESE RECORDS ARE MEANINGLESS", e.g. 2JUY, 5A7U);
* a cell too small for its atoms: less than :data:`MIN_VOLUME_PER_ATOM` A^3 per atom.  Liquid
  water has about 10 A^3 per atom (30 A^3 per molecule, common practice) and diamond, among the
  densest solids, 5.7 A^3 per atom (a = 3.567 A, 8 atoms per cubic cell); a floor of 2 A^3 is
  well below any condensed matter, so a cell under it cannot be the periodic box of these atoms.

Bonded terms never use a cell (docs/physics.md); this rule only decides whether nonbonded pairs
use the minimum image, and whether molecules split across the box are made whole on reading.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Smallest volume per atom (A^3) of a cell accepted as the periodic box of its atoms.
MIN_VOLUME_PER_ATOM = 2.0
#: The PDB's placeholder cell edge (A) of entries without a crystal lattice.
PLACEHOLDER_EDGE = 1.0


@dataclass(frozen=True)
class CellCheck:
    """The outcome of :func:`check_cell`.

    ``box``: the cell ``[a, b, c, alpha, beta, gamma]`` (A, degrees) if it may be used, else None.
    ``note``: why the file's cell is ignored ("" when it is used or there is none).
    """

    box: np.ndarray | None
    note: str = ""


def cell_volume(box) -> float:
    """Volume of a unit cell.

    Parameters
    ----------
    box : (6,) float64
        The cell ``[a, b, c, alpha, beta, gamma]`` (A, degrees).

    Returns
    -------
    float
        Volume, A^3.
    """
    a, b, c = (float(v) for v in box[:3])
    ca, cb, cg = np.cos(np.radians(np.asarray(box[3:6], np.float64)))
    return float(a * b * c * np.sqrt(max(1.0 - ca * ca - cb * cb - cg * cg + 2.0 * ca * cb * cg, 0.0)))


def is_placeholder_cell(box) -> bool:
    """True for the PDB's 1 A x 1 A x 1 A placeholder (to the 3 decimals CRYST1 holds).

    Parameters
    ----------
    box : (6,) float64
        The cell ``[a, b, c, alpha, beta, gamma]`` (A, degrees).

    Returns
    -------
    bool
    """
    return bool(np.all(np.abs(np.asarray(box[:3], np.float64) - PLACEHOLDER_EDGE) < 5e-4))


def check_cell(box, n_atoms: int) -> CellCheck:
    """Decide whether ``box`` may serve as the periodic cell of ``n_atoms`` atoms.

    Parameters
    ----------
    box : (6,) float64 or None
        ``[a, b, c, alpha, beta, gamma]`` in A and degrees, as MDAnalysis gives it.
    n_atoms : int
        Atoms of the system the cell would hold.

    Returns
    -------
    CellCheck
        The cell (or None) and, if the file's cell is refused, a one-line note saying why.
    """
    if box is None:
        return CellCheck(None)
    box = np.asarray(box, np.float64)
    if is_placeholder_cell(box):
        return CellCheck(None, "unit cell ignored: CRYST1 1 x 1 x 1 A is the PDB's placeholder "
                               "for entries without a crystal lattice (NMR, cryo-EM)")
    volume = cell_volume(box)
    if n_atoms > 0 and volume < MIN_VOLUME_PER_ATOM * n_atoms:
        return CellCheck(None, f"unit cell ignored: {box[0]:g} x {box[1]:g} x {box[2]:g} A "
                               f"({volume:.4g} A^3) leaves {volume / n_atoms:.3g} A^3 per atom for "
                               f"{n_atoms} atoms, below the {MIN_VOLUME_PER_ATOM:g} A^3 floor of "
                               "any real periodic box")
    return CellCheck(box)


def nonbonded_cell(box, n_atoms: int, use_periodic: bool = True) -> CellCheck:
    """The cell nonbonded pairs may use.

    :func:`check_cell` of ``box``, or none at all when the settings ask to ignore cells
    (``use_periodic`` False, ``--no-periodic``: then no note).

    Parameters
    ----------
    box : (6,) float64 or None
        ``[a, b, c, alpha, beta, gamma]`` in A and degrees.
    n_atoms : int
        Atoms of the system the cell would hold.
    use_periodic : bool
        Whether the settings allow a periodic cell.

    Returns
    -------
    CellCheck
    """
    return check_cell(box, n_atoms) if use_periodic else CellCheck(None)
