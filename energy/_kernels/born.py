"""Compiled generalized Born kernels: effective Born radii (many-body, over the whole system)
and the GB pair sums per residue pair.

The formulas are written out in docs/physics.md ("Implicit solvent"); lengths in A, energies in
kcal/mol.  A cutoff (``cutoff2`` finite) drops atom pairs at r >= cutoff from both the
descreening integral and the pair sum, and shifts the pair form by 1/cutoff (OpenMM's
convention for its CustomGBForce-based models).  Without a cutoff every atom pair is visited;
with one, only the atoms of the residue pairs the cell grid lists (:mod:`energy._kernels.cells`,
the nonbonded terms' search: residue spheres within the cutoff), so the work grows with the
number of atoms, not its square.  The listed kernels take atoms in residue order (residue r's
atoms are rows ``res_start[r]:res_end[r]``).
"""
from __future__ import annotations

import math

import numba
import numpy as np
from numba import prange


@numba.njit(cache=True, error_model="numpy")
def _hct_sum(i, x, rho, scaled, cutoff2, lo, hi):
    """Sum over j in lo..hi-1, j != i, of the HCT descreening integral of atom i by atom j (1/A),
    branch-free: pairs that do not count (j = i, beyond the cutoff, j's sphere not reaching i)
    are evaluated at a harmless stand-in distance and selected away."""
    xi, yi, zi = x[i, 0], x[i, 1], x[i, 2]
    rho_i = rho[i]
    total = 0.0
    for j in range(lo, hi):
        dx, dy, dz = x[j, 0] - xi, x[j, 1] - yi, x[j, 2] - zi
        r2 = dx * dx + dy * dy + dz * dz
        if r2 >= cutoff2:  # many of a listed residue pair's atom pairs (never without a cutoff)
            continue
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
def _neck_sum(i, x, radius, neck_index, neck_m0, neck_d0, neck_cut, cutoff2, lo, hi):
    """Sum over j in lo..hi-1, j != i, of the GBn2 neck term (1/A, before the neck scale)."""
    xi, yi, zi = x[i, 0], x[i, 1], x[i, 2]
    total = 0.0
    col = neck_index[i]
    for j in range(lo, hi):
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


@numba.njit(cache=True, error_model="numpy", inline="always")
def _radius_from_integral(integral, rho_i, radius_i, alpha_i, beta_i, gamma_i):
    """B_i from the descreening integral I_i (the OBC tanh rescaling)."""
    psi = integral * rho_i
    return 1.0 / (1.0 / rho_i - math.tanh(psi * (alpha_i - psi * (beta_i - psi * gamma_i))) / radius_i)


