"""Geometry checks run before any energy is computed: one module, called at the boundary.

:func:`check_frame` is called by :func:`energy.decomposition.pipeline.compute_steps` (so by every
route: the command line, the window, trajectories), by the clash finder and by the selection
interaction.  It refuses, with a :class:`~energy.errors.GeometryError` that names the atoms or the
residue:

* a unit cell that is not a cell: non-finite values, an edge <= 0 (unless all three are 0, the
  "no cell" of MDAnalysis), angles outside the open interval (0, 180) degrees, angles that form
  no cell (zero or imaginary volume), or a cell thinner than :data:`MIN_CELL_WIDTH_ANGSTROM`;
* coordinates that are not finite or lie beyond :data:`COORDINATE_BOUND_ANGSTROM` of the origin
  on any axis;
* a residue with an atom more than :data:`RESIDUE_RADIUS_LIMIT_ANGSTROM` from the residue's
  centre (atoms made whole around the residue's first atom when a cell is known): the residue is
  broken or was wrapped across a periodic cell, and the cutoff search would examine every residue
  pair of the system for it;
* two atoms closer than :data:`COINCIDENT_ANGSTROM` (under the minimum image when a cell is
  known): Coulomb and Lennard-Jones energies diverge there.
"""
from __future__ import annotations

import numpy as np

from energy._kernels.coincident import closest_pair_below
from energy._kernels.neighbors import ResidueAtoms, residue_spheres
from energy._kernels.pbc import box_matrix, minimum_image_vectors, perpendicular_widths
from energy.errors import GeometryError, InputMismatchError
from energy.model.cell import check_cell as plausible_cell

#: Two atoms closer than this are coincident (A).  Any real contact is > 0.5 A; at 0.01 A every
#: energy is still finite in float64 (common practice for the floor).
COINCIDENT_ANGSTROM = 0.01
#: Largest |coordinate| on any axis (A): 10 micrometres, beyond every molecular model, and small
#: enough that no energy term of bounded parameters overflows.
COORDINATE_BOUND_ANGSTROM = 1.0e5
#: Largest distance of an atom from its residue's centre (A).  The largest residues of common
#: force fields (lipids, cardiolipin, detergents, large ligands) stay below 30 A.
RESIDUE_RADIUS_LIMIT_ANGSTROM = 50.0
#: Thinnest unit cell accepted (A): twice the coincidence floor, below which images overlap.
MIN_CELL_WIDTH_ANGSTROM = 2 * COINCIDENT_ANGSTROM


def _cell_text(box) -> str:
    return " ".join(f"{v:g}" for v in np.asarray(box, float).ravel()[:6])


def check_cell(box, where: str = "") -> None:
    """Refuse a unit cell ``[a, b, c, alpha, beta, gamma]`` (A, degrees) that is not a cell.

    ``None`` and all-zero edges mean "no cell" and pass.

    Parameters
    ----------
    box : (6,) float64 or None
        The cell, A and degrees.
    where : str
        Prefix of the messages (e.g. the file).

    Raises
    ------
    GeometryError
        Non-finite values, an edge <= 0, an angle outside (0, 180), angles that form no cell, a
        width below :data:`MIN_CELL_WIDTH_ANGSTROM`, or an edge beyond the coordinate bound.
    """
    if box is None:
        return
    prefix = f"{where}: " if where else ""
    arr = np.asarray(box, dtype=np.float64).ravel()
    if arr.shape != (6,):
        raise GeometryError(f"{prefix}a unit cell needs 6 values (a b c alpha beta gamma), got {arr.size}")
    if not np.all(np.isfinite(arr)):
        raise GeometryError(f"{prefix}the unit cell ({_cell_text(arr)}) has non-finite values")
    edges, angles = arr[:3], arr[3:]
    if np.all(edges == 0):
        return
    if np.any(edges <= 0) or np.any(edges > 2 * COORDINATE_BOUND_ANGSTROM):
        raise GeometryError(f"{prefix}the unit cell ({_cell_text(arr)}) has an edge outside "
                            f"0 < edge <= {2 * COORDINATE_BOUND_ANGSTROM:g} A")
    if np.any(angles <= 0) or np.any(angles >= 180):
        raise GeometryError(f"{prefix}the unit cell ({_cell_text(arr)}) has an angle outside the open "
                            "interval (0, 180) degrees")
    ca, cb, cg = np.cos(np.radians(angles))
    volume_factor = 1.0 - ca * ca - cb * cb - cg * cg + 2.0 * ca * cb * cg
    if not volume_factor > 1e-9:
        raise GeometryError(f"{prefix}the unit cell angles ({_cell_text(angles)} degrees) form no cell "
                            "(its volume would be zero or imaginary)")
    widths = perpendicular_widths(box_matrix(arr))
    if not np.all(widths >= MIN_CELL_WIDTH_ANGSTROM):
        raise GeometryError(f"{prefix}the unit cell ({_cell_text(arr)}) is thinner than "
                            f"{MIN_CELL_WIDTH_ANGSTROM:g} A")


