"""The nonbonded row kernel: Coulomb and LJ summed over the atom pairs of each residue pair.

:func:`residue_rows_kernel` runs over rows of residue pairs in parallel (numba ``prange``); each
pair owns its output slot, so no atom-pair array is ever materialised.  The pair forms are those
of :mod:`energy._kernels.pair_forms` (one definition; both paths here call them).
"""
from __future__ import annotations

import numba
import numpy as np

from energy._kernels.pair_forms import (
    C_A1,
    C_A2,
    C_C0,
    C_COULOMB,
    C_SWITCH_INV_WIDTH,
    C_SWITCH_ON,
    C_W1,
    C_W2,
    _coulomb_form,
    _lennard_jones,
    _pair_energy,
    _switch_form,
)
from energy._kernels.pbc import minimum_image


@numba.njit(cache=True, inline="always")
def _is_excluded(a, b, excl_ptr, excl_idx):
    lo, hi = (a, b) if a < b else (b, a)
    for k in range(excl_ptr[lo], excl_ptr[lo + 1]):
        if excl_idx[k] == hi:
            return True
    return False


@numba.njit(cache=True, inline="always")
def _image_shift(ri, rj, centers, h, orthorhombic):
    """Lattice vector that brings residue J next to residue I (from the residue centres)."""
    ex = centers[rj, 0] - centers[ri, 0]
    ey = centers[rj, 1] - centers[ri, 1]
    ez = centers[rj, 2] - centers[ri, 2]
    mx, my, mz = minimum_image(ex, ey, ez, h, orthorhombic)
    return ex - mx, ey - my, ez - mz


@numba.njit(cache=True)
def _residue_pair_scalar(ri, rj, check, per_atom_image, sx, sy, sz, pos, charges, lj_type,
                         rmin_tab, eps_tab, is_heavy, atom_of, res_start, res_end, excl_ptr,
                         excl_idx, h,
                         orthorhombic, consts, cutoff2):
    """One residue pair, atom pair by atom pair: (Coulomb, vdW, pairs in range, min heavy r^2).

    Handles what the vectorised path does not: the pair (I, I), exclusion checks (``check``),
    a separate minimum image per atom pair, and the exp-6 form.  Residue J is moved by
    (sx, sy, sz) unless ``per_atom_image``."""
    coul_sum = 0.0
    lj_sum = 0.0
    count = 0
    min_h = np.inf
    for ka in range(res_start[ri], res_end[ri]):
        xa = pos[ka, 0] + sx
        ya = pos[ka, 1] + sy
        za = pos[ka, 2] + sz
        qa = charges[ka]
        ta = lj_type[ka]
        ha = is_heavy[ka]
        start_b = ka + 1 if ri == rj else res_start[rj]
        for kb in range(start_b, res_end[rj]):
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
    return coul_sum, lj_sum, count, min_h


@numba.njit(cache=True, inline="always", error_model="numpy")
def _block_loop(xa, ya, za, qa, heavy_a, with_lj, bx, by, bz, bq, bheavy, brmin, beps, consts,
                cutoff2, acc_coul, acc_lj, acc_count, acc_heavy):
    """One atom of residue I against the gathered block: branch-free (selects only), so that
    the compiler emits SIMD code; ``with_lj`` False skips LJ for atom types with no well."""
    cf, w1, w2 = consts[C_COULOMB], consts[C_W1], consts[C_W2]
    a1, a2, c0 = consts[C_A1], consts[C_A2], consts[C_C0]
    on, inv_width = consts[C_SWITCH_ON], consts[C_SWITCH_INV_WIDTH]
    heavy = 1.0 if heavy_a else 0.0
    for b in range(np.uint64(0), np.uint64(len(bx))):  # with_lj is loop-invariant: split on it
        dx = bx[b] - xa
        dy = by[b] - ya
        dz = bz[b] - za
        r2 = dx * dx + dy * dy + dz * dz
        inside = r2 < cutoff2
        r = np.sqrt(r2)
        inv_r = 1.0 / r
        coul = _coulomb_form(qa * bq[b], r, inv_r, r2, cf, w1, w2, a1, a2, c0)
        acc_coul[b] += coul if inside else 0.0
        if with_lj:
            eps = beps[b]
            lj = _lennard_jones(inv_r * inv_r, brmin[b], eps) * _switch_form(r, on, inv_width)
            acc_lj[b] += lj if (inside and eps != 0.0) else 0.0
        acc_count[b] += 1.0 if inside else 0.0
        hr2 = r2 if heavy * bheavy[b] > 0.0 else np.inf
        cur = acc_heavy[b]
        acc_heavy[b] = hr2 if hr2 < cur else cur


