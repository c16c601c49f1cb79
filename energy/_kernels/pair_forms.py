"""The compiled nonbonded pair forms: Coulomb (every electrostatics model), Lennard-Jones,
exp-6 and the switching function, and the constants array they read.

One definition of each form: the row kernel (:mod:`energy._kernels.row_kernel`), the exception
pairs and the atom-pair listings (:mod:`energy.terms.nonbonded`) all call these.  The formulas
are written out in :mod:`energy.terms.nonbonded` and docs/physics.md.
"""
from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from energy.model.settings import EnergySettings
from energy.units import COULOMB_CONSTANT

MODE_PLAIN, MODE_REACTION_FIELD, MODE_DISTANCE_DEPENDENT, MODE_SHIFTED = 0, 1, 2, 3
_MODES = {"plain": MODE_PLAIN, "reaction-field": MODE_REACTION_FIELD,
          "distance-dependent": MODE_DISTANCE_DEPENDENT, "shifted": MODE_SHIFTED}
VDW_LJ, VDW_EXP6 = 0, 1

# Layout of the constants array handed to the numba kernels.  Every Coulomb form above is
#   k q_i q_j / eps * (W1/r + W2/r^2 + A1 r + A2 r^2 + C0)
# with mode-dependent coefficients (plain: W1 = 1; reaction field: W1 = 1, A2 = k_rf, C0 = -c_rf;
# distance-dependent: W2 = 1 with eps = D; shifted: W1 = 1, A1 = 1/r_c^2, C0 = -2/r_c), so one
# branch-free expression serves every mode.  The switch runs t = (r - r_on) * INV_WIDTH clamped to
# [0, 1], so INV_WIDTH = 0 means no switching.
(C_COULOMB, C_W1, C_W2, C_A1, C_A2, C_C0, C_SWITCH_ON, C_SWITCH_INV_WIDTH, C_VDW, C_ALPHA,
 C_XTURN) = range(11)


def exp6_turnover(alpha: float) -> float:
    """x = r/Rmin of the exp-6 maximum at short range: the root of alpha(1-x) + 7 ln x in (0, 7/alpha).

    Below it the exp-6 energy falls towards minus infinity; the engine holds the energy at its
    value there (docs/physics.md).  Found by Brent's method (``scipy.optimize.brentq``) on
    [1e-9, 7/alpha].

    Parameters
    ----------
    alpha : float
        Exp-6 steepness (dimensionless, > 7; see ``EnergySettings.exp6_alpha``).

    Returns
    -------
    float
        The turnover point as a fraction of Rmin (dimensionless; about 0.2123 for the default alpha).
    """
    from scipy.optimize import brentq
    return float(brentq(lambda x: alpha * (1.0 - x) + 7.0 * np.log(x), 1e-9, 7.0 / alpha, xtol=1e-15))


@dataclass(frozen=True)
class KernelConstants:
    """Scalars of one nonbonded evaluation, derived once from :class:`EnergySettings`."""

    values: np.ndarray        # float64 array, indices C_*
    cutoff2: float            # A^2, inf without cutoff

    @classmethod
    def from_settings(cls, s: EnergySettings, for_exceptions: bool = False) -> KernelConstants:
        """Constants for ordinary pairs, or (``for_exceptions``) for exception pairs.

        Exception pairs get plain or distance-dependent Coulomb, no cutoff, no switching and the same
        vdW model.

        Parameters
        ----------
        s : EnergySettings
            The computation settings.
        for_exceptions : bool, optional
            Build the constants of exception pairs instead of ordinary ones (default False).

        Returns
        -------
        KernelConstants
            ``values``: (11,) float64 indexed by the ``C_*`` constants (Coulomb factor k / eps in
            kcal/mol A / e^2, the coefficients W1, W2, A1 (1/A^2), A2 (k_rf, 1/A^3), C0 (1/A), switch
            start (A) and 1 / switch width (1/A, 0 without switching), vdW model code, exp-6 alpha and
            turnover x); ``cutoff2``: squared cutoff, A^2 (inf without a cutoff).
        """
        rc = s.cutoff_angstrom
        mode = _MODES[s.electrostatics]
        if for_exceptions:
            mode = MODE_DISTANCE_DEPENDENT if mode == MODE_DISTANCE_DEPENDENT else MODE_PLAIN
            rc = None
        w1, w2, a1, a2, c0 = 1.0, 0.0, 0.0, 0.0, 0.0
        if mode == MODE_REACTION_FIELD:
            e_in, e_rf = s.dielectric, s.solvent_dielectric
            k_rf = (e_rf - e_in) / ((2.0 * e_rf + e_in) * rc ** 3)
            a2, c0 = k_rf, -(1.0 / rc + k_rf * rc * rc)
        elif mode == MODE_DISTANCE_DEPENDENT:
            w1, w2 = 0.0, 1.0
        elif mode == MODE_SHIFTED:
            a1, c0 = 1.0 / (rc * rc), -2.0 / rc
        switching = bool(s.switch_angstrom) and not for_exceptions
        switch_on = s.switch_angstrom if switching else 0.0
        inv_width = 1.0 / (rc - switch_on) if switching else 0.0
        vdw = VDW_EXP6 if s.vdw == "exp6" else VDW_LJ
        x_turn = exp6_turnover(s.exp6_alpha) if vdw == VDW_EXP6 else 0.0
        values = np.array([COULOMB_CONSTANT / s.dielectric, w1, w2, a1, a2, c0, switch_on,
                           inv_width, vdw, s.exp6_alpha, x_turn], dtype=np.float64)
        return cls(values, np.inf if rc is None else rc * rc)


