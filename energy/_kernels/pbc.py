"""Periodic cells: box matrices, perpendicular widths and the exact minimum image (numba).

A cell is given as MDAnalysis does, ``[a, b, c, alpha, beta, gamma]`` (A, degrees), and used as
the lower-triangular matrix ``h`` whose rows are the cell vectors (a along x, b in the xy plane).
The minimum image of a displacement is found by reducing it into the cell (c, then b, then a)
and then trying the 26 neighbouring images of the reduced vector; for orthorhombic cells the
reduction alone is exact.  With a cutoff below half the smallest perpendicular width, at most one
image of any atom pair lies within the cutoff.
"""
from __future__ import annotations

import numba
import numpy as np

from energy.errors import SettingsError


def box_matrix(box) -> np.ndarray:
    """Unit-cell vectors as rows of a (3, 3) matrix from ``[a, b, c, alpha, beta, gamma]``.

    Standard crystallographic construction: a along x, b in the xy plane.

    Parameters
    ----------
    box : (6,) float
        Cell lengths a, b, c (angstrom) and angles alpha, beta, gamma (degrees), as MDAnalysis
        gives them.

    Returns
    -------
    (3, 3) float64
        Lower-triangular matrix whose rows are the cell vectors a, b, c, angstrom; entries below
        1e-9 in magnitude are set to exactly 0.
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


def perpendicular_widths(h: np.ndarray) -> np.ndarray:
    """Distances between opposite faces of the cell (A), one per cell vector.

    Parameters
    ----------
    h : (3, 3) float64
        Lower-triangular box matrix (rows are the cell vectors, angstrom), from :func:`box_matrix`.

    Returns
    -------
    (3,) float64
        Width of the cell along each cell vector, perpendicular to the other two: volume / |b x c|,
        volume / |c x a|, volume / |a x b|, angstrom.
    """
    volume = abs(np.linalg.det(h))
    a, b, c = h
    return np.array([volume / np.linalg.norm(np.cross(b, c)),
                     volume / np.linalg.norm(np.cross(c, a)),
                     volume / np.linalg.norm(np.cross(a, b))])


def periodic_cell(box, cutoff: float) -> np.ndarray:
    """Box matrix for minimum-image use with ``cutoff``; refuses cells narrower than 2 x cutoff.

    Parameters
    ----------
    box : (6,) float
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees).
    cutoff : float
        Nonbonded cutoff, angstrom.

    Returns
    -------
    (3, 3) float64
        C-contiguous box matrix (:func:`box_matrix`), angstrom.

    Raises
    ------
    SettingsError
        If a perpendicular width of the cell is below ``2 * cutoff``.
    """
    h = box_matrix(np.asarray(box, np.float64))
    widths = perpendicular_widths(h)
    if np.any(widths < 2.0 * cutoff):
        raise SettingsError(f"the unit cell (widths {widths[0]:.1f}, {widths[1]:.1f}, {widths[2]:.1f} A) "
                            f"is narrower than twice the cutoff ({cutoff:g} A); use a shorter cutoff "
                            "or --no-periodic")
    return np.ascontiguousarray(h)


def is_orthorhombic(h: np.ndarray) -> bool:
    """Whether the box matrix is diagonal (every cell angle 90 degrees).

    Parameters
    ----------
    h : (3, 3) float64
        Lower-triangular box matrix (rows are the cell vectors, angstrom), from :func:`box_matrix`.

    Returns
    -------
    bool
        True if the below-diagonal entries are exactly 0 (then :func:`reduce_into_cell` alone
        gives the minimum image).
    """
    return bool(h[1, 0] == 0.0 and h[2, 0] == 0.0 and h[2, 1] == 0.0)


@numba.njit(cache=True, inline="always")
def reduce_into_cell(dx, dy, dz, h):
    """Reduce a displacement into the cell: subtract whole c, then b, then a vectors (compiled, inlined).

    Parameters
    ----------
    dx, dy, dz : float
        Displacement, angstrom.
    h : (3, 3) float64
        Lower-triangular box matrix (rows are the cell vectors, angstrom), from :func:`box_matrix`.

    Returns
    -------
    dx, dy, dz : float
        The reduced displacement, angstrom (exact minimum image for an orthorhombic cell).
    """
    k = np.rint(dz / h[2, 2])
    dx -= k * h[2, 0]
    dy -= k * h[2, 1]
    dz -= k * h[2, 2]
    k = np.rint(dy / h[1, 1])
    dx -= k * h[1, 0]
    dy -= k * h[1, 1]
    k = np.rint(dx / h[0, 0])
    dx -= k * h[0, 0]
    return dx, dy, dz


@numba.njit(cache=True, inline="always")
def minimum_image(dx, dy, dz, h, orthorhombic):
    """The shortest lattice image of (dx, dy, dz) (compiled, inlined).

    The displacement is reduced into the cell, then the 26 neighbouring images are tried
    (skipped for an orthorhombic cell, where the reduction is exact).

    Parameters
    ----------
    dx, dy, dz : float
        Displacement, angstrom.
    h : (3, 3) float64
        Lower-triangular box matrix (rows are the cell vectors, angstrom), from :func:`box_matrix`.
    orthorhombic : bool
        ``is_orthorhombic(h)``.

    Returns
    -------
    dx, dy, dz : float
        The minimum-image displacement, angstrom.
    """
    dx, dy, dz = reduce_into_cell(dx, dy, dz, h)
    if orthorhombic:
        return dx, dy, dz
    bx, by, bz = dx, dy, dz
    best = dx * dx + dy * dy + dz * dz
    for i in range(-1, 2):
        for j in range(-1, 2):
            for k in range(-1, 2):
                if i == 0 and j == 0 and k == 0:
                    continue
                x = dx + i * h[0, 0] + j * h[1, 0] + k * h[2, 0]
                y = dy + j * h[1, 1] + k * h[2, 1]
                z = dz + k * h[2, 2]
                d2 = x * x + y * y + z * z
                if d2 < best:
                    best = d2
                    bx, by, bz = x, y, z
    return bx, by, bz


@numba.njit(cache=True)
def _minimum_image_rows(d, h, orthorhombic):
    out = np.empty_like(d)
    for n in range(d.shape[0]):
        out[n, 0], out[n, 1], out[n, 2] = minimum_image(d[n, 0], d[n, 1], d[n, 2], h, orthorhombic)
    return out


def minimum_image_vectors(d: np.ndarray, box) -> np.ndarray:
    """Exact minimum image of displacement vectors ``d`` (n, 3) in the cell ``box`` (or None).

    Parameters
    ----------
    d : (n, 3) float
        Displacement vectors, angstrom.
    box : (6,) float or None
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees), or ``None`` for no cell.

    Returns
    -------
    (n, 3) float64
        Minimum-image displacements, angstrom; ``d`` itself when ``box`` is None.
    """
    if box is None:
        return d
    h = np.ascontiguousarray(box_matrix(np.asarray(box, np.float64)))
    return _minimum_image_rows(np.ascontiguousarray(d, np.float64), h, is_orthorhombic(h))
