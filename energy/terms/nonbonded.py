"""Coulomb and Lennard-Jones between atom pairs, summed straight into residue pairs.

Forms (docs/physics.md):
  LJ       eps_ij [(Rmin_ij/r)^12 - 2 (Rmin_ij/r)^6], times the switching function S(r) when a
           switching distance is set: S = 1 - 10x^3 + 15x^4 - 6x^5, x = (r - r_on)/(r_c - r_on).
  Coulomb  plain              k q_i q_j / (eps r)
           reaction field     k q_i q_j / eps (1/r + k_rf r^2 - c_rf),
                              k_rf = (eps_rf - eps)/((2 eps_rf + eps) r_c^3), c_rf = 1/r_c + k_rf r_c^2
           distance-dependent k q_i q_j / (D r^2)
Exception pairs (1-2, 1-3, 1-4) are skipped here and evaluated by :func:`exception_energies`
with their own parameters, plain Coulomb and plain LJ, no cutoff.

The kernel loops over candidate residue pairs in parallel (numba ``prange``); each residue pair
owns its output slot, so no atom-pair array is ever materialised.
"""
from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

from ..settings import EnergySettings
from ..units import COULOMB_CONSTANT

MODE_PLAIN, MODE_REACTION_FIELD, MODE_DISTANCE_DEPENDENT = 0, 1, 2
_MODES = {"plain": MODE_PLAIN, "reaction-field": MODE_REACTION_FIELD,
          "distance-dependent": MODE_DISTANCE_DEPENDENT}


@dataclass(frozen=True)
class KernelConstants:
    """Scalars of one nonbonded evaluation, derived once from :class:`EnergySettings`."""

    mode: int
    coulomb_factor: float     # k / eps (plain, RF) or k / D (distance-dependent)
    cutoff2: float            # A^2, inf without cutoff
    switch_on: float          # A, or 0 without switching
    switch_width: float       # r_c - r_on, or 0
    k_rf: float
    c_rf: float

    @classmethod
    def from_settings(cls, s: EnergySettings) -> "KernelConstants":
        rc = s.cutoff_angstrom
        k_rf = c_rf = 0.0
        if s.electrostatics == "reaction-field":
            e_in, e_rf = s.dielectric, s.solvent_dielectric
            k_rf = (e_rf - e_in) / ((2.0 * e_rf + e_in) * rc ** 3)
            c_rf = 1.0 / rc + k_rf * rc * rc
        switch_on = s.switch_angstrom or 0.0
        return cls(mode=_MODES[s.electrostatics],
                   coulomb_factor=COULOMB_CONSTANT / s.dielectric,
                   cutoff2=np.inf if rc is None else rc * rc,
                   switch_on=switch_on,
                   switch_width=(rc - switch_on) if s.switch_angstrom else 0.0,
                   k_rf=k_rf, c_rf=c_rf)


@numba.njit(cache=True, inline="always")
def _pair_energy(r2, qq, rmin, eps, mode, cf, k_rf, c_rf, switch_on, switch_width):
    r = np.sqrt(r2)
    if mode == 0:
        coul = cf * qq / r
    elif mode == 1:
        coul = cf * qq * (1.0 / r + k_rf * r2 - c_rf)
    else:
        coul = cf * qq / r2
    s2 = rmin * rmin / r2
    s6 = s2 * s2 * s2
    lj = eps * (s6 * s6 - 2.0 * s6)
    if switch_width > 0.0 and r > switch_on:
        x = (r - switch_on) / switch_width
        lj *= 1.0 + x * x * x * (-10.0 + x * (15.0 - 6.0 * x))
    return coul, lj


@numba.njit(cache=True, inline="always")
def _is_excluded(a, b, excl_ptr, excl_idx):
    lo, hi = (a, b) if a < b else (b, a)
    for k in range(excl_ptr[lo], excl_ptr[lo + 1]):
        if excl_idx[k] == hi:
            return True
    return False


@numba.njit(parallel=True, cache=True)
def residue_pair_kernel(pos, charges, lj_type, rmin_tab, eps_tab, is_heavy,
                        res_ptr, res_atoms, pair_i, pair_j, pair_has_excl,
                        excl_ptr, excl_idx, box_lengths, periodic,
                        mode, cf, cutoff2, switch_on, switch_width, k_rf, c_rf,
                        out_coul, out_lj, out_count, out_min_heavy2):
    """Sum Coulomb and LJ over every atom pair of each candidate residue pair (kcal/mol)."""
    for p in numba.prange(len(pair_i)):
        ri, rj = pair_i[p], pair_j[p]
        check = pair_has_excl[p]
        coul_sum = 0.0
        lj_sum = 0.0
        count = 0
        min_h = np.inf
        for ka in range(res_ptr[ri], res_ptr[ri + 1]):
            a = res_atoms[ka]
            start_b = ka + 1 if ri == rj else res_ptr[rj]
            for kb in range(start_b, res_ptr[rj + 1]):
                b = res_atoms[kb]
                dx = pos[b, 0] - pos[a, 0]
                dy = pos[b, 1] - pos[a, 1]
                dz = pos[b, 2] - pos[a, 2]
                if periodic:
                    dx -= box_lengths[0] * np.rint(dx / box_lengths[0])
                    dy -= box_lengths[1] * np.rint(dy / box_lengths[1])
                    dz -= box_lengths[2] * np.rint(dz / box_lengths[2])
                r2 = dx * dx + dy * dy + dz * dz
                if is_heavy[a] and is_heavy[b] and r2 < min_h:
                    min_h = r2
                if r2 >= cutoff2:
                    continue
                if check and _is_excluded(a, b, excl_ptr, excl_idx):
                    continue
                ta, tb = lj_type[a], lj_type[b]
                c, l = _pair_energy(r2, charges[a] * charges[b], rmin_tab[ta, tb], eps_tab[ta, tb],
                                    mode, cf, k_rf, c_rf, switch_on, switch_width)
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
    """Coulomb and LJ of every exception pair (n_exceptions,) each, kcal/mol, and distances."""
    from ..geometry import minimum_image
    pairs = system.exception_pairs
    if len(pairs) == 0:
        z = np.zeros(0)
        return z, z, z
    d = minimum_image(positions[pairs[:, 1]] - positions[pairs[:, 0]], box)
    r2 = np.einsum("ij,ij->i", d, d)
    r = np.sqrt(r2)
    factor = COULOMB_CONSTANT / settings.dielectric
    if settings.electrostatics == "distance-dependent":
        coul = factor * system.exception_qq / r2
    else:
        coul = factor * system.exception_qq / r
    s6 = (system.exception_rmin ** 2 / r2) ** 3
    lj = system.exception_eps * (s6 * s6 - 2.0 * s6)
    return coul, lj, r
