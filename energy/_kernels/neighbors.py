"""Residues as groups of atoms: atom lists per residue and bounding spheres.

Each residue is bounded by a sphere (centre, radius) computed from atoms made whole around the
residue's first atom.  A residue pair is examined when the centre distance is below
``cutoff + r_I + r_J`` (:mod:`energy._kernels.cells`); atom pairs are then tested exactly in the kernel,
so the search may over-include but never miss a pair.
"""
from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from energy._kernels.pbc import box_matrix, is_orthorhombic, minimum_image


@dataclass(frozen=True)
class ResidueAtoms:
    """Atoms grouped by residue: ``atoms[ptr[r]:ptr[r+1]]`` are the atoms of residue ``r``."""

    ptr: np.ndarray    # (n_residues + 1,) intp
    atoms: np.ndarray  # (n_atoms,) intp

    @classmethod
    def from_resindex(cls, resindex: np.ndarray, n_residues: int) -> ResidueAtoms:
        """Group atoms by residue.

        Parameters
        ----------
        resindex : (n_atoms,) integer
            Residue index of each atom, in ``[0, n_residues)``.
        n_residues : int
            Number of residues (residues without atoms get an empty range).

        Returns
        -------
        ResidueAtoms
            ``ptr`` (n_residues + 1,) intp and ``atoms`` (n_atoms,) intp, the atoms of each residue
            in their original order (stable sort).
        """
        order = np.argsort(resindex, kind="stable").astype(np.intp)
        counts = np.bincount(resindex, minlength=n_residues)
        ptr = np.zeros(n_residues + 1, np.intp)
        np.cumsum(counts, out=ptr[1:])
        return cls(ptr, order)


def residue_spheres(positions, residue_atoms: ResidueAtoms, box=None):
    """Centre (n_res, 3) and radius (n_res,) of each residue's bounding sphere (A).

    The residue's atoms are made whole around its first atom (minimum image when ``box`` is
    given); the centre is their mean, the radius the largest distance from it.

    Parameters
    ----------
    positions : (n_atoms, 3) float
        Atom positions, angstrom.
    residue_atoms : ResidueAtoms
        Atoms of each residue.
    box : (6,) float or None, optional
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees), or ``None`` (default).

    Returns
    -------
    centers : (n_res, 3) float64
        Sphere centres, angstrom (NaN for a residue without atoms).
    radii : (n_res,) float64
        Sphere radii, angstrom (NaN for a residue without atoms).
    """
    periodic = box is not None
    h = np.ascontiguousarray(box_matrix(np.asarray(box, np.float64))) if periodic else np.eye(3)
    return _spheres(np.ascontiguousarray(positions, np.float64), residue_atoms.ptr,
                    residue_atoms.atoms, h, periodic, is_orthorhombic(h))


@numba.njit(cache=True)
def _spheres(x, ptr, atoms, h, periodic, orthorhombic):
    """Per residue: atoms made whole around its first atom (minimum image), centre = their mean,
    radius = the largest distance from it."""
    n_res = len(ptr) - 1
    centers = np.empty((n_res, 3))
    radii = np.empty(n_res)
    for r in range(n_res):
        lo, hi = ptr[r], ptr[r + 1]
        if hi == lo:
            centers[r] = np.nan
            radii[r] = np.nan
            continue
        a0 = atoms[lo]
        mx = my = mz = 0.0
        for k in range(lo, hi):
            a = atoms[k]
            dx, dy, dz = x[a, 0] - x[a0, 0], x[a, 1] - x[a0, 1], x[a, 2] - x[a0, 2]
            if periodic:
                dx, dy, dz = minimum_image(dx, dy, dz, h, orthorhombic)
            mx += dx
            my += dy
            mz += dz
        n = hi - lo
        mx /= n
        my /= n
        mz /= n
        far = 0.0
        for k in range(lo, hi):
            a = atoms[k]
            dx, dy, dz = x[a, 0] - x[a0, 0], x[a, 1] - x[a0, 1], x[a, 2] - x[a0, 2]
            if periodic:
                dx, dy, dz = minimum_image(dx, dy, dz, h, orthorhombic)
            dx -= mx
            dy -= my
            dz -= mz
            far = max(far, np.sqrt(dx * dx + dy * dy + dz * dz))
        centers[r, 0] = x[a0, 0] + mx
        centers[r, 1] = x[a0, 1] + my
        centers[r, 2] = x[a0, 2] + mz
        radii[r] = far
    return centers, radii


@numba.njit(cache=True)
def spatial_layout(order, ptr, atoms):
    """Atom rows with the residues taken in ``order`` (each residue's atoms kept together; compiled).

    Parameters
    ----------
    order : (n_res,) integer
        The residues in the order their atoms are to be laid out.
    ptr : (n_res + 1,) intp
        ``ResidueAtoms.ptr``.
    atoms : (n_atoms,) intp
        ``ResidueAtoms.atoms``.

    Returns
    -------
    atom_of : (n_atoms,) intp
        System atom index of each row.
    res_start, res_end : (n_res,) intp
        Residue r's atoms are the system atoms ``atom_of[res_start[r]:res_end[r]]``.
    """
    n_res = len(ptr) - 1
    atom_of = np.empty(len(atoms), np.intp)
    res_start = np.empty(n_res, np.intp)
    res_end = np.empty(n_res, np.intp)
    k = 0
    for r in order:
        res_start[r] = k
        for a in range(ptr[r], ptr[r + 1]):
            atom_of[k] = atoms[a]
            k += 1
        res_end[r] = k
    return atom_of, res_start, res_end
