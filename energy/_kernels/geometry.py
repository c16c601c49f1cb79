"""Vector geometry on (n, 3) arrays: distances, angles, dihedrals (minimum image in a unit cell
from :mod:`energy._kernels.pbc`).

All lengths in angstrom, angles in radians.  Dihedral angles follow the IUPAC convention
(trans = 180 deg, range (-180, 180]) as in every common force field.
"""
from __future__ import annotations

import numpy as np

from energy._kernels.pbc import minimum_image_vectors as minimum_image


def _rowdot(a, b):
    return np.einsum("ij,ij->i", a, b)


def bond_lengths(x, i, j, box=None):
    """Distances between atoms ``i`` and ``j`` (index arrays), A.

    Parameters
    ----------
    x : (n_atoms, 3) float64
        Atom positions, angstrom.
    i, j : (m,) integer
        Atom indices of each pair.
    box : (6,) float or None, optional
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees): bond vectors are taken
        as their minimum image in it; ``None`` (default) uses the plain differences.

    Returns
    -------
    (m,) float64
        Distance |x[j] - x[i]| of each pair, angstrom.
    """
    d = minimum_image(x[j] - x[i], box)
    return np.sqrt(_rowdot(d, d))


def bond_angles(x, i, j, k, box=None):
    """Angles i-j-k at the vertex ``j``, radians in [0, pi].

    Parameters
    ----------
    x : (n_atoms, 3) float64
        Atom positions, angstrom.
    i, j, k : (m,) integer
        Atom indices of each angle, ``j`` the vertex.
    box : (6,) float or None, optional
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees): bond vectors are taken
        as their minimum image in it; ``None`` (default) uses the plain differences.

    Returns
    -------
    (m,) float64
        Angle between x[i] - x[j] and x[k] - x[j], radians in [0, pi].
    """
    u = minimum_image(x[i] - x[j], box)
    v = minimum_image(x[k] - x[j], box)
    cos = _rowdot(u, v) / np.sqrt(_rowdot(u, u) * _rowdot(v, v))
    return np.arccos(np.clip(cos, -1.0, 1.0))


def dihedral_angles(x, i, j, k, l, box=None):
    """Dihedral angles i-j-k-l, radians in (-pi, pi] (IUPAC sign convention).

    Parameters
    ----------
    x : (n_atoms, 3) float64
        Atom positions, angstrom.
    i, j, k, l : (m,) integer
        Atom indices of each dihedral, in chain order.
    box : (6,) float or None, optional
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees): bond vectors are taken
        as their minimum image in it; ``None`` (default) uses the plain differences.

    Returns
    -------
    (m,) float64
        Dihedral angle about the j-k bond, radians in (-pi, pi] (trans = pi).
    """
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
    """Wrap angles to [-pi, pi).

    Parameters
    ----------
    a : float or array_like of float
        Angles, radians; any shape.

    Returns
    -------
    numpy.ndarray of float64
        ``a`` shifted by whole turns into [-pi, pi), same shape (a numpy.float64 for a scalar).
    """
    return (np.asarray(a) + np.pi) % (2.0 * np.pi) - np.pi
