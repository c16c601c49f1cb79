"""Residues as groups of atoms: atom lists per residue and bounding spheres.

Each residue is bounded by a sphere (centre, radius) computed from atoms made whole around the
residue's first atom.  A residue pair is examined when the centre distance is below
``cutoff + r_I + r_J`` (:mod:`energy.cells`); atom pairs are then tested exactly in the kernel,
so the search may over-include but never miss a pair.
"""
from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from .pbc import minimum_image_vectors


@dataclass(frozen=True)
class ResidueAtoms:
    """Atoms grouped by residue: ``atoms[ptr[r]:ptr[r+1]]`` are the atoms of residue ``r``."""

    ptr: np.ndarray    # (n_residues + 1,) intp
    atoms: np.ndarray  # (n_atoms,) intp

    @classmethod
    def from_resindex(cls, resindex: np.ndarray, n_residues: int) -> "ResidueAtoms":
        order = np.argsort(resindex, kind="stable").astype(np.intp)
        counts = np.bincount(resindex, minlength=n_residues)
        ptr = np.zeros(n_residues + 1, np.intp)
        np.cumsum(counts, out=ptr[1:])
        return cls(ptr, order)


def residue_spheres(positions, residue_atoms: ResidueAtoms, resindex, box=None):
    """Centre (n_res, 3) and radius (n_res,) of each residue's bounding sphere (A)."""
    first = residue_atoms.atoms[residue_atoms.ptr[:-1]]
    anchor = positions[first][resindex]
    disp = minimum_image_vectors(positions - anchor, box)
    n_res = len(first)
    counts = np.diff(residue_atoms.ptr).astype(np.float64)
    mean = np.zeros((n_res, 3))
    for axis in range(3):
        mean[:, axis] = np.bincount(resindex, weights=disp[:, axis], minlength=n_res) / counts
    centers = positions[first] + mean
    spread = disp - mean[resindex]
    dist = np.sqrt(np.einsum("ij,ij->i", spread, spread))
    radii = np.zeros(n_res)
    np.maximum.at(radii, resindex, dist)
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
