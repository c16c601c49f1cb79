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
        order = np.argsort(resindex, kind="stable").astype(np.intp)
        counts = np.bincount(resindex, minlength=n_residues)
        ptr = np.zeros(n_residues + 1, np.intp)
        np.cumsum(counts, out=ptr[1:])
        return cls(ptr, order)


def residue_spheres(positions, residue_atoms: ResidueAtoms, box=None):
    """Centre (n_res, 3) and radius (n_res,) of each residue's bounding sphere (A)."""
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
    """Atom rows with the residues taken in ``order`` (each residue's atoms kept together):
    ``(atom_of, res_start, res_end)``, where residue r's atoms are the system atoms
    ``atom_of[res_start[r]:res_end[r]]``."""
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
