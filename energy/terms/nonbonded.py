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

The kernel loops over candidate residue pairs in parallel (numba ``prange``); each residue pair
owns its output slot, so no atom-pair array is ever materialised.
"""
from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from ..pbc import minimum_image
from ..settings import EnergySettings
from ..units import COULOMB_CONSTANT

MODE_PLAIN, MODE_REACTION_FIELD, MODE_DISTANCE_DEPENDENT, MODE_SHIFTED = 0, 1, 2, 3
_MODES = {"plain": MODE_PLAIN, "reaction-field": MODE_REACTION_FIELD,
          "distance-dependent": MODE_DISTANCE_DEPENDENT, "shifted": MODE_SHIFTED}
VDW_LJ, VDW_EXP6 = 0, 1

# Layout of the constants array handed to the numba kernels.
C_MODE, C_COULOMB, C_KRF, C_CRF, C_RC, C_SWITCH_ON, C_SWITCH_WIDTH, C_VDW, C_ALPHA, C_XTURN = range(10)


def exp6_turnover(alpha: float) -> float:
    """x = r/Rmin of the exp-6 maximum at short range: the root of alpha(1-x) + 7 ln x in (0, 7/alpha).

    Below it the exp-6 energy falls towards minus infinity; the engine holds the energy at its
    value there (docs/physics.md).
    """
    from scipy.optimize import brentq
    return float(brentq(lambda x: alpha * (1.0 - x) + 7.0 * np.log(x), 1e-9, 7.0 / alpha, xtol=1e-15))


@dataclass(frozen=True)
class KernelConstants:
    """Scalars of one nonbonded evaluation, derived once from :class:`EnergySettings`."""

    values: np.ndarray        # float64 array, indices C_*
    cutoff2: float            # A^2, inf without cutoff

    @classmethod
    def from_settings(cls, s: EnergySettings, for_exceptions: bool = False) -> "KernelConstants":
        """Constants for ordinary pairs, or (``for_exceptions``) for exception pairs: plain or
        distance-dependent Coulomb, no cutoff, no switching, same vdW model."""
        rc = s.cutoff_angstrom
        mode = _MODES[s.electrostatics]
        if for_exceptions:
            mode = MODE_DISTANCE_DEPENDENT if mode == MODE_DISTANCE_DEPENDENT else MODE_PLAIN
            rc = None
        k_rf = c_rf = 0.0
        if mode == MODE_REACTION_FIELD:
            e_in, e_rf = s.dielectric, s.solvent_dielectric
            k_rf = (e_rf - e_in) / ((2.0 * e_rf + e_in) * rc ** 3)
            c_rf = 1.0 / rc + k_rf * rc * rc
        switch_on = 0.0 if for_exceptions else (s.switch_angstrom or 0.0)
        switch_width = (rc - switch_on) if (s.switch_angstrom and not for_exceptions) else 0.0
        vdw = VDW_EXP6 if s.vdw == "exp6" else VDW_LJ
        x_turn = exp6_turnover(s.exp6_alpha) if vdw == VDW_EXP6 else 0.0
        values = np.array([mode, COULOMB_CONSTANT / s.dielectric, k_rf, c_rf,
                           0.0 if rc is None else rc, switch_on, switch_width, vdw, s.exp6_alpha,
                           x_turn], dtype=np.float64)
        return cls(values, np.inf if rc is None else rc * rc)


@numba.njit(cache=True, inline="always")
def _pair_energy(r2, qq, rmin, eps, c):
    """Coulomb and vdW energy (kcal/mol) of one pair at squared distance r2 (A^2); ``c`` holds
    the constants (indices C_*).  The single place where the pair forms are written."""
    r = np.sqrt(r2)
    mode = c[C_MODE]
    cf = c[C_COULOMB]
    if mode == MODE_PLAIN:
        coul = cf * qq / r
    elif mode == MODE_REACTION_FIELD:
        coul = cf * qq * (1.0 / r + c[C_KRF] * r2 - c[C_CRF])
    elif mode == MODE_DISTANCE_DEPENDENT:
        coul = cf * qq / r2
    else:  # shifted force: 1/r - 1/rc + (r - rc)/rc^2
        rc = c[C_RC]
        coul = cf * qq * (1.0 / r - 1.0 / rc + (r - rc) / (rc * rc))
    if eps == 0.0:
        vdw = 0.0
    elif c[C_VDW] == VDW_LJ:
        s2 = rmin * rmin / r2
        s6 = s2 * s2 * s2
        vdw = eps * (s6 * s6 - 2.0 * s6)
    else:
        alpha = c[C_ALPHA]
        x = r / rmin
        if x < c[C_XTURN]:
            x = c[C_XTURN]
        x6 = x * x * x
        x6 *= x6
        vdw = eps / (alpha - 6.0) * (6.0 * np.exp(alpha * (1.0 - x)) - alpha / x6)
    width = c[C_SWITCH_WIDTH]
    if width > 0.0 and r > c[C_SWITCH_ON]:
        t = (r - c[C_SWITCH_ON]) / width
        vdw *= 1.0 + t * t * t * (-10.0 + t * (15.0 - 6.0 * t))
    return coul, vdw


@numba.njit(cache=True)
def pair_energies(r2, qq, rmin, eps, c):
    """Vectorised :func:`_pair_energy` over aligned arrays; returns (coulomb, vdw)."""
    n = len(r2)
    coul = np.empty(n)
    vdw = np.empty(n)
    for k in range(n):
        coul[k], vdw[k] = _pair_energy(r2[k], qq[k], rmin[k], eps[k], c)
    return coul, vdw


@numba.njit(cache=True, inline="always")
def _is_excluded(a, b, excl_ptr, excl_idx):
    lo, hi = (a, b) if a < b else (b, a)
    for k in range(excl_ptr[lo], excl_ptr[lo + 1]):
        if excl_idx[k] == hi:
            return True
    return False


@numba.njit(parallel=True, cache=True)
def residue_pair_kernel(pos, charges, lj_type, rmin_tab, eps_tab, is_heavy, atom_of,
                        res_ptr, pair_i, pair_j, pair_has_excl, excl_ptr, excl_idx,
                        centers, radii, h, orthorhombic, min_width, periodic, consts, cutoff2,
                        out_coul, out_lj, out_count, out_min_heavy2):
    """Sum Coulomb and LJ over every atom pair of each candidate residue pair (kcal/mol).

    Per-atom inputs (``pos``, ``charges``, ``lj_type``, ``is_heavy``) are in residue order:
    the atoms of residue r are rows ``res_ptr[r]:res_ptr[r+1]``; ``atom_of`` maps a row back to
    the system's atom index (for the exclusion lists).  In a periodic cell (box matrix ``h``,
    smallest perpendicular width ``min_width``) the image of residue J is chosen once from the
    residue centres when that is exact (the cell is wider than twice cutoff + r_I + r_J, so only
    one image can hold atoms in range); otherwise each atom pair takes its own minimum image.
    """
    for p in numba.prange(len(pair_i)):
        ri, rj = pair_i[p], pair_j[p]
        check = pair_has_excl[p]
        sx = sy = sz = 0.0
        per_atom_image = False
        if periodic:
            if 2.0 * (np.sqrt(cutoff2) + radii[ri] + radii[rj]) < min_width:
                ex = centers[rj, 0] - centers[ri, 0]
                ey = centers[rj, 1] - centers[ri, 1]
                ez = centers[rj, 2] - centers[ri, 2]
                mx, my, mz = minimum_image(ex, ey, ez, h, orthorhombic)
                sx, sy, sz = ex - mx, ey - my, ez - mz  # added to residue I's atoms
            else:
                per_atom_image = True
        coul_sum = 0.0
        lj_sum = 0.0
        count = 0
        min_h = np.inf
        for ka in range(res_ptr[ri], res_ptr[ri + 1]):
            xa = pos[ka, 0] + sx
            ya = pos[ka, 1] + sy
            za = pos[ka, 2] + sz
            qa = charges[ka]
            ta = lj_type[ka]
            ha = is_heavy[ka]
            start_b = ka + 1 if ri == rj else res_ptr[rj]
            for kb in range(start_b, res_ptr[rj + 1]):
                dx = pos[kb, 0] - xa
                dy = pos[kb, 1] - ya
                dz = pos[kb, 2] - za
                if per_atom_image:
                    dx, dy, dz = minimum_image(dx, dy, dz, h, orthorhombic)
                r2 = dx * dx + dy * dy + dz * dz
                if ha and is_heavy[kb] and r2 < min_h:
                    min_h = r2
                if r2 >= cutoff2:
                    continue
                if check and _is_excluded(atom_of[ka], atom_of[kb], excl_ptr, excl_idx):
                    continue
                tb = lj_type[kb]
                c, l = _pair_energy(r2, qa * charges[kb], rmin_tab[ta, tb], eps_tab[ta, tb], consts)
                coul_sum += c
                lj_sum += l
                count += 1
        out_coul[p] = coul_sum
        out_lj[p] = lj_sum
        out_count[p] = count
        out_min_heavy2[p] = min_h


def exclusion_csr(exception_pairs: np.ndarray, n_atoms: int):
    """Exception partners per atom as CSR (``ptr``, ``idx``), listing j > i for atom i."""
    if len(exception_pairs) == 0:
        return np.zeros(n_atoms + 1, np.intp), np.zeros(0, np.intp)
    order = np.lexsort((exception_pairs[:, 1], exception_pairs[:, 0]))
    sorted_pairs = exception_pairs[order]
    counts = np.bincount(sorted_pairs[:, 0], minlength=n_atoms)
    ptr = np.zeros(n_atoms + 1, np.intp)
    np.cumsum(counts, out=ptr[1:])
    return ptr, np.ascontiguousarray(sorted_pairs[:, 1], dtype=np.intp)


def exception_energies(system, positions, settings: EnergySettings, box=None):
    """Coulomb, vdW and distance of every exception pair, each (n_exceptions,); kcal/mol, A.

    Exception pairs use plain (or distance-dependent) Coulomb and the chosen vdW form with their
    own parameters, with no cutoff and no switching (docs/physics.md)."""
    from ..pbc import minimum_image_vectors
    pairs = system.exception_pairs
    if len(pairs) == 0:
        z = np.zeros(0)
        return z, z, z
    d = minimum_image_vectors(positions[pairs[:, 1]] - positions[pairs[:, 0]], box)
    r2 = np.einsum("ij,ij->i", d, d)
    kc = KernelConstants.from_settings(settings, for_exceptions=True)
    coul, vdw = pair_energies(r2, system.exception_qq, system.exception_rmin, system.exception_eps,
                              kc.values)
    return coul, vdw, np.sqrt(r2)
