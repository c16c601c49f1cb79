"""Compiled generalized Born kernels: effective Born radii (many-body, over the whole system)
and the GB pair sums per residue pair.

The formulas are written out in docs/physics.md ("Implicit solvent"); lengths in A, energies in
kcal/mol.  A cutoff (``cutoff2`` finite) drops atom pairs at r >= cutoff from both the
descreening integral and the pair sum, and shifts the pair form by 1/cutoff (OpenMM's
convention for its CustomGBForce-based models).
"""
from __future__ import annotations

import math

import numba
import numpy as np
from numba import prange


@numba.njit(cache=True, error_model="numpy")
def _hct_sum(i, x, rho, scaled, cutoff2):
    """Sum over j != i of the HCT descreening integral of atom i by atom j (1/A), branch-free:
    pairs that do not count (j = i, beyond the cutoff, j's sphere not reaching i) are evaluated
    at a harmless stand-in distance and selected away."""
    n = x.shape[0]
    xi, yi, zi = x[i, 0], x[i, 1], x[i, 2]
    rho_i = rho[i]
    total = 0.0
    for j in range(n):
        dx, dy, dz = x[j, 0] - xi, x[j, 1] - yi, x[j, 2] - zi
        r2 = dx * dx + dy * dy + dz * dz
        s = scaled[j]
        r_true = math.sqrt(r2)
        ok = (j != i) & (r2 < cutoff2) & (r_true + s >= rho_i)
        r = r_true if ok else rho_i + s + 1.0
        upper = r + s
        d = abs(r - s)
        lower = d if d > rho_i else rho_i
        inv_u, inv_l, inv_r = 1.0 / upper, 1.0 / lower, 1.0 / r
        term = 0.5 * (inv_l - inv_u + 0.25 * (r - s * s * inv_r) * (inv_u * inv_u - inv_l * inv_l)
                      + 0.5 * math.log(lower * inv_u) * inv_r)
        total += term if ok else 0.0
    return total


@numba.njit(cache=True, error_model="numpy")
def _neck_sum(i, x, radius, neck_index, neck_m0, neck_d0, neck_cut, cutoff2):
    """Sum over j != i of the GBn2 neck term (1/A, before the neck scale)."""
    n = x.shape[0]
    xi, yi, zi = x[i, 0], x[i, 1], x[i, 2]
    total = 0.0
    col = neck_index[i]
    for j in range(n):
        dx, dy, dz = x[j, 0] - xi, x[j, 1] - yi, x[j, 2] - zi
        r2 = dx * dx + dy * dy + dz * dz
        reach = radius[i] + radius[j] + neck_cut
        if j == i or r2 >= cutoff2 or r2 >= reach * reach:
            continue
        # Table entry [radius of j, radius of i] (OpenMM's getm0(radindex1, radindex2) reads
        # its Discrete2DFunction at x = radius index of i, y = that of j, i.e. row j).
        row = neck_index[j]
        d = math.sqrt(r2) - neck_d0[row, col]
        d2 = d * d
        total += neck_m0[row, col] / (1.0 + d2 + 0.3 * d2 * d2 * d2)
    return total


@numba.njit(cache=True, parallel=True, error_model="numpy")
def born_radii(x, rho, scaled, radius, alpha, beta, gamma, neck_index, neck_m0, neck_d0, neck_scale,
               neck_cut, cutoff2):
    """Effective Born radii B_i = 1 / (1/rho_i - tanh(a psi - b psi^2 + c psi^3) / R_i), psi = I_i rho_i.

    Parameters
    ----------
    x : (n, 3) float64
        Positions, A.
    rho, scaled, radius : (n,) float64
        Offset radius, screened offset radius and intrinsic radius, A.
    alpha, beta, gamma : (n,) float64
        tanh coefficients.
    neck_index : (n,) int64
        Rows of the neck tables.
    neck_m0, neck_d0 : (k, k) float64
        Neck maximum (1/A) and its distance (A).
    neck_scale, neck_cut : float
        Neck scale (0: no neck term) and the neck's reach past R_i + R_j, A.
    cutoff2 : float
        Squared cutoff, A^2 (inf: none).

    Returns
    -------
    (n,) float64
        Born radii, A.
    """
    n = x.shape[0]
    out = np.empty(n)
    for i in prange(n):
        integral = _hct_sum(i, x, rho, scaled, cutoff2)
        if neck_scale != 0.0:
            integral += neck_scale * _neck_sum(i, x, radius, neck_index, neck_m0, neck_d0, neck_cut, cutoff2)
        psi = integral * rho[i]
        out[i] = 1.0 / (1.0 / rho[i] - math.tanh(psi * (alpha[i] - psi * (beta[i] - psi * gamma[i])))
                        / radius[i])
    return out