@numba.njit(cache=True, error_model="numpy")
def _rows_chunk(k_lo, k_hi, pos, charges, lj_type, rmin_tab, eps_tab, type_has_lj, is_heavy,
                atom_of, res_start, res_end, rows, row_start, pair_j, pair_has_excl, excl_ptr,
                excl_idx,
                centers, radii, r_max, h, orthorhombic, min_width, periodic, consts, cutoff2,
                vectorised, out_coul, out_lj, out_count, out_min_heavy):
    """Rows ``rows[k_lo:k_hi]`` on one thread (a separate function, so that its work arrays are
    private to the calling thread); ``r_max`` is the largest residue radius."""
    cutoff = np.sqrt(cutoff2)
    # Work arrays of this chunk of rows, grown on demand: block atoms (x, y, z, charge,
    # heavy flag, LJ Rmin and depth against the current atom type) and per-atom sums.
    cap_atoms, cap_partners = 1024, 256
    work = np.empty((11, cap_atoms))
    types = np.empty(cap_atoms, lj_type.dtype)
    scalar = np.empty(cap_partners, np.bool_)
    shifts = np.zeros((cap_partners, 3))
    for k in range(k_lo, k_hi):
        ri = rows[k]
        p0, p1 = row_start[ri], row_start[ri + 1]
        n_partners = p1 - p0
        if n_partners > cap_partners:
            cap_partners = 2 * n_partners
            scalar = np.empty(cap_partners, np.bool_)
            shifts = np.zeros((cap_partners, 3))
        # Can any partner of I need an image per atom pair?  (Not in a cell this wide.)
        any_per_atom = periodic and not (2.0 * (cutoff + radii[ri] + r_max) < min_width)
        n_block = 0
        for q in range(n_partners):
            p = p0 + q
            rj = pair_j[p]
            per_atom = any_per_atom and not (2.0 * (cutoff + radii[ri] + radii[rj]) < min_width)
            scalar[q] = (not vectorised) or rj == ri or pair_has_excl[p] or per_atom
            if periodic and not per_atom:
                shifts[q, 0], shifts[q, 1], shifts[q, 2] = _image_shift(ri, rj, centers, h,
                                                                        orthorhombic)
            else:
                shifts[q, 0] = shifts[q, 1] = shifts[q, 2] = 0.0
            if scalar[q]:
                c, l, n, m = _residue_pair_scalar(ri, rj, pair_has_excl[p], per_atom,
                                                  shifts[q, 0], shifts[q, 1], shifts[q, 2],
                                                  pos, charges, lj_type, rmin_tab, eps_tab,
                                                  is_heavy, atom_of, res_start, res_end, excl_ptr,
                                                  excl_idx, h, orthorhombic, consts, cutoff2)
                out_coul[p] = c
                out_lj[p] = l
                out_count[p] = n
                out_min_heavy[p] = np.sqrt(m)
            else:
                n_block += res_end[rj] - res_start[rj]
        if n_block == 0:
            continue
        if n_block > cap_atoms:
            cap_atoms = 2 * n_block
            work = np.empty((11, cap_atoms))
            types = np.empty(cap_atoms, lj_type.dtype)
        bx, by, bz = work[0, :n_block], work[1, :n_block], work[2, :n_block]
        bq, bheavy = work[3, :n_block], work[4, :n_block]
        brmin, beps = work[5, :n_block], work[6, :n_block]
        acc_coul, acc_lj = work[7, :n_block], work[8, :n_block]
        acc_count, acc_heavy = work[9, :n_block], work[10, :n_block]
        bt = types[:n_block]
        # Gather the partners' atoms, moved into residue I's frame (minus the image shift).
        # (Unsigned indices here and below spare numba's negative-index wrap-around per load.)
        g = np.uint64(0)
        for q in range(n_partners):
            if scalar[q]:
                continue
            rj = pair_j[p0 + q]
            for kb in range(np.uint64(res_start[rj]), np.uint64(res_end[rj])):
                bx[g] = pos[kb, 0] - shifts[q, 0]
                by[g] = pos[kb, 1] - shifts[q, 1]
                bz[g] = pos[kb, 2] - shifts[q, 2]
                bq[g] = charges[kb]
                bt[g] = lj_type[kb]
                bheavy[g] = 1.0 if is_heavy[kb] else 0.0
                g += np.uint64(1)
        acc_coul[:] = 0.0
        acc_lj[:] = 0.0
        acc_count[:] = 0.0
        acc_heavy[:] = np.inf
        last_type = -1
        for ka in range(res_start[ri], res_end[ri]):
            ta = lj_type[ka]
            with_lj = type_has_lj[ta]
            if with_lj and ta != last_type:  # LJ parameters of this type against the block
                for b in range(np.uint64(0), np.uint64(n_block)):
                    brmin[b] = rmin_tab[ta, bt[b]]
                    beps[b] = eps_tab[ta, bt[b]]
                last_type = ta
            _block_loop(pos[ka, 0], pos[ka, 1], pos[ka, 2], charges[ka], is_heavy[ka],
                        with_lj, bx, by, bz, bq, bheavy, brmin, beps, consts,
                        cutoff2, acc_coul, acc_lj, acc_count, acc_heavy)
        # Sums per partner (its atoms are consecutive in the block).
        m = 0
        for q in range(n_partners):
            if scalar[q]:
                continue
            rj = pair_j[p0 + q]
            size = res_end[rj] - res_start[rj]
            c = 0.0
            l = 0.0
            n = 0.0
            mh = np.inf
            for b in range(np.uint64(m), np.uint64(m + size)):
                c += acc_coul[b]
                l += acc_lj[b]
                n += acc_count[b]
                mh = min(mh, acc_heavy[b])
            m += size
            p = p0 + q
            out_coul[p] = c
            out_lj[p] = l
            out_count[p] = int(n)
            out_min_heavy[p] = np.sqrt(mh)


