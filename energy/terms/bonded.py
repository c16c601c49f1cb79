"""Bonded terms, one energy per interaction (kcal/mol).

Forms (docs/physics.md): bond K(b-b0)^2; Urey-Bradley K(s-s0)^2 on the 1-3 distance;
angle K(theta-theta0)^2; dihedral K(1+cos(n*phi-delta)); harmonic improper K(psi-psi0)^2 with
psi-psi0 wrapped to [-pi, pi); periodic improper K(1+cos(n*psi-delta)).
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from energy._kernels.geometry import bond_angles, bond_lengths, dihedral_angles, wrap_angle

if TYPE_CHECKING:
    from energy.model.system import TermTable


def bond_energies(table: TermTable, x, box=None) -> np.ndarray:
    """Bond energies K (b - b0)^2, b the distance between the two atoms (docs/physics.md).

    Parameters
    ----------
    table : TermTable
        ``atoms`` (n, 2); columns ``k`` (kcal/mol/A^2, no factor 1/2) and ``r0`` (A).
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
    r = bond_lengths(x, a[:, 0], a[:, 1], box)
    return table.params["k"] * (r - table.params["r0"]) ** 2


def urey_bradley_energies(table: TermTable, x, box=None) -> np.ndarray:
    """Urey-Bradley energies K (s - s0)^2, s the distance between atoms 1 and 3 of the angle.

    Parameters
    ----------
    table : TermTable
        ``atoms`` (n, 3), the angle triplet; columns ``k`` (kcal/mol/A^2) and ``s0`` (A).
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
    s = bond_lengths(x, a[:, 0], a[:, 2], box)
    return table.params["k"] * (s - table.params["s0"]) ** 2


def angle_energies(table: TermTable, x, box=None) -> np.ndarray:
    """Angle energies K (theta - theta0)^2, theta in radians.

    Parameters
    ----------
    table : TermTable
        ``atoms`` (n, 3), vertex in the middle; columns ``k`` (kcal/mol/rad^2) and ``theta0`` (rad).
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
    theta = bond_angles(x, a[:, 0], a[:, 1], a[:, 2], box)
    return table.params["k"] * (theta - table.params["theta0"]) ** 2


def _torsions(table, x, box):
    a = table.atoms
    return dihedral_angles(x, a[:, 0], a[:, 1], a[:, 2], a[:, 3], box)


def periodic_torsion_energies(table: TermTable, x, box=None) -> np.ndarray:
    """Proper dihedrals or periodic impropers: K(1 + cos(n*phi - delta)).

    phi is the IUPAC dihedral angle of the four atoms (radians); one row per cosine term.

    Parameters
    ----------
    table : TermTable
        ``atoms`` (n, 4); columns ``k`` (kcal/mol), ``periodicity`` (intp) and ``phase`` (rad).
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
    phi = _torsions(table, x, box)
    p = table.params
    return p["k"] * (1.0 + np.cos(p["periodicity"] * phi - p["phase"]))


def harmonic_improper_energies(table: TermTable, x, box=None) -> np.ndarray:
    """Harmonic improper energies K (psi - psi0)^2, psi - psi0 wrapped to [-pi, pi).

    Parameters
    ----------
    table : TermTable
        ``atoms`` (n, 4); columns ``k`` (kcal/mol/rad^2) and ``psi0`` (rad).
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
    psi = _torsions(table, x, box)
    d = wrap_angle(psi - table.params["psi0"])
    return table.params["k"] * d * d
