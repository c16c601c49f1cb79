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

from energy._kernels.born import born_radii, gb_pair_table
from energy._kernels.csr import interleaved_rows
from energy.errors import SettingsError
from energy.model.settings import EnergySettings
from energy.model.system import MolecularSystem
from energy.terms.born_parameters import GBN2_NECK_CUT, BornParameters, born_parameters
from energy.units import COULOMB_CONSTANT

#: ACE surface tension, kcal/mol/A^2 (OpenMM's 2.25936 kJ/mol/nm^2 = 0.0054 kcal/mol/A^2) and
#: the solvent probe radius, A (Schaefer, Bartels & Karplus 1998, in OpenMM's form).
ACE_SURFACE_TENSION = 0.0054
ACE_PROBE_RADIUS = 1.4
#: The GB pair sums are gathered in a dense residue table (8 n^2 bytes): at most this many residues.
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


def compute_born_radii(params: BornParameters, positions: np.ndarray, cutoff_angstrom: float | None) -> np.ndarray:
    """Effective Born radii of every atom (the many-body descreening integral over the whole system).

    Parameters
    ----------
    params : BornParameters
        The model's per-atom parameters.
    positions : (n_atoms, 3) float64
        Coordinates, A.
    cutoff_angstrom : float or None
        Atom pairs at or beyond it leave the integral (None: all pairs).

    Returns
    -------
    (n_atoms,) float64
        Born radii, A.
    """
    cutoff2 = math.inf if cutoff_angstrom is None else cutoff_angstrom ** 2
    # a writable C-contiguous copy: one compiled signature whatever the frame's array flags
    return born_radii(np.array(positions, dtype=np.float64, order="C"), params.rho, params.scaled_rho,
                      params.radius, params.alpha, params.beta, params.gamma, params.neck_index,
                      params.neck_m0, params.neck_d0, params.neck_scale, GBN2_NECK_CUT, cutoff2)


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
                       residue_order, params: BornParameters | None = None) -> SolvationResult:
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
        of the system for ``settings.implicit_solvent``; a topology's own radii otherwise).

    Returns
    -------
    SolvationResult
        Per-atom and per-residue-pair energies, kcal/mol.

    Raises
    ------
    SettingsError
        If the system has more than :data:`MAX_RESIDUES` residues.
    """
    if system.n_residues > MAX_RESIDUES:
        raise SettingsError(f"implicit solvent is limited to {MAX_RESIDUES} residues (this system has "
                            f"{system.n_residues}); remove explicit water and ions first")
    params = params if params is not None else born_parameters(system, settings.implicit_solvent)
    rc = settings.cutoff_angstrom
    born = compute_born_radii(params, positions, rc)
    self_polar = self_energies(system.charges, born, settings)
    nonpolar = ace_energies(params.radius, born) if settings.nonpolar == "ace" else np.zeros(system.n_atoms)
    order = residue_order.atoms
    n_res = system.n_residues
    table = gb_pair_table(np.ascontiguousarray(positions[order], np.float64),
                          np.ascontiguousarray(system.charges[order], np.float64),
                          np.ascontiguousarray(born[order]),
                          np.ascontiguousarray(residue_order.ptr[:-1], np.int64),
                          np.ascontiguousarray(residue_order.ptr[1:], np.int64),
                          np.ascontiguousarray(interleaved_rows(0, n_res), np.int64),
                          COULOMB_CONSTANT, settings.dielectric, settings.solvent_dielectric,
                          settings.kappa_per_angstrom, math.inf if rc is None else rc * rc,
                          0.0 if rc is None else 1.0 / rc)
    diagonal = np.bincount(system.resindex, self_polar, minlength=n_res)
    table[np.arange(n_res), np.arange(n_res)] += diagonal
    pi, pj = np.nonzero(table)
    values = table[pi, pj]
    return SolvationResult(born, self_polar, nonpolar, pi, pj, values,
                           float(values.sum()), float(nonpolar.sum()))