def _atom_label(system, i: int) -> str:
    if system is None:
        return f"atom {i + 1}"
    return f"atom {i + 1} ({system.atom_label(i)})"


def check_positions(positions, system=None, where: str = "") -> None:
    """Refuse non-finite coordinates and coordinates beyond :data:`COORDINATE_BOUND_ANGSTROM`.

    Parameters
    ----------
    positions : (n_atoms, 3) float64 array, A
    system : MolecularSystem, optional
        Names the atoms in messages.
    where : str
        Prefix of the messages (e.g. the file).

    Raises
    ------
    InputMismatchError
        Non-finite coordinates.
    GeometryError
        Coordinates beyond :data:`COORDINATE_BOUND_ANGSTROM`.
    """
    prefix = f"{where}: " if where else ""
    x = np.asarray(positions, dtype=np.float64)
    bad = ~np.isfinite(x).all(axis=1)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputMismatchError(f"{prefix}{int(bad.sum())} atom(s) have non-finite coordinates, first: "
                                 f"{_atom_label(system, i)}")
    far = np.abs(x).max(axis=1) > COORDINATE_BOUND_ANGSTROM if len(x) else np.zeros(0, bool)
    if far.any():
        i = int(np.flatnonzero(far)[0])
        raise GeometryError(f"{prefix}{int(far.sum())} atom(s) lie beyond {COORDINATE_BOUND_ANGSTROM:g} A "
                            f"of the origin, first: {_atom_label(system, i)} at "
                            f"({', '.join(f'{v:.6g}' for v in x[i])})")


def check_residue_spans(positions, system, box=None) -> None:
    """Refuse a residue with an atom more than :data:`RESIDUE_RADIUS_LIMIT_ANGSTROM` from its centre.

    Atoms are made whole around the residue's first atom when ``box`` is given.

    Parameters
    ----------
    positions : (n_atoms, 3) float64
        Coordinates, A.
    system : MolecularSystem
        Its residues.
    box : (6,) float64 or None
        Unit cell (A, degrees).

    Raises
    ------
    GeometryError
        Naming the first such residue and its farthest atom.
    """
    res_atoms = ResidueAtoms.from_resindex(system.resindex, system.n_residues)
    if system.n_atoms == 0:
        return
    centers, radii = residue_spheres(positions, res_atoms, box)
    over = np.flatnonzero(np.nan_to_num(radii, nan=0.0) > RESIDUE_RADIUS_LIMIT_ANGSTROM)
    if not len(over):
        return
    r = int(over[0])
    members = res_atoms.atoms[res_atoms.ptr[r]:res_atoms.ptr[r + 1]]
    d = minimum_image_vectors(positions[members] - centers[r], box)
    far = int(members[int(np.argmax(np.einsum("ij,ij->i", d, d)))])
    raise GeometryError(
        f"residue {system.residues.label(r)} spreads {radii[r]:.1f} A from its centre (limit "
        f"{RESIDUE_RADIUS_LIMIT_ANGSTROM:g} A; farthest: {_atom_label(system, far)}"
        f"{'' if len(over) == 1 else f'; {len(over) - 1} more residue(s)'}): the residue is broken or "
        "was wrapped across a periodic cell; make molecules whole or give the cell")


