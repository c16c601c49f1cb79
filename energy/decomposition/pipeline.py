"""One energy evaluation: every term, every interaction, decomposed per residue pair.

:func:`compute_steps` is a generator that yields ``(done, total)`` progress and returns the
:class:`EnergyResult`; :func:`compute` runs it to the end.  GUI workers drive the generator and
check for cancellation between steps.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from energy._kernels import residue_rows
from energy._kernels.cells import search_rows
from energy._kernels.csr import all_pairs_rows, locate_pairs
from energy._kernels.neighbors import ResidueAtoms, residue_spheres, spatial_layout
from energy._kernels.pair_key import ordered_pair_keys, split_keys
from energy._kernels.pbc import is_orthorhombic, periodic_cell, perpendicular_widths
from energy.decomposition.finiteness import check_finite
from energy.decomposition.residue_pairs import BondedAttribution, ResiduePairEnergies, assemble, sorted_unique
from energy.io.validation import check_frame
from energy.model.cell import nonbonded_cell
from energy.model.settings import EnergySettings
from energy.model.system import Frame, MolecularSystem
from energy.model.virtual_sites import placed_frame
from energy.terms import registry
from energy.terms.exclusions import exclusion_csr
from energy.terms.nonbonded import KernelConstants, exception_energies
from energy.terms.registry import BONDED_TERMS, TERMS
from energy.terms.solvation import solvation_energies

#: Use the SIMD path of the nonbonded kernel where it applies (Lennard-Jones); False sends every
#: residue pair through the atom-pair-by-atom-pair path (tests compare the two).
VECTORISED_KERNEL = True



@dataclass(frozen=True)
class EnergyResult:
    """Everything one evaluation produced.

    ``totals``: term -> kcal/mol (all of :data:`TERMS` plus ``total``).
    ``interactions``: system attribute (``bonds``, ``angles``, ..., ``exceptions``) -> (n,) energies
      aligned with that table's rows; for ``exceptions`` a dict with ``coulomb``, ``lj``, ``distance``;
      with implicit solvent ``solvation``: per-atom ``born_radius`` (A), ``self_polar`` and
      ``nonpolar`` (kcal/mol) (energy.terms.solvation).
    ``residue_pairs``: the sparse decomposition.  ``timings``: seconds per phase (``compute``: the
    terms and the decomposition; ``checks``: the geometry checks before them, not included).
    """

    settings: EnergySettings
    totals: dict
    interactions: dict
    residue_pairs: ResiduePairEnergies
    timings: dict = field(default_factory=dict)
    periodic: bool = False
    n_atom_pairs: int = 0
    #: Without a cutoff on a large system (energy._kernels.residue_rows): residue pairs too small to list,
    #: ``n_pairs``, their ``coulomb`` and ``lj`` sums and the threshold ``below``; None otherwise.
    unlisted: dict | None = None
    #: Why the frame's unit cell was not used (energy.model.cell), or "".
    cell_note: str = ""


def _validate_frame(system: MolecularSystem, frame: Frame):
    """The geometry checks of :mod:`energy.io.validation`, before any energy is computed."""
    check_frame(system, frame)


def _exception_residue_keys(system):
    """Residue pairs holding at least one exception pair, as sorted unique (lo, hi) arrays."""
    ex = system.exception_pairs
    n_res = system.n_residues
    if len(ex) == 0:
        z = np.zeros(0, np.intp)
        return z, z
    ri, rj = system.resindex[ex[:, 0]], system.resindex[ex[:, 1]]
    return split_keys(sorted_unique(ordered_pair_keys(ri, rj, n_res)), n_res)


def _exception_residue_flags(system, pair_j, row_start):
    """(n_pairs,) bool: residue pair holds at least one exception pair."""
    flags = np.zeros(len(pair_j), dtype=np.bool_)
    lo, hi = system.derived("exception_residue_keys", _exception_residue_keys)
    if len(lo):
        rows = locate_pairs(row_start, pair_j, lo, hi)
        flags[rows[rows >= 0]] = True  # exception pairs always lie within the examined rows
    return flags


def _attribution(system, form: registry.TableForm) -> BondedAttribution:
    """Residue pairs that the interactions of bonded table ``form`` go to (built once per
    system)."""
    return system.derived(f"attribution_{form.attr}",
                          lambda s: BondedAttribution.build(registry.table_of(s, form).atoms, s.resindex))


def _type_has_lj(system):
    return np.any(system.lj_eps != 0.0, axis=1)


def _exclusions(system):
    return exclusion_csr(system.exception_pairs, system.n_atoms)


def _residue_atoms(system) -> ResidueAtoms:
    return ResidueAtoms.from_resindex(system.resindex, system.n_residues)


def _residue_ordered_atoms(system):
    """Charges, LJ types and heavy-atom mask in residue order (the kernel's layout), and whether
    that order is the file's own."""
    order = system.derived("residue_atoms", _residue_atoms).atoms
    identity = bool(np.array_equal(order, np.arange(system.n_atoms)))
    if identity:
        return system.charges, system.lj_type, system.is_heavy, True
    return (np.ascontiguousarray(system.charges[order]), np.ascontiguousarray(system.lj_type[order]),
            np.ascontiguousarray(system.is_heavy[order]), False)


def prepare_system(system: MolecularSystem) -> None:
    """Build the topology-derived arrays every evaluation of ``system`` uses.

    Residue atom order, exclusion lists, residue pairs holding exceptions, bonded attributions
    (kept on the system, :meth:`MolecularSystem.derived`).  :func:`compute_steps` builds them on
    first use anyway; calling this first keeps that one-off cost out of the first
    ``timings.compute`` (like creating a simulation context before timing energies).

    Parameters
    ----------
    system : MolecularSystem
        The system to prepare.
    """
    system.derived("residue_atoms", _residue_atoms)
    system.derived("residue_ordered_atoms", _residue_ordered_atoms)
    system.derived("exclusion_csr", _exclusions)
    system.derived("exception_residue_keys", _exception_residue_keys)
    system.derived("type_has_lj", _type_has_lj)
    for _, form in registry.bonded_tables():
        _attribution(system, form)


def compute_steps(system: MolecularSystem, frame: Frame, settings: EnergySettings | None = None):
    """Generator: yields ``(done, total)``, returns an :class:`EnergyResult`.

    Parameters
    ----------
    system : MolecularSystem
        The parameterised system.
    frame : Frame
        Its coordinates (A) and unit cell.
    settings : EnergySettings or None, optional
        Cutoff, electrostatics, vdW model, periodicity (None: the defaults, no cutoff).

    Yields
    ------
    done, total : int
        Residue pairs of the nonbonded evaluation done so far, out of those examined.

    Returns
    -------
    EnergyResult
        (The generator's return value.)  ``totals`` per term and ``total`` (kcal/mol),
        ``interactions`` (one (n,) float64 kcal/mol array per bonded table, and the exception
        pairs' ``coulomb``, ``lj`` (kcal/mol) and ``distance`` (A)), ``residue_pairs``, ``timings`` (s).

    Raises
    ------
    InputMismatchError
        If the frame does not fit the system (atom count, non-finite coordinates).
    SettingsError
        If a cutoff is used in a unit cell narrower than twice the cutoff.
    """
    settings = settings or EnergySettings()
    t_checks = time.perf_counter()
    frame = placed_frame(system, frame)  # virtual sites from their parents, before any term
    _validate_frame(system, frame)
    t0 = time.perf_counter()
    x = frame.positions
    n_res = system.n_residues
    # Implicit solvent is a non-periodic model (OpenMM's CutoffNonPeriodic convention): no cell.
    cell = nonbonded_cell(frame.box, system.n_atoms,
                          settings.use_periodic and settings.implicit_solvent is None)
    box = cell.box
    periodic = box is not None and settings.cutoff_angstrom is not None
    h = periodic_cell(box, settings.cutoff_angstrom) if periodic else np.eye(3)
    orthorhombic = is_orthorhombic(h)
    min_width = float(perpendicular_widths(h).min())

    # Bonded terms: from the coordinates as given, never a minimum image (docs/physics.md; the
    # readers make molecules split across a periodic box whole, energy.io.whole).
    contributions, interactions, totals = [], {}, dict.fromkeys(TERMS, 0.0)
    for term, form in registry.bonded_tables():
        e = np.asarray(form.energies(registry.table_of(system, form), x, None, system), np.float64)
        interactions[form.attr] = e
        totals[term] += float(e.sum())
        contributions.append((term, *_attribution(system, form).split(e)))

    # Exceptions (1-4 with their own parameters; 1-2, 1-3 carry zeros): within a molecule, so
    # like the bonded terms from the coordinates as given (as OpenMM's NonbondedForce by default).
    coul_ex, lj_ex, r_ex = exception_energies(system, x, settings, None)
    interactions["exceptions"] = {"coulomb": coul_ex, "lj": lj_ex, "distance": r_ex}
    ex_i = system.resindex[system.exception_pairs[:, 0]]
    ex_j = system.resindex[system.exception_pairs[:, 1]]
    lo, hi = np.minimum(ex_i, ex_j), np.maximum(ex_i, ex_j)
    contributions += [("coulomb", lo, hi, coul_ex), ("lj", lo, hi, lj_ex)]
    totals["coulomb"] += float(coul_ex.sum())
    totals["lj"] += float(lj_ex.sum())
    t_bonded = time.perf_counter()

    # Ordinary nonbonded pairs, residue pair by residue pair.
    res_atoms = system.derived("residue_atoms", _residue_atoms)
    excl_ptr, excl_idx = system.derived("exclusion_csr", _exclusions)
    kc = KernelConstants.from_settings(settings.coulomb_settings())
    blocked = (settings.cutoff_angstrom is None
               and n_res * (n_res + 1) // 2 > residue_rows.ALL_PAIRS_LISTED_LIMIT)
    spatial_order = None
    if settings.cutoff_angstrom is None:
        centers, radii = np.zeros((n_res, 3)), np.zeros(n_res)
        if not blocked:
            pair_i, pair_j, row_start = all_pairs_rows(n_res)
        q_r, t_r, heavy_r, identity = system.derived("residue_ordered_atoms", _residue_ordered_atoms)
        atom_of, res_start, res_end = res_atoms.atoms, res_atoms.ptr[:-1], res_atoms.ptr[1:]
        x_r = x if identity else np.ascontiguousarray(x[atom_of])
    else:
        centers, radii = residue_spheres(x, res_atoms, box if periodic else None)
        pair_i, pair_j, row_start, spatial_order = search_rows(
            centers, radii, settings.cutoff_angstrom, h if periodic else None)
        # Residues laid out in the search's spatial order: a row's partners sit close in memory.
        atom_of, res_start, res_end = spatial_layout(spatial_order, res_atoms.ptr, res_atoms.atoms)
        x_r, q_r = x[atom_of], system.charges[atom_of]
        t_r, heavy_r = system.lj_type[atom_of], system.is_heavy[atom_of]
    inputs = residue_rows.KernelInputs(
        x_r, q_r, t_r, system.lj_rmin, system.lj_eps, system.derived("type_has_lj", _type_has_lj),
        heavy_r, atom_of, res_start, res_end, excl_ptr, excl_idx, centers, radii,
        h, orthorhombic, min_width, periodic, kc.values, kc.cutoff2,
        VECTORISED_KERNEL and settings.vdw == "lj")
    t_search = time.perf_counter()
    if blocked:
        rows = yield from residue_rows.evaluate_all_pairs_in_blocks(
            inputs, n_res, system.derived("exception_residue_keys", _exception_residue_keys))
    else:
        rows = yield from residue_rows.evaluate_listed(
            inputs, pair_i, pair_j, row_start, _exception_residue_flags(system, pair_j, row_start),
            spatial_order)
    totals["coulomb"] += rows.coulomb_total
    totals["lj"] += rows.lj_total
    t_kernel = time.perf_counter()

    # Implicit solvent: Born radii over the whole system, GB pairs per residue pair, self and
    # nonpolar terms on the residue diagonal (energy.terms.solvation).
    if settings.implicit_solvent is not None:
        # with a cutoff, the nonbonded terms' residue pairs (non-periodic here) bound the GB pairs
        listed = None if settings.cutoff_angstrom is None else (pair_i, pair_j, row_start)
        solv = solvation_energies(system, x, settings, res_atoms, residue_pairs=listed)
        interactions["solvation"] = {"born_radius": solv.born_radius, "self_polar": solv.self_polar,
                                     "nonpolar": solv.nonpolar}
        contributions.append(("solvation_polar", solv.pair_i, solv.pair_j, solv.pair_polar))
        res = np.arange(n_res)
        contributions.append(("solvation_nonpolar", res, res,
                              np.bincount(system.resindex, solv.nonpolar, minlength=n_res)))
        totals["solvation_polar"] += solv.polar_total
        totals["solvation_nonpolar"] += solv.nonpolar_total
    t_solvation = time.perf_counter()

    residue_pairs = assemble(n_res, rows.pair_i, rows.pair_j, rows.row_start,
                             {"coulomb": rows.coulomb, "lj": rows.lj},
                             rows.min_heavy,
                             rows.count > 0, contributions)
    totals["total"] = float(sum(totals[t] for t in TERMS))
    check_finite(system, frame, settings, totals, interactions, residue_pairs)
    t_end = time.perf_counter()
    timings = {"bonded": t_bonded - t0, "neighbour_search": t_search - t_bonded,
               "nonbonded": t_kernel - t_search, "solvation": t_solvation - t_kernel,
               "aggregate": t_end - t_solvation,
               "compute": t_end - t0, "checks": t0 - t_checks}
    return EnergyResult(settings=settings, totals=totals, interactions=interactions,
                        residue_pairs=residue_pairs, timings=timings, periodic=periodic,
                        n_atom_pairs=rows.n_atom_pairs, unlisted=rows.unlisted, cell_note=cell.note)


def compute(system: MolecularSystem, frame: Frame, settings: EnergySettings | None = None,
            progress=None) -> EnergyResult:
    """Run :func:`compute_steps` to the end; ``progress(done, total)`` is called at each step.

    Parameters
    ----------
    system : MolecularSystem
        The parameterised system.
    frame : Frame
        Its coordinates (A) and unit cell.
    settings : EnergySettings or None, optional
        Cutoff, electrostatics, vdW model, periodicity (None: the defaults, no cutoff).
    progress : callable or None, optional
        Called with ``(done, total)`` at each step.

    Returns
    -------
    EnergyResult
        As :func:`compute_steps` (kcal/mol, A).

    Raises
    ------
    InputMismatchError
        If the frame does not fit the system (atom count, non-finite coordinates).
    SettingsError
        If a cutoff is used in a unit cell narrower than twice the cutoff.
    """
    return run_to_end(compute_steps(system, frame, settings), progress)


def run_to_end(steps, progress=None):
    """Drive a progress generator (yields ``(done, total)``, returns its result) to the end.

    Parameters
    ----------
    steps : generator
        Yields ``(done, total)`` pairs and returns a value.
    progress : callable or None, optional
        Called with each ``(done, total)``.

    Returns
    -------
    object
        The generator's return value.
    """
    while True:
        try:
            done, total = next(steps)
        except StopIteration as stop:
            return stop.value
        if progress is not None:
            progress(done, total)


__all__ = ["EnergyResult", "compute", "compute_steps", "prepare_system", "run_to_end", "BONDED_TERMS"]
