"""Residue-level neighbour search: which residue pairs can hold an atom pair within the cutoff.

Each residue is bounded by a sphere (centre, radius) computed from atoms made whole around the
residue's first atom.  A residue pair is a candidate when the centre distance is below
``cutoff + r_I + r_J``.  Atom pairs are then tested exactly in the kernel, so this step may
over-include but never miss a pair.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from .errors import SettingsError
from .geometry import minimum_image


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
    disp = minimum_image(positions - anchor, box)
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


def all_residue_pairs(n_residues: int) -> np.ndarray:
    """Every pair i <= j, as an (n*(n+1)/2, 2) intp array."""
    i, j = np.triu_indices(n_residues)
    return np.stack([i, j], axis=1).astype(np.intp)


def check_periodic_box(box, cutoff: float) -> np.ndarray:
    """Validate a box for minimum-image use with ``cutoff``; return its edge lengths."""
    if not np.allclose(box[3:], 90.0):
        raise SettingsError(
            "triclinic unit cells with a cutoff are not supported yet; compute without a cutoff, "
            "or ignore the cell with --no-periodic")
    lengths = np.asarray(box[:3], dtype=np.float64)
    if np.any(lengths < 2.0 * cutoff):
        raise SettingsError(f"the unit cell ({lengths[0]:.1f} x {lengths[1]:.1f} x {lengths[2]:.1f} A) "
                            f"is smaller than twice the cutoff ({cutoff:g} A); use a shorter cutoff "
                            "or --no-periodic")
    return lengths


def candidate_residue_pairs(centers, radii, cutoff: float, box_lengths=None) -> np.ndarray:
    """Residue pairs (i <= j) whose bounding spheres come within ``cutoff``.

    Most residues are small (water, ions); a k-d tree query at ``cutoff + 2 * r_small`` finds
    their pairs, and the few larger residues are searched one by one with their own radius.
    """
    n = len(centers)
    if n == 0:
        return np.zeros((0, 2), np.intp)
    pts = centers.copy()
    if box_lengths is not None:
        pts = pts - box_lengths * np.floor(pts / box_lengths)
        pts = np.minimum(pts, np.nextafter(box_lengths, 0))  # boxsize needs [0, L)
        tree = cKDTree(pts, boxsize=box_lengths)
    else:
        tree = cKDTree(pts)
    r_small = float(np.quantile(radii, 0.9))
    r_max = float(radii.max())
    chunks = [tree.query_pairs(cutoff + 2.0 * r_small, output_type="ndarray").astype(np.intp)]
    big = np.flatnonzero(radii > r_small)
    for i in big:
        partners = np.asarray(tree.query_ball_point(pts[i], cutoff + radii[i] + r_max), np.intp)
        partners = partners[partners != i]
        chunks.append(np.stack([np.full(len(partners), i, np.intp), partners], axis=1))
    pairs = np.concatenate(chunks)
    pairs = np.sort(pairs, axis=1)
    d = pts[pairs[:, 1]] - pts[pairs[:, 0]]
    if box_lengths is not None:
        d -= box_lengths * np.round(d / box_lengths)
    dist = np.sqrt(np.einsum("ij,ij->i", d, d))
    pairs = pairs[dist < cutoff + radii[pairs[:, 0]] + radii[pairs[:, 1]]]
    diag = np.stack([np.arange(n), np.arange(n)], axis=1).astype(np.intp)
    pairs = np.concatenate([diag, pairs])
    keys = np.unique(pairs[:, 0].astype(np.int64) * n + pairs[:, 1])
    return np.stack([keys // n, keys % n], axis=1).astype(np.intp)