def _wrapped_with_face_images(x, box):
    """Coordinates wrapped into the cell, plus images of the atoms within the coincidence floor of
    a face; returns (points, atom of each point)."""
    h = box_matrix(np.asarray(box, np.float64))
    frac = np.linalg.solve(h.T, x.T).T
    frac -= np.floor(frac)
    eps = COINCIDENT_ANGSTROM / perpendicular_widths(h)
    shifts = np.where(frac < eps, 1.0, np.where(frac > 1.0 - eps, -1.0, 0.0))
    near = np.flatnonzero(np.any(shifts != 0, axis=1))
    points, owners = [frac], [np.arange(len(x))]
    for mask in range(1, 8):
        axes = np.array([(mask >> k) & 1 for k in range(3)], bool)
        rows = near[np.all(shifts[near][:, axes] != 0, axis=1)]
        if len(rows):
            image = frac[rows].copy()
            image[:, axes] += shifts[rows][:, axes]
            points.append(image)
            owners.append(rows)
    return np.concatenate(points) @ h, np.concatenate(owners)


def _close_pair(points):
    """Two points closer than the floor (the numba sweep; a k-d tree when it is crowded)."""
    pair = closest_pair_below(points, COINCIDENT_ANGSTROM)
    if pair != "crowded":
        return pair
    from scipy.spatial import cKDTree
    order = np.lexsort((points[:, 2], points[:, 1], points[:, 0]))  # identical points first:
    same = np.flatnonzero(np.all(points[order][1:] == points[order][:-1], axis=1))  # a k-d tree
    if len(same):                                                   # cannot split them
        return int(order[same[0]]), int(order[same[0] + 1])
    d, idx = cKDTree(points).query(points, k=2, distance_upper_bound=COINCIDENT_ANGSTROM)
    close = np.flatnonzero(np.isfinite(d[:, 1]))
    return (int(close[0]), int(idx[close[0], 1])) if len(close) else None


def check_coincident_atoms(positions, system=None, box=None) -> None:
    """Refuse two atoms closer than :data:`COINCIDENT_ANGSTROM` (minimum image with ``box``).

    Parameters
    ----------
    positions : (n_atoms, 3) float64 array, A
    system : MolecularSystem, optional
        Names the atoms in messages.
    box : (6,) array or None
        The unit cell; images of atoms near a face are tested too.
    """
    x = np.ascontiguousarray(positions, dtype=np.float64)
    if len(x) < 2:
        return
    periodic = box is not None and not np.all(np.asarray(box)[:3] == 0)
    points, owners = _wrapped_with_face_images(x, box) if periodic else (x, np.arange(len(x)))
    found = _close_pair(points)
    if found is None:
        return
    i, j = sorted((int(owners[found[0]]), int(owners[found[1]])))
    d = float(np.linalg.norm(points[found[0]] - points[found[1]]))
    image = " (periodic images)" if periodic else ""
    raise GeometryError(f"{_atom_label(system, i)} and {_atom_label(system, j)} are {d:.4f} A apart{image}, "
                        f"closer than {COINCIDENT_ANGSTROM:g} A: coincident atoms give infinite energies; "
                        "check the coordinates")


def check_frame(system, frame) -> None:
    """Every check of this module on one frame of ``system``, cheapest first.

    Parameters
    ----------
    system : MolecularSystem
    frame : Frame
        Positions (n_atoms, 3) A and an optional cell.

    Raises
    ------
    InputMismatchError
        The atom counts differ, or a coordinate is not finite.
    GeometryError
        A degenerate cell, coordinates out of bounds, a spread residue or coincident atoms.
    """
    if frame.positions.shape[0] != system.n_atoms:
        raise InputMismatchError(f"the coordinates hold {frame.positions.shape[0]} atoms but the "
                                 f"topology has {system.n_atoms}")
    where = frame.source or ""
    check_cell(frame.box, where)
    check_positions(frame.positions, system, where)
    # the minimum image only in a cell the engine would use (not the PDB's 1 A placeholder)
    box = plausible_cell(frame.box, system.n_atoms).box
    check_residue_spans(frame.positions, system, box)
    check_coincident_atoms(frame.positions, system, box)


__all__ = ["COINCIDENT_ANGSTROM", "COORDINATE_BOUND_ANGSTROM", "RESIDUE_RADIUS_LIMIT_ANGSTROM",
           "MIN_CELL_WIDTH_ANGSTROM", "check_cell", "check_positions", "check_residue_spans",
           "check_coincident_atoms", "check_frame"]