@numba.njit(cache=True, parallel=True, error_model="numpy")
def born_radii(x, rho, scaled, radius, alpha, beta, gamma, neck_index, neck_m0, neck_d0, neck_scale,
               neck_cut, cutoff2):
    """Effective Born radii B_i = 1 / (1/rho_i - tanh(a psi - b psi^2 + c psi^3) / R_i), psi = I_i rho_i,
    the integral over every other atom.

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
        integral = _hct_sum(i, x, rho, scaled, cutoff2, 0, n)
        if neck_scale != 0.0:
            integral += neck_scale * _neck_sum(i, x, radius, neck_index, neck_m0, neck_d0, neck_cut,
                                               cutoff2, 0, n)
        out[i] = _radius_from_integral(integral, rho[i], radius[i], alpha[i], beta[i], gamma[i])
    return out


@numba.njit(cache=True, parallel=True, error_model="numpy")
def born_radii_listed(x, rho, scaled, radius, alpha, beta, gamma, neck_index, neck_m0, neck_d0,
                      neck_scale, neck_cut, cutoff2, res_start, res_end, partner_ptr, partner_res):
    """Born radii as :func:`born_radii`, the integral over the atoms of each residue's listed
    partner residues only (a cutoff: the partners hold every atom within it).

    Parameters
    ----------
    x, rho, scaled, radius, alpha, beta, gamma, neck_index : (n, ...) arrays
        As :func:`born_radii`, atoms in residue order.
    neck_m0, neck_d0 : (k, k) float64
        Neck maximum (1/A) and its distance (A).
    neck_scale, neck_cut : float
        Neck scale (0: no neck term) and the neck's reach past R_i + R_j, A.
    cutoff2 : float
        Squared cutoff, A^2.
    res_start, res_end : (n_res,) int64
        Atom rows of each residue.
    partner_ptr : (n_res + 1,) int64
        Residue I's partners are ``partner_res[partner_ptr[I]:partner_ptr[I+1]]`` (I itself included).
    partner_res : (m,) int32 or int64
        Partner residues.

    Returns
    -------
    (n,) float64
        Born radii, A (residue order).
    """
    n_res = res_start.shape[0]
    out = np.empty(x.shape[0])
    for res in prange(n_res):
        for i in range(res_start[res], res_end[res]):
            integral = 0.0
            neck = 0.0
            for k in range(partner_ptr[res], partner_ptr[res + 1]):
                other = partner_res[k]
                integral += _hct_sum(i, x, rho, scaled, cutoff2, res_start[other], res_end[other])
                if neck_scale != 0.0:
                    neck += _neck_sum(i, x, radius, neck_index, neck_m0, neck_d0, neck_cut, cutoff2,
                                      res_start[other], res_end[other])
            out[i] = _radius_from_integral(integral + neck_scale * neck, rho[i], radius[i], alpha[i],
                                           beta[i], gamma[i])
    return out


@numba.njit(cache=True, error_model="numpy")
def _pair_run(xa, ya, za, ba, x, q, born, lo, hi, inv_in, inv_out, kappa, cutoff2, inv_cutoff):
    """Sum over b in lo..hi-1 of (1/eps_in - exp(-kappa f)/eps_out) q_b (1/f - 1/r_c) for the
    atom at (xa, ya, za) with Born radius ba (pairs at r >= r_c skipped)."""
    acc = 0.0
    if kappa == 0.0:
        screen0 = inv_in - inv_out
        for b in range(lo, hi):
            dx, dy, dz = x[b, 0] - xa, x[b, 1] - ya, x[b, 2] - za
            r2 = dx * dx + dy * dy + dz * dz
            if r2 >= cutoff2:
                continue
            bb = ba * born[b]
            f = math.sqrt(r2 + bb * math.exp(-r2 / (4.0 * bb)))
            acc += screen0 * q[b] * (1.0 / f - inv_cutoff)
    else:
        for b in range(lo, hi):
            dx, dy, dz = x[b, 0] - xa, x[b, 1] - ya, x[b, 2] - za
            r2 = dx * dx + dy * dy + dz * dz
            if r2 >= cutoff2:
                continue
            bb = ba * born[b]
            f = math.sqrt(r2 + bb * math.exp(-r2 / (4.0 * bb)))
            acc += (inv_in - math.exp(-kappa * f) * inv_out) * q[b] * (1.0 / f - inv_cutoff)
    return acc


@numba.njit(cache=True, error_model="numpy")
def _pair_row(res, res_start, res_end, x, q, born, prefactor, inv_in, inv_out, kappa, cutoff2,
              inv_cutoff, out):
    """GB pair sum of every atom pair (a, b), a in residue ``res``, b > a (residue order), summed
    per partner residue (a contiguous run of b: no scattered writes in the inner loop)."""
    n_res = res_start.shape[0]
    for a in range(res_start[res], res_end[res]):
        qa = q[a]
        if qa == 0.0:
            continue
        for partner in range(res, n_res):
            lo = a + 1 if partner == res else res_start[partner]
            acc = _pair_run(x[a, 0], x[a, 1], x[a, 2], born[a], x, q, born, lo, res_end[partner],
                            inv_in, inv_out, kappa, cutoff2, inv_cutoff)
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


@numba.njit(cache=True, parallel=True, error_model="numpy")
def gb_pair_rows(x, q, born, res_start, res_end, pair_j, row_start, row_order, coulomb_constant,
                 eps_in, eps_out, kappa, cutoff2, inv_cutoff):
    """The GB pair sums of the listed residue pairs (a CSR table, I <= J), as :func:`gb_pair_table`.

    Parameters
    ----------
    x, q, born : (n, 3), (n,), (n,) float64
        Positions (A), charges (e) and Born radii (A), atoms in residue order.
    res_start, res_end : (n_res,) int64
        Atom rows of each residue.
    pair_j : (m,) int32 or int64
        Second residue of each listed pair; row I is ``row_start[I]:row_start[I+1]``.
    row_start : (n_res + 1,) int64
        CSR row starts.
    row_order : (n_res,) int64
        The order the rows are dealt to threads.
    coulomb_constant : float
        k, kcal/mol A / e^2.
    eps_in, eps_out : float
        Solute and solvent dielectrics.
    kappa : float
        Debye-Hueckel screening, 1/A.
    cutoff2 : float
        Squared cutoff, A^2.
    inv_cutoff : float
        1 / cutoff, 1/A.

    Returns
    -------
    (m,) float64
        The pair term summed over the atom pairs of each listed residue pair (atom pairs b > a
        within one residue), kcal/mol.
    """
    n_res = res_start.shape[0]
    out = np.zeros(pair_j.shape[0])
    inv_in, inv_out = 1.0 / eps_in, 1.0 / eps_out
    for t in prange(n_res):
        res = row_order[t]
        for a in range(res_start[res], res_end[res]):
            qa = q[a]
            if qa == 0.0:
                continue
            for k in range(row_start[res], row_start[res + 1]):
                partner = pair_j[k]
                lo = a + 1 if partner == res else res_start[partner]
                acc = _pair_run(x[a, 0], x[a, 1], x[a, 2], born[a], x, q, born, lo, res_end[partner],
                                inv_in, inv_out, kappa, cutoff2, inv_cutoff)
                out[k] -= coulomb_constant * qa * acc
    return out


@numba.njit(cache=True, parallel=True, error_model="numpy")
def gb_pair_terms(x, q, born, pair_a, pair_b, coulomb_constant, eps_in, eps_out, kappa, cutoff2,
                  inv_cutoff):
    """The GB pair term of each listed atom pair (the residue kernels' form, one pair at a time).

    Parameters
    ----------
    x : (n, 3) float64
        Positions, A.
    q, born : (n,) float64
        Charges (e) and Born radii (A).
    pair_a, pair_b : (m,) int64
        The two atoms of each pair (a != b).
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
    (m,) float64
        -k (1/eps_in - exp(-kappa f)/eps_out) q_a q_b (1/f - 1/r_c), kcal/mol (0 at r >= r_c).
    """
    out = np.empty(pair_a.shape[0])
    inv_in, inv_out = 1.0 / eps_in, 1.0 / eps_out
    for k in prange(pair_a.shape[0]):
        a, b = pair_a[k], pair_b[k]
        out[k] = -coulomb_constant * q[a] * _pair_run(x[a, 0], x[a, 1], x[a, 2], born[a], x, q, born, b, b + 1,
                                                      inv_in, inv_out, kappa, cutoff2, inv_cutoff)
    return out
