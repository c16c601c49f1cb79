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
    if not len(table):
        return np.zeros(0)
    a = table.atoms
    r = bond_lengths(x, a[:, 0], a[:, 1], box)
    return table.params["k"] * (r - table.params["r0"]) ** 2


def urey_bradley_energies(table: TermTable, x, box=None) -> np.ndarray:
    if not len(table):
        return np.zeros(0)
    a = table.atoms
    s = bond_lengths(x, a[:, 0], a[:, 2], box)
    return table.params["k"] * (s - table.params["s0"]) ** 2


def angle_energies(table: TermTable, x, box=None) -> np.ndarray:
    if not len(table):
        return np.zeros(0)
    a = table.atoms
    theta = bond_angles(x, a[:, 0], a[:, 1], a[:, 2], box)
    return table.params["k"] * (theta - table.params["theta0"]) ** 2


def _torsions(table, x, box):
    a = table.atoms
    return dihedral_angles(x, a[:, 0], a[:, 1], a[:, 2], a[:, 3], box)


def periodic_torsion_energies(table: TermTable, x, box=None) -> np.ndarray:
    """Proper dihedrals or periodic impropers: K(1 + cos(n*phi - delta))."""
    if not len(table):
        return np.zeros(0)
    phi = _torsions(table, x, box)
    p = table.params
    return p["k"] * (1.0 + np.cos(p["periodicity"] * phi - p["phase"]))


def harmonic_improper_energies(table: TermTable, x, box=None) -> np.ndarray:
    if not len(table):
        return np.zeros(0)
    psi = _torsions(table, x, box)
    d = wrap_angle(psi - table.params["psi0"])
    return table.params["k"] * d * d
