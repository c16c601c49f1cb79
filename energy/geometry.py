"""Vector geometry on (n, 3) arrays: periodic minimum image, distances, angles, dihedrals.

All lengths in angstrom, angles in radians.  Dihedral angles follow the IUPAC convention
(trans = 180 deg, range (-180, 180]) as in every common force field.
"""
from __future__ import annotations

import numpy as np


def box_matrix(box) -> np.ndarray:
    """Unit-cell vectors as rows of a (3, 3) matrix from ``[a, b, c, alpha, beta, gamma]``.

    Standard crystallographic construction: a along x, b in the xy plane.
    """
    a, b, c = box[:3]
    alpha, beta, gamma = np.radians(box[3:6])
    ax = np.array([a, 0.0, 0.0])
    bx = np.array([b * np.cos(gamma), b * np.sin(gamma), 0.0])
    cx_ = c * np.cos(beta)
    cy_ = c * (np.cos(alpha) - np.cos(beta) * np.cos(gamma)) / np.sin(gamma)
    cz_ = np.sqrt(max(c * c - cx_ * cx_ - cy_ * cy_, 0.0))
    m = np.array([ax, bx, [cx_, cy_, cz_]])
    m[np.abs(m) < 1e-9] = 0.0
    return m


def minimum_image(d: np.ndarray, box) -> np.ndarray:
    """Apply the minimum-image convention to displacement vectors ``d`` (n, 3).

    ``box`` is ``None`` (returns ``d``) or ``[a, b, c, alpha, beta, gamma]``.  For triclinic cells
    this is the fractional-coordinate rounding, exact for vectors shorter than half the smallest
    cell width (bonded geometry always is).
    """
    if box is None:
        return d
    m = box_matrix(box)
    if np.allclose(box[3:], 90.0):
        lengths = np.diag(m)
        return d - lengths * np.round(d / lengths)
    frac = d @ np.linalg.inv(m)
    frac -= np.round(frac)
    return frac @ m


def _rowdot(a, b):
    return np.einsum("ij,ij->i", a, b)


def bond_lengths(x, i, j, box=None):
    """Distances between atoms ``i`` and ``j`` (index arrays), A."""
    d = minimum_image(x[j] - x[i], box)
    return np.sqrt(_rowdot(d, d))


def bond_angles(x, i, j, k, box=None):
    """Angles i-j-k at the vertex ``j``, radians in [0, pi]."""
    u = minimum_image(x[i] - x[j], box)
    v = minimum_image(x[k] - x[j], box)
    cos = _rowdot(u, v) / np.sqrt(_rowdot(u, u) * _rowdot(v, v))
    return np.arccos(np.clip(cos, -1.0, 1.0))


def dihedral_angles(x, i, j, k, l, box=None):
    """Dihedral angles i-j-k-l, radians in (-pi, pi] (IUPAC sign convention)."""
    b1 = minimum_image(x[j] - x[i], box)
    b2 = minimum_image(x[k] - x[j], box)
    b3 = minimum_image(x[l] - x[k], box)
    n1 = np.cross(b1, b2)
    n2 = np.cross(b2, b3)
    b2_len = np.sqrt(_rowdot(b2, b2))
    y = b2_len * _rowdot(b1, n2)
    xx = _rowdot(n1, n2)
    return np.arctan2(y, xx)


def wrap_angle(a):
    """Wrap angles to [-pi, pi)."""
    return (np.asarray(a) + np.pi) % (2.0 * np.pi) - np.pi