@numba.njit(cache=True, inline="always")
def _coulomb_form(qq, r, inv_r, r2, cf, w1, w2, a1, a2, c0):
    """Coulomb energy (kcal/mol) of charge product ``qq`` at distance r: the one expression of
    every electrostatics mode (coefficients as in the constants array)."""
    return cf * qq * (w1 * inv_r + w2 * inv_r * inv_r + a1 * r + a2 * r2 + c0)


@numba.njit(cache=True, inline="always")
def _switch_form(r, on, inv_width):
    """S(r) = 1 - 10t^3 + 15t^4 - 6t^5, t = (r - r_on)/(r_c - r_on) clamped to [0, 1]."""
    t = min(max((r - on) * inv_width, 0.0), 1.0)
    return 1.0 + t * t * t * (-10.0 + t * (15.0 - 6.0 * t))


@numba.njit(cache=True, inline="always")
def _coulomb(qq, r, inv_r, r2, c):
    return _coulomb_form(qq, r, inv_r, r2, c[C_COULOMB], c[C_W1], c[C_W2], c[C_A1], c[C_A2], c[C_C0])


@numba.njit(cache=True, inline="always")
def _switch(r, c):
    return _switch_form(r, c[C_SWITCH_ON], c[C_SWITCH_INV_WIDTH])


@numba.njit(cache=True, inline="always")
def _lennard_jones(inv_r2, rmin, eps):
    """LJ energy from 1/r^2 (the caller has 1/r already: a product, not a second division)."""
    s2 = rmin * rmin * inv_r2
    s6 = s2 * s2 * s2
    return eps * (s6 * s6 - 2.0 * s6)


@numba.njit(cache=True, inline="always")
def _pair_energy(r2, qq, rmin, eps, c):
    """Coulomb and vdW energy (kcal/mol) of one pair at squared distance r2 (A^2); ``c`` holds
    the constants (indices C_*).  The pair forms are :func:`_coulomb`, :func:`_lennard_jones`
    (or exp-6) and :func:`_switch`; the vectorised row kernel uses the same three."""
    r = np.sqrt(r2)
    inv_r = 1.0 / r
    coul = _coulomb(qq, r, inv_r, r2, c)
    if eps == 0.0:
        vdw = 0.0
    elif c[C_VDW] == VDW_LJ:
        vdw = _lennard_jones(inv_r * inv_r, rmin, eps)
    else:
        alpha = c[C_ALPHA]
        x = r / rmin
        if x < c[C_XTURN]:
            x = c[C_XTURN]
        x6 = x * x * x
        x6 *= x6
        vdw = eps / (alpha - 6.0) * (6.0 * np.exp(alpha * (1.0 - x)) - alpha / x6)
    return coul, vdw * _switch(r, c)


@numba.njit(cache=True, error_model="numpy")
def pair_energies(r2, qq, rmin, eps, c):
    """Vectorised :func:`_pair_energy` over aligned arrays; returns (coulomb, vdw) (compiled).

    No cutoff is applied here (the caller selects the pairs); switching, when ``c`` sets it,
    multiplies the vdW energy.  A pair with ``eps == 0`` gets no vdW energy.

    Parameters
    ----------
    r2 : (n,) float64
        Squared distances, A^2.
    qq : (n,) float64
        Charge products q_i q_j, e^2 (scaling included).
    rmin : (n,) float64
        Pair Rmin_ij, A.
    eps : (n,) float64
        Pair well depth eps_ij, kcal/mol (>= 0).
    c : (11,) float64
        ``KernelConstants.values``.

    Returns
    -------
    coulomb, vdw : (n,) float64
        Coulomb and vdW (LJ or exp-6) energy of each pair, kcal/mol.
    """
    n = len(r2)
    coul = np.empty(n)
    vdw = np.empty(n)
    for k in range(n):
        coul[k], vdw[k] = _pair_energy(r2[k], qq[k], rmin[k], eps[k], c)
    return coul, vdw
