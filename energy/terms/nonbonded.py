"""Coulomb and Lennard-Jones between atom pairs, summed straight into residue pairs.

Forms (docs/physics.md):
  LJ       eps_ij [(Rmin_ij/r)^12 - 2 (Rmin_ij/r)^6], times the switching function S(r) when a
           switching distance is set: S = 1 - 10x^3 + 15x^4 - 6x^5, x = (r - r_on)/(r_c - r_on).
  exp-6    eps/(a-6) [6 exp(a(1 - r/Rmin)) - a (Rmin/r)^6], held at its short-range maximum
           inside the turnover point (optional alternative to LJ).
  Coulomb  plain              k q_i q_j / (eps r)
           reaction field     k q_i q_j / eps (1/r + k_rf r^2 - c_rf),
                              k_rf = (eps_rf - eps)/((2 eps_rf + eps) r_c^3), c_rf = 1/r_c + k_rf r_c^2
           distance-dependent k q_i q_j / (D r^2)
           shifted            k q_i q_j / eps (1/r - 1/r_c + (r - r_c)/r_c^2)
Exception pairs (1-2, 1-3, 1-4) are skipped here and evaluated by :func:`exception_energies`
with their own parameters, plain Coulomb and plain LJ, no cutoff.

The compiled pair forms themselves live in :mod:`energy._kernels.pair_forms` (one definition,
used by the row kernel :mod:`energy._kernels.row_kernel` and by the functions here).
"""
from __future__ import annotations

import numpy as np

from energy._kernels.pair_forms import KernelConstants, exp6_turnover, pair_energies  # noqa: F401 (public here)
from energy._kernels.pbc import minimum_image_vectors
from energy.model.settings import EnergySettings


def exception_energies(system, positions, settings: EnergySettings, box=None, rows=None):
    """Coulomb, vdW and distance of every exception pair, each (n_exceptions,); kcal/mol, A.

    Exception pairs use plain (or distance-dependent) Coulomb and the chosen vdW form with their
    own parameters, with no cutoff and no switching (docs/physics.md).

    Parameters
    ----------
    system : MolecularSystem
        ``exception_pairs``, ``exception_qq`` (e^2), ``exception_rmin`` (A) and ``exception_eps``
        (kcal/mol) are read.
    positions : (n_atoms, 3) float64
        Atom positions, A.
    settings : EnergySettings
        Dielectric, electrostatics model (distance-dependent or plain) and vdW model.
    box : (6,) float or None, optional
        Unit cell ``[a, b, c, alpha, beta, gamma]`` (A, degrees) for the minimum image of each
        pair, or None (default).
    rows : (k,) integer or None, optional
        Only these exception pairs (indices into ``exception_pairs``); None (default) for all.

    Returns
    -------
    coulomb, vdw : (n_exceptions,) float64
        Energy of each exception pair, kcal/mol.
    distance : (n_exceptions,) float64
        Distance of each exception pair, A.
    """
    take = slice(None) if rows is None else np.asarray(rows, np.intp)
    pairs = system.exception_pairs[take]
    if len(pairs) == 0:
        z = np.zeros(0)
        return z, z, z
    d = minimum_image_vectors(positions[pairs[:, 1]] - positions[pairs[:, 0]], box)
    r2 = np.einsum("ij,ij->i", d, d)
    kc = KernelConstants.from_settings(settings, for_exceptions=True)
    coul, vdw = pair_energies(r2, system.exception_qq[take], system.exception_rmin[take],
                              system.exception_eps[take], kc.values)
    return coul, vdw, np.sqrt(r2)


def plain_pair_energies(r, qq, rmin, eps, vdw: str = "lj", exp6_alpha: float | None = None):
    """Coulomb and repulsion-dispersion energy of atom pairs with the engine's own pair forms.

    Plain Coulomb (relative dielectric 1), no cutoff and no switching.

    Parameters
    ----------
    r : (n,) float64
        Distances, A.
    qq : (n,) float64
        Charge products, e^2.
    rmin, eps : (n,) float64
        Pair Rmin (A) and well depth (kcal/mol, >= 0).
    vdw : str, optional
        ``"lj"`` (default) or ``"exp6"`` (:class:`~energy.model.settings.EnergySettings`).
    exp6_alpha : float or None, optional
        Exp-6 steepness (default: the settings' default).

    Returns
    -------
    coulomb, vdw : (n,) float64
        Energies, kcal/mol.  A pair with ``eps == 0`` has no repulsion-dispersion energy at any
        distance (0.0, also at r = 0).
    """
    r = np.ascontiguousarray(r, np.float64)
    n = len(r)
    if not n:
        return np.zeros(0), np.zeros(0)
    options = {"vdw": vdw} if exp6_alpha is None else {"vdw": vdw, "exp6_alpha": float(exp6_alpha)}
    kc = KernelConstants.from_settings(EnergySettings(**options))
    eps = np.ascontiguousarray(np.broadcast_to(eps, (n,)), np.float64)
    coul, e = pair_energies(r * r, np.ascontiguousarray(np.broadcast_to(qq, (n,)), np.float64),
                            np.ascontiguousarray(np.broadcast_to(rmin, (n,)), np.float64), eps,
                            kc.values)
    return coul, np.where(eps == 0.0, 0.0, e)
