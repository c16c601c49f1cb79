"""Implicit-solvent terms: generalized Born polar solvation and the ACE nonpolar term.

``solvation_polar`` is a double sum over atom pairs with the self terms included: each pair
term goes to its residue pair, each self term to its residue's diagonal.  ``solvation_nonpolar``
(ACE) is a sum of per-atom terms, on the residue diagonal.  Formulas, constants and sources are
in docs/physics.md ("Implicit solvent").
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from energy._kernels.born import born_radii, born_radii_listed, gb_pair_rows, gb_pair_table, gb_pair_terms
from energy._kernels.cells import search_rows
from energy._kernels.csr import interleaved_rows, symmetric_rows
from energy._kernels.neighbors import residue_spheres
from energy.errors import SettingsError
from energy.model.settings import EnergySettings
from energy.model.system import MolecularSystem
from energy.terms.born_parameters import GBN2_NECK_CUT, BornParameters, born_parameters
from energy.units import COULOMB_CONSTANT

#: ACE surface tension, kcal/mol/A^2 (OpenMM's 2.25936 kJ/mol/nm^2 = 0.0054 kcal/mol/A^2) and
#: the solvent probe radius, A (Schaefer, Bartels & Karplus 1998, in OpenMM's form).
ACE_SURFACE_TENSION = 0.0054
ACE_PROBE_RADIUS = 1.4
#: Without a cutoff the GB pair sums are gathered in a dense residue table (8 n^2 bytes): at most
#: this many residues.  With a cutoff they follow the residue pairs of the cell grid (no limit).
MAX_RESIDUES = 6000


@dataclass(frozen=True)
class SolvationResult:
    """One evaluation of the implicit-solvent terms.

    ``born_radius``, ``self_polar``, ``nonpolar``: (n_atoms,) per atom (A, kcal/mol, kcal/mol);
    ``pair_i``, ``pair_j``, ``pair_polar``: residue pairs (i <= j) with a nonzero GB pair sum and
    that sum (kcal/mol); ``polar_total``, ``nonpolar_total`` kcal/mol.
    """

    born_radius: np.ndarray
    self_polar: np.ndarray
    nonpolar: np.ndarray
    pair_i: np.ndarray
    pair_j: np.ndarray
    pair_polar: np.ndarray
    polar_total: float
    nonpolar_total: float


def compute_born_radii(params: BornParameters, positions: np.ndarray, cutoff_angstrom: float | None,
                       residue_order=None, partners=None) -> np.ndarray:
    """Effective Born radii of every atom (the many-body descreening integral over the whole system).

    Parameters
    ----------
    params : BornParameters
        The model's per-atom parameters.
    positions : (n_atoms, 3) float64
        Coordinates, A.
    cutoff_angstrom : float or None
        Atom pairs at or beyond it leave the integral (None: all pairs).
    residue_order : ResidueAtoms or None, optional
        The atoms of each residue together; with ``partners``, the integral of an atom runs over
        the atoms of its residue's partners only.
    partners : tuple of (n_res + 1,) int64 and (m,) int32, or None, optional
        ``(partner_ptr, partner_res)`` of :func:`energy._kernels.csr.symmetric_rows`: every residue
        holding an atom within the cutoff of one of residue I's atoms (None: every atom pair is
        visited).

    Returns
    -------
    (n_atoms,) float64
        Born radii, A.
    """
    cutoff2 = math.inf if cutoff_angstrom is None else cutoff_angstrom ** 2
    if partners is None:
        # a writable C-contiguous copy: one compiled signature whatever the frame's array flags
        return born_radii(np.array(positions, dtype=np.float64, order="C"), params.rho, params.scaled_rho,
                          params.radius, params.alpha, params.beta, params.gamma, params.neck_index,
                          params.neck_m0, params.neck_d0, params.neck_scale, GBN2_NECK_CUT, cutoff2)
    order = residue_order.atoms

    def laid_out(a):
        return np.ascontiguousarray(a[order])

    born = born_radii_listed(
        laid_out(np.asarray(positions, np.float64)), laid_out(params.rho), laid_out(params.scaled_rho),
        laid_out(params.radius), laid_out(params.alpha), laid_out(params.beta), laid_out(params.gamma),
        laid_out(params.neck_index), params.neck_m0, params.neck_d0, params.neck_scale, GBN2_NECK_CUT,
        cutoff2, np.ascontiguousarray(residue_order.ptr[:-1], np.int64),
        np.ascontiguousarray(residue_order.ptr[1:], np.int64), partners[0], partners[1])
    out = np.empty_like(born)
    out[order] = born
    return out


def listed_residue_pairs(positions: np.ndarray, residue_order, cutoff_angstrom: float):
    """The residue pairs that can hold an atom pair within the cutoff (no periodic cell): the
    nonbonded terms' cell-grid search on residue spheres.

    Parameters
    ----------
    positions : (n_atoms, 3) float64
        Coordinates, A.
    residue_order : ResidueAtoms
        The atoms of each residue together.
    cutoff_angstrom : float
        Cutoff, A.

    Returns
    -------
    pair_i, pair_j : (m,) int32
        Residue pairs I <= J, sorted, every (I, I) included.
    row_start : (n_res + 1,) int64
        CSR row starts.
    """
    centers, radii = residue_spheres(positions, residue_order, None)
    pair_i, pair_j, row_start, _ = search_rows(centers, radii, cutoff_angstrom, None)
    return pair_i, pair_j, row_start


def frame_born_radii(system: MolecularSystem, positions: np.ndarray, settings: EnergySettings,
                     residue_order) -> np.ndarray:
    """The Born radii of one frame as :func:`solvation_energies` computes them (its model,
    parameters and cutoff), without the energies.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    positions : (n_atoms, 3) float64
        Coordinates, A.
    settings : EnergySettings
        ``implicit_solvent`` set; the cutoff.
    residue_order : ResidueAtoms
        The atoms of each residue together.

    Returns
    -------
    (n_atoms,) float64
        Born radii, A.
    """
    params = born_parameters(system, settings.implicit_solvent)
    rc = settings.cutoff_angstrom
    if rc is None:
        return compute_born_radii(params, positions, None)
    pair_i, pair_j, _ = listed_residue_pairs(positions, residue_order, rc)
    return compute_born_radii(params, positions, rc, residue_order,
                              symmetric_rows(system.n_residues, pair_i, pair_j))


def atom_pair_polar(system: MolecularSystem, positions: np.ndarray, settings: EnergySettings,
                    born: np.ndarray, pairs: np.ndarray) -> np.ndarray:
    """The GB pair term of each atom pair, the atom-level entries a residue pair's
    ``solvation_polar`` sums (with the self terms on the diagonal).

    Parameters
    ----------
    system : MolecularSystem
        The system (charges).
    positions : (n_atoms, 3) float64
        Coordinates, A.
    settings : EnergySettings
        ``implicit_solvent`` set; dielectrics, salt, cutoff.
    born : (n_atoms,) float64
        Born radii of this frame, A.
    pairs : (m, 2) integer
        Atom pairs (a != b).

    Returns
    -------
    (m,) float64
        kcal/mol per pair (0 at or beyond the cutoff).
    """
    pairs = np.asarray(pairs, np.int64).reshape(-1, 2)
    rc = settings.cutoff_angstrom
    return gb_pair_terms(np.ascontiguousarray(positions, np.float64), np.ascontiguousarray(system.charges, np.float64),
                         np.ascontiguousarray(born, np.float64), np.ascontiguousarray(pairs[:, 0]),
                         np.ascontiguousarray(pairs[:, 1]), COULOMB_CONSTANT, settings.dielectric,
                         settings.solvent_dielectric, settings.kappa_per_angstrom,
                         math.inf if rc is None else rc * rc, 0.0 if rc is None else 1.0 / rc)


def self_energies(charges: np.ndarray, born: np.ndarray, settings: EnergySettings) -> np.ndarray:
    """Born self terms -(k/2) (1/eps_in - exp(-kappa B)/eps_out) q^2 / B.

    Parameters
    ----------
    charges : (n,) float64
        Charges, e.
    born : (n,) float64
        Born radii, A.
    settings : EnergySettings
        Solute (``dielectric``) and solvent dielectrics, salt.

    Returns
    -------
    (n,) float64
        kcal/mol per atom.
    """
    screen = 1.0 / settings.dielectric - np.exp(-settings.kappa_per_angstrom * born) / settings.solvent_dielectric
    return -0.5 * COULOMB_CONSTANT * screen * charges * charges / born


def ace_energies(radius: np.ndarray, born: np.ndarray) -> np.ndarray:
    """ACE nonpolar term per atom, 4 pi sigma (R + r_probe)^2 (R / B)^6.

    Parameters
    ----------
    radius : (n,) float64
        Intrinsic radii R, A.
    born : (n,) float64
        Born radii, A.

    Returns
    -------
    (n,) float64
        kcal/mol per atom.
    """
    return (4.0 * math.pi * ACE_SURFACE_TENSION * (radius + ACE_PROBE_RADIUS) ** 2
            * (radius / born) ** 6)


def solvation_energies(system: MolecularSystem, positions: np.ndarray, settings: EnergySettings,
                       residue_order, params: BornParameters | None = None,
                       residue_pairs=None) -> SolvationResult:
    """Born radii, self terms, residue-pair GB sums and the nonpolar term of one frame.

    Parameters
    ----------
    system : MolecularSystem
        The system (charges, elements, bonds, residues).
    positions : (n_atoms, 3) float64
        Coordinates, A.
    settings : EnergySettings
        ``implicit_solvent`` set; dielectrics, salt, cutoff, ``nonpolar``.
    residue_order : ResidueAtoms
        The atoms of each residue together (``atoms``, ``ptr``), from the pipeline.
    params : BornParameters or None, optional
        The GB parameters to use (None: :func:`~energy.terms.born_parameters.born_parameters`
        of the system for ``settings.implicit_solvent``, which takes an Amber topology's own radii).
    residue_pairs : tuple or None, optional
        With a cutoff: ``(pair_i, pair_j, row_start)``, the non-periodic cell-grid residue pairs of
        this frame for ``settings.cutoff_angstrom`` (the pipeline's nonbonded list; None: searched
        here with :func:`listed_residue_pairs`).  Unused without a cutoff.

    Returns
    -------
    SolvationResult
        Per-atom and per-residue-pair energies, kcal/mol.

    Raises
    ------
    SettingsError
        Without a cutoff, if the system has more than :data:`MAX_RESIDUES` residues.
    """
    rc = settings.cutoff_angstrom
    if rc is None and system.n_residues > MAX_RESIDUES:
        raise SettingsError(f"implicit solvent without a cutoff is limited to {MAX_RESIDUES} residues "
                            f"(this system has {system.n_residues}); use a cutoff, or remove explicit "
                            "water and ions first")
    params = params if params is not None else born_parameters(system, settings.implicit_solvent)
    n_res = system.n_residues
    if rc is not None and residue_pairs is None:
        residue_pairs = listed_residue_pairs(positions, residue_order, rc)
    partners = None if rc is None else symmetric_rows(n_res, residue_pairs[0], residue_pairs[1])
    born = compute_born_radii(params, positions, rc, residue_order, partners)
    self_polar = self_energies(system.charges, born, settings)
    nonpolar = ace_energies(params.radius, born) if settings.nonpolar == "ace" else np.zeros(system.n_atoms)
    order = residue_order.atoms
    laid_out = (np.ascontiguousarray(positions[order], np.float64),
                np.ascontiguousarray(system.charges[order], np.float64),
                np.ascontiguousarray(born[order]),
                np.ascontiguousarray(residue_order.ptr[:-1], np.int64),
                np.ascontiguousarray(residue_order.ptr[1:], np.int64))
    rows = np.ascontiguousarray(interleaved_rows(0, n_res), np.int64)
    constants = (COULOMB_CONSTANT, settings.dielectric, settings.solvent_dielectric, settings.kappa_per_angstrom)
    diagonal = np.bincount(system.resindex, self_polar, minlength=n_res)
    if rc is None:
        table = gb_pair_table(*laid_out, rows, *constants, math.inf, 0.0)
        table[np.arange(n_res), np.arange(n_res)] += diagonal
        pi, pj = np.nonzero(table)
        values = table[pi, pj]
    else:
        pair_i, pair_j, row_start = residue_pairs
        values = gb_pair_rows(*laid_out, pair_j, np.ascontiguousarray(row_start, np.int64), rows,
                              *constants, rc * rc, 1.0 / rc)
        # the diagonal (I, I) leads every row of the cell search
        values[row_start[:-1]] += diagonal
        keep = np.flatnonzero(values)
        pi, pj, values = pair_i[keep].astype(np.intp), pair_j[keep].astype(np.intp), values[keep]
    return SolvationResult(born, self_polar, nonpolar, pi, pj, values,
                           float(values.sum()), float(nonpolar.sum()))