@numba.njit(cache=True, error_model="numpy")
def _pair_row(res, res_start, res_end, x, q, born, prefactor, inv_in, inv_out, kappa, cutoff2,
              inv_cutoff, out):
    """GB pair sum of every atom pair (a, b), a in residue ``res``, b > a (residue order), summed
    per partner residue (a contiguous run of b: no scattered writes in the inner loop)."""
    n_res = res_start.shape[0]
    screen0 = inv_in - inv_out
    for a in range(res_start[res], res_end[res]):
        xa, ya, za, qa, ba = x[a, 0], x[a, 1], x[a, 2], q[a], born[a]
        if qa == 0.0:
            continue
        for partner in range(res, n_res):
            lo = a + 1 if partner == res else res_start[partner]
            acc = 0.0
            if kappa == 0.0:
                for b in range(lo, res_end[partner]):
                    dx, dy, dz = x[b, 0] - xa, x[b, 1] - ya, x[b, 2] - za
                    r2 = dx * dx + dy * dy + dz * dz
                    bb = ba * born[b]
                    f = math.sqrt(r2 + bb * math.exp(-r2 / (4.0 * bb)))
                    e = screen0 * q[b] * (1.0 / f - inv_cutoff)
                    acc += e if r2 < cutoff2 else 0.0
            else:
                for b in range(lo, res_end[partner]):
                    dx, dy, dz = x[b, 0] - xa, x[b, 1] - ya, x[b, 2] - za
                    r2 = dx * dx + dy * dy + dz * dz
                    bb = ba * born[b]
                    f = math.sqrt(r2 + bb * math.exp(-r2 / (4.0 * bb)))
                    e = (inv_in - math.exp(-kappa * f) * inv_out) * q[b] * (1.0 / f - inv_cutoff)
                    acc += e if r2 < cutoff2 else 0.0
            out[res, partner] += prefactor * qa * acc


@numba.njit(cache=True, parallel=True, error_model="numpy")
def gb_pair_table(x, q, born, res_start, res_end, row_order, coulomb_constant, eps_in,
                  eps_out, kappa, cutoff2, inv_cutoff):
    """Residue-pair sums of the GB pair term, -k (1/eps_in - exp(-kappa f)/eps_out) q_a q_b (1/f - 1/r_c).

    Atoms must be in residue order (residue r's atoms are rows ``res_start[r]:res_end[r]``).

    Parameters
    ----------
    x : (n, 3) float64
        Positions, A (residue order).
    q : (n,) float64
        Charges, e.
    born : (n,) float64
        Born radii, A.
    res_start, res_end : (n_res,) int64
        Atom rows of each residue.
    row_order : (n_res,) int64
        The order the residue rows are dealt to threads (balanced: long rows with short ones).
    coulomb_constant : float
        k, kcal/mol A / e^2.
    eps_in, eps_out : float
        Solute and solvent dielectrics.
    kappa : float
        Debye-Hueckel screening, 1/A.
    cutoff2 : float
        Squared cutoff, A^2 (inf: none).
    inv_cutoff : float
        1 / cutoff, 1/A (0 without a cutoff).

    Returns
    -------
    (n_res, n_res) float64
        Entry (I, J), I <= J: the pair term summed over the atom pairs of residues I and J, kcal/mol
        (zero below the diagonal).
    """
    n_res = res_start.shape[0]
    out = np.zeros((n_res, n_res))
    inv_in, inv_out = 1.0 / eps_in, 1.0 / eps_out
    for k in prange(n_res):
        res = row_order[k]
        _pair_row(res, res_start, res_end, x, q, born, -coulomb_constant, inv_in, inv_out, kappa,
                  cutoff2, inv_cutoff, out)
    return out
