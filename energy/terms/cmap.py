"""CMAP cross-term: bicubic interpolation of a periodic (phi, psi) energy grid.

The derivatives at the grid points come from periodic cubic splines along each axis (and the
cross derivative from a spline of d/dpsi along phi), then each cell is a bicubic Hermite patch
matching value, both first derivatives and the cross derivative at its four corners.  This is
the standard construction (Press et al., Numerical Recipes, 3rd ed., sec. 3.6.3 "bicubic
interpolation"); OpenMM's CMAPTorsionForce uses the same scheme, which the tests check.
"""
from __future__ import annotations

from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np

from energy._kernels.geometry import dihedral_angles

if TYPE_CHECKING:
    from energy.model.system import TermTable


def _periodic_derivative(grid: np.ndarray, axis: int, step: float) -> np.ndarray:
    from scipy.interpolate import CubicSpline  # imported here: only systems with CMAP need it
    n = grid.shape[axis]
    knots = np.arange(n + 1) * step
    closed = np.concatenate([grid, np.take(grid, [0], axis=axis)], axis=axis)
    spline = CubicSpline(knots, closed, axis=axis, bc_type="periodic")
    return np.take(spline(knots, 1), np.arange(n), axis=axis)


def grid_derivatives(grid: np.ndarray):
    """(f, df/dphi, df/dpsi, d2f/dphidpsi) on the grid, per radian.

    Derivatives along each axis from periodic cubic splines; the cross derivative from a spline
    of df/dpsi along phi.

    Parameters
    ----------
    grid : (n, n) float64
        Energies, kcal/mol, ``grid[i, j]`` at phi = -pi + i h, psi = -pi + j h, h = 2 pi / n.

    Returns
    -------
    f, f_phi, f_psi, f_phipsi : (n, n) float64
        ``grid`` itself (kcal/mol), its first derivatives (kcal/mol/rad) and its cross
        derivative (kcal/mol/rad^2) at the grid points.
    """
    n = grid.shape[0]
    step = 2.0 * np.pi / n
    d_phi = _periodic_derivative(grid, 0, step)
    d_psi = _periodic_derivative(grid, 1, step)
    d_cross = _periodic_derivative(d_psi, 0, step)
    return grid, d_phi, d_psi, d_cross


@lru_cache(maxsize=32)
def _cached_derivatives(key: bytes, n: int):
    grid = np.frombuffer(key, dtype=np.float64).reshape(n, n)
    return grid_derivatives(grid)


def _hermite_basis(t):
    """Cubic Hermite basis h00, h10, h01, h11 at t (each (m,))."""
    t2, t3 = t * t, t * t * t
    return (2 * t3 - 3 * t2 + 1, t3 - 2 * t2 + t, -2 * t3 + 3 * t2, t3 - t2)


def interpolate(grid: np.ndarray, phi: np.ndarray, psi: np.ndarray) -> np.ndarray:
    """Bicubic value of ``grid`` (n, n; grid[i, j] at phi=-pi+i*h, psi=-pi+j*h) at angles (rad).

    The grid's derivatives are computed once per distinct grid (cached).

    Parameters
    ----------
    grid : (n, n) float
        Periodic energy grid, kcal/mol; h = 2 pi / n.
    phi, psi : (m,) float
        Angles, radians (any value: the grid is periodic).

    Returns
    -------
    (m,) float64
        Interpolated energies, kcal/mol.
    """
    n = grid.shape[0]
    h = 2.0 * np.pi / n
    f, fx, fy, fxy = _cached_derivatives(np.ascontiguousarray(grid, np.float64).tobytes(), n)
    u = (np.asarray(phi) + np.pi) / h
    v = (np.asarray(psi) + np.pi) / h
    i0 = np.floor(u).astype(np.intp) % n
    j0 = np.floor(v).astype(np.intp) % n
    tu, tv = u - np.floor(u), v - np.floor(v)
    i1, j1 = (i0 + 1) % n, (j0 + 1) % n
    hu = _hermite_basis(tu)
    hv = _hermite_basis(tv)
    total = np.zeros_like(tu)
    # Corner (a, b) with a, b in {0, 1}; value weights h00/h01, derivative weights h10/h11 * h.
    for a, ia in ((0, i0), (1, i1)):
        for b, jb in ((0, j0), (1, j1)):
            wu_val, wu_der = (hu[0], hu[1]) if a == 0 else (hu[2], hu[3])
            wv_val, wv_der = (hv[0], hv[1]) if b == 0 else (hv[2], hv[3])
            total += (f[ia, jb] * wu_val * wv_val
                      + fx[ia, jb] * h * wu_der * wv_val
                      + fy[ia, jb] * h * wu_val * wv_der
                      + fxy[ia, jb] * h * h * wu_der * wv_der)
    return total


def cmap_energies(table: TermTable, maps, x, box=None) -> np.ndarray:
    """CMAP energy of each row: the bicubic interpolation of its map at its (phi, psi).

    Parameters
    ----------
    table : TermTable
        ``atoms`` (n, 8), the four atoms of phi then the four of psi; column ``map`` (intp), the
        index into ``maps``.
    maps : sequence of (g, g) float64
        CMAP grids, kcal/mol (``MolecularSystem.cmap_maps``, grid[i, j] at phi = -180 + i 360/g,
        psi = -180 + j 360/g degrees).
    x : (n_atoms, 3) float64
        Atom positions, angstrom.
    box : (6,) float or None, optional
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (angstrom, degrees) for the minimum image of
        the bond vectors, or None (default).

    Returns
    -------
    (n,) float64
        Energy of each row of ``table``, kcal/mol.
    """
    if not len(table):
        return np.zeros(0)
    a = table.atoms
    phi = dihedral_angles(x, a[:, 0], a[:, 1], a[:, 2], a[:, 3], box)
    psi = dihedral_angles(x, a[:, 4], a[:, 5], a[:, 6], a[:, 7], box)
    out = np.empty(len(a))
    which = table.params["map"]
    for m in np.unique(which):
        sel = which == m
        out[sel] = interpolate(maps[m], phi[sel], psi[sel])
    return out
