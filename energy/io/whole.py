"""Molecules split across a periodic box, made whole before any bonded geometry is computed.

Simulation programs often write trajectories with every atom wrapped into the box, so a molecule
that straddles a face comes out in pieces.  Bonded terms are computed from the coordinates as
given (docs/physics.md), so the readers make each molecule whole first, with MDAnalysis'
``make_whole`` (``MDAnalysis.lib.mdamath``) over the bonds of the topology: every fragment
(connected set of bonded atoms) is rebuilt around its first atom.

It is done only when it is needed and possible: the frame has a cell that
:func:`energy.model.cell.check_cell` accepts, the topology has bonds, and at least one bond is
longer than both half the narrowest width of the cell and :data:`LONGEST_BOND_ANGSTROM` (no
covalent bond is; a wrapped one is about a box length).  The second condition keeps a crystal
structure in a narrow lattice cell, whose cell is no simulation box, as deposited.  Otherwise the
positions are returned untouched, bit for bit.
"""
from __future__ import annotations

import warnings

import numpy as np

from energy._kernels.pbc import box_matrix, perpendicular_widths
from energy.io.validation import COORDINATE_BOUND_ANGSTROM
from energy.model.cell import check_cell
from energy.model.system import Frame

#: No covalent bond is longer (A; the longest common ones, e.g. I-I or a stretched S-S, are under
#: 2.7 A: common practice).
LONGEST_BOND_ANGSTROM = 3.0


def split_bonds(positions, box, bonds) -> np.ndarray:
    """Indices of the bonds longer than half the narrowest width of ``box`` and than
    :data:`LONGEST_BOND_ANGSTROM`.

    Parameters
    ----------
    positions : (n_atoms, 3) float64, A.
    box : (6,) float64, ``[a, b, c, alpha, beta, gamma]`` (A, degrees).
    bonds : (n_bonds, 2) intp atom indices.

    Returns
    -------
    (k,) intp: rows of ``bonds`` that cross the box as the coordinates stand.
    """
    if len(bonds) == 0:
        return np.zeros(0, np.intp)
    half = 0.5 * float(perpendicular_widths(box_matrix(np.asarray(box, np.float64))).min())
    half = max(half, LONGEST_BOND_ANGSTROM)
    d = positions[bonds[:, 1]] - positions[bonds[:, 0]]
    return np.flatnonzero(np.einsum("ij,ij->i", d, d) > half * half)


def _fragment_universe(n_atoms: int, bonds):
    import MDAnalysis as mda
    universe = mda.Universe.empty(n_atoms, trajectory=True)
    universe.add_TopologyAttr("bonds", [tuple(map(int, b)) for b in bonds])
    fragments = [f for f in universe.atoms.fragments if len(f) > 1]
    return universe, fragments


def whole_positions(system, positions, box) -> np.ndarray:
    """``positions`` with every molecule of ``system`` whole (see the module docstring).

    Parameters
    ----------
    system : MolecularSystem
        Its ``bonds`` table is the bond graph.
    positions : (n_atoms, 3) float64, A.
    box : (6,) float64 or None, the frame's cell.

    Returns
    -------
    (n_atoms, 3) float64: the same array object when nothing had to be done, else a new array.
    """
    bonds = system.bonds.atoms
    cell = check_cell(box, system.n_atoms)
    if cell.box is None or len(bonds) == 0 or not len(split_bonds(positions, cell.box, bonds)):
        return positions
    from MDAnalysis.lib.mdamath import make_whole
    universe, fragments = system.derived("whole_fragments",
                                         lambda s: _fragment_universe(s.n_atoms, s.bonds.atoms))
    universe.atoms.positions = positions
    universe.dimensions = cell.box
    before = universe.atoms.positions.astype(np.float64)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for fragment in fragments:
            make_whole(fragment, inplace=True)
    # MDAnalysis works in float32: keep only the whole-cell translation of each atom it found and
    # apply it to the float64 positions, so the coordinates lose no precision.
    h = box_matrix(cell.box)
    moved = universe.atoms.positions.astype(np.float64) - before
    cells = np.rint(moved @ np.linalg.inv(h))
    return np.asarray(positions, np.float64) + cells @ h


def whole_frame(system, frame: Frame) -> Frame:
    """``frame`` with its molecules made whole (the same object when nothing had to be done).

    Parameters
    ----------
    system : MolecularSystem
        Its ``bonds`` table is the bond graph.
    frame : Frame

    Returns
    -------
    Frame

    Notes
    -----
    Coordinates that the geometry checks will refuse (non-finite, or beyond
    :data:`energy.io.validation.COORDINATE_BOUND_ANGSTROM`) are left as they are, so that the
    error names the atoms of the file, not atoms moved by the rebuilding.
    """
    x = frame.positions
    if not np.all(np.isfinite(x)) or (len(x) and np.abs(x).max() > COORDINATE_BOUND_ANGSTROM):
        return frame
    x = whole_positions(system, frame.positions, frame.box)
    if x is frame.positions:
        return frame
    return Frame(positions=x, box=frame.box, index=frame.index, source=frame.source)