@numba.njit(parallel=True, cache=True, error_model="numpy")
def residue_rows_kernel(pos, charges, lj_type, rmin_tab, eps_tab, type_has_lj, is_heavy, atom_of,
                        res_start, res_end, rows, row_start, pair_j, pair_has_excl, excl_ptr,
                        excl_idx,
                        centers, radii, h, orthorhombic, min_width, periodic, consts, cutoff2,
                        vectorised, out_coul, out_lj, out_count, out_min_heavy):
    """Sum Coulomb and LJ over every atom pair of each residue pair of the given CSR rows.

    Row I holds the residue pairs ``row_start[I]:row_start[I+1]`` (partners ``pair_j``, the
    first being (I, I)); results go to ``out_*[p]`` of each pair p (kcal/mol; count of atom pairs
    in range; smallest heavy-atom distance examined, inf when none).  Rows run in parallel
    (numba ``prange``), each owned by one thread, so no atom-pair array is ever materialised.

    Per-atom inputs (``pos``, ``charges``, ``lj_type``, ``is_heavy``) hold each residue's atoms
    together: those of residue r are ``res_start[r]:res_end[r]`` (the residues themselves may lie
    in any order; spatial order keeps a row's partners close in memory); ``atom_of`` maps back
    to the system's atom index (for the exclusion lists).  In a periodic cell (box matrix ``h``, smallest
    perpendicular width ``min_width``) residue J takes one image, chosen from the residue centres,
    when the cell is wider than twice cutoff + r_I + r_J (then only one image can hold atoms in
    range); otherwise each atom pair takes its own minimum image.

    ``type_has_lj[t]``: atom type t has a nonzero well depth with some type.
    ``vectorised`` (Lennard-Jones only): the partners that need no exclusion check and take one
    image have their atoms gathered, shifted, into one contiguous block, and each atom of I runs
    a branch-free loop over that block that the compiler turns into SIMD code; sums per partner
    follow.  Everything else (and everything when ``vectorised`` is False) goes through
    :func:`_residue_pair_scalar`.  Both use the same pair forms.

    Parameters
    ----------
    pos : (n_atoms, 3) float64
        Positions in kernel layout (each residue's atoms together), A.
    charges : (n_atoms,) float64
        Charges in kernel layout, e.
    lj_type : (n_atoms,) intp
        LJ type of each atom in kernel layout (index into ``rmin_tab``, ``eps_tab``).
    rmin_tab, eps_tab : (n_types, n_types) float64
        Pair Rmin_ij (A) and well depth eps_ij (kcal/mol) per type pair.
    type_has_lj : (n_types,) bool
        The type has a nonzero well depth with some type.
    is_heavy : (n_atoms,) bool
        Not a hydrogen, kernel layout.
    atom_of : (n_atoms,) intp
        System atom index of each kernel atom row.
    res_start, res_end : (n_res,) intp
        Kernel rows of residue r: ``res_start[r]:res_end[r]``.
    rows : (k,) intp
        The rows (residues I) to evaluate.
    row_start : (n_res + 1,) int64
        CSR row starts of the residue-pair table (offsets into ``pair_j`` and the outputs).
    pair_j : (m,) int32
        Partner residue J of each pair.
    pair_has_excl : (m,) bool
        The residue pair holds an exception pair (its atom pairs are checked against the
        exclusion lists).
    excl_ptr : (n_atoms + 1,) intp
        CSR of the exclusion lists by system atom (:func:`energy.terms.exclusions.exclusion_csr`).
    excl_idx : (n_exc,) intp
        Excluded partners j > i of each atom i.
    centers : (n_res, 3) float64
        Residue sphere centres, A (used for the image of residue J in a periodic cell).
    radii : (n_res,) float64
        Residue sphere radii, A.
    h : (3, 3) float64
        Box matrix (rows = cell vectors, A); the identity when not periodic.
    orthorhombic : bool
        ``h`` is diagonal.
    min_width : float
        Smallest perpendicular width of the cell, A.
    periodic : bool
        Apply the minimum-image convention.
    consts : (11,) float64
        ``KernelConstants.values``.
    cutoff2 : float
        Squared cutoff, A^2 (inf without a cutoff).
    vectorised : bool
        Use the SIMD path where it applies (Lennard-Jones only).
    out_coul, out_lj : (m,) float64
        Output: Coulomb and vdW energy of each residue pair of these rows, kcal/mol.
    out_count : (m,) int32
        Output: atom pairs within the cutoff, excluded pairs left out.
    out_min_heavy : (m,) float64
        Output: smallest heavy-atom distance examined, A (inf when none).

    Returns
    -------
    None
        The ``out_*`` entries of the pairs of ``rows`` are written in place.
    """
    n_chunks = min(len(rows), 64)
    r_max = radii.max() if len(radii) else 0.0
    for chunk in numba.prange(n_chunks):
        _rows_chunk(chunk * len(rows) // n_chunks, (chunk + 1) * len(rows) // n_chunks, pos,
                    charges, lj_type, rmin_tab, eps_tab, type_has_lj, is_heavy, atom_of, res_start,
                    res_end,
                    rows, row_start, pair_j, pair_has_excl, excl_ptr, excl_idx, centers, radii,
                    r_max, h, orthorhombic, min_width, periodic, consts, cutoff2, vectorised, out_coul,
                    out_lj, out_count, out_min_heavy)
