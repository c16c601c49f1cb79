"""Generalized Born solvation of binding in the alanine scan (``tessera hotspots --implicit-solvent``).

The solvation of binding of the A-B complex is ``G_solv(AB) - G_solv(A) - G_solv(B)``, each
``G_solv`` the polar (GB) and nonpolar (ACE) solvation of those atoms alone in the implicit solvent,
with their own Born radii.  A mutant changes it by

    dG = [G_solv(A'B) - G_solv(A')] - [G_solv(AB) - G_solv(A)]        (residue on side A)

(``G_solv(B)`` cancels): the A-B interaction's solvation plus the change in the mutated partner's
own solvation.  Born radii are many-body (every atom descreens every other, and without a cutoff
every radius depends on every atom), so the two mutated sets are evaluated exactly, in full, for
each mutant (two O(n^2) passes: the complex and the mutated partner); the wild type's three once.
The per-atom GB parameters of a mutant's kept atoms are the wild type's, those of an ALA
template's rebuilt atoms come from :func:`energy.terms.born_parameters.born_parameters` of the
truncated model (:func:`template_born_parameters`).  Conventions in docs/physics.md, "Alanine scan".
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np

from energy._kernels.born import gb_pair_table
from energy._kernels.csr import interleaved_rows
from energy.errors import EnergyError, SettingsError
from energy.model.settings import EnergySettings
from energy.model.system import Frame, MolecularSystem
from energy.terms.born_parameters import BornParameters, born_parameters, neck_tables
from energy.terms.solvation import MAX_RESIDUES, ace_energies, compute_born_radii, self_energies
from energy.units import COULOMB_CONSTANT

#: The registry's many-body solvation terms the scan adds with implicit solvent.
SOLVATION_TERMS = ("solvation_polar", "solvation_nonpolar")


def _per_atom_fields(params: BornParameters) -> list:
    n = len(params.radius)
    return [f.name for f in dataclasses.fields(params)
            if isinstance(getattr(params, f.name), np.ndarray) and getattr(params, f.name).shape == (n,)
            and f.name != "neck_index"]


def joined_parameters(parts) -> BornParameters:
    """GB parameters of atoms taken from several parameter sets, in the order given.

    Parameters
    ----------
    parts : sequence of (BornParameters, (k,) intp)
        Parameter sets of one model and the rows taken from each.

    Returns
    -------
    BornParameters
        Per-atom arrays concatenated; the neck tables (GBn2) rebuilt for the joined radii by
        :func:`~energy.terms.born_parameters.neck_tables` (each entry depends only on its two
        radii, so the values are those of the sets they came from).
    """
    first = parts[0][0]
    names = _per_atom_fields(first)
    values = {name: np.concatenate([np.asarray(getattr(p, name))[np.asarray(rows, np.intp)] for p, rows in parts])
              for name in names}
    if first.neck_scale != 0.0:
        index, m0, d0 = neck_tables(values["radius"])
    else:
        index, m0, d0 = np.zeros(len(values["radius"]), np.int64), first.neck_m0, first.neck_d0
    return dataclasses.replace(first, **values, neck_index=index, neck_m0=m0, neck_d0=d0)


def solvation_totals(params: BornParameters, positions, charges, resindex, settings: EnergySettings) -> dict:
    """Polar and nonpolar solvation of a set of atoms alone in the implicit solvent.

    Parameters
    ----------
    params : BornParameters
        GB parameters of the k atoms.
    positions : (k, 3) float64
        Coordinates, A.
    charges : (k,) float64
        Charges, e.
    resindex : (k,) intp
        Residue of each atom (groups the pair sums; any labels that keep a residue's atoms together).
    settings : EnergySettings
        ``implicit_solvent`` set; dielectrics, salt, cutoff, ``nonpolar``.

    Returns
    -------
    dict
        ``solvation_polar`` (self terms plus every GB pair) and ``solvation_nonpolar`` (ACE, or 0),
        kcal/mol.

    Raises
    ------
    SettingsError
        If the atoms span more than :data:`~energy.terms.solvation.MAX_RESIDUES` residues (the GB
        pair sums are gathered in a dense residue table, as in the energy scan).
    """
    if len(np.unique(resindex)) > MAX_RESIDUES:
        raise SettingsError(f"implicit solvent is limited to {MAX_RESIDUES} residues (the two selections "
                            f"hold {len(np.unique(resindex))}); remove explicit water and ions from them first")
    x = np.ascontiguousarray(positions, np.float64)
    q = np.ascontiguousarray(charges, np.float64)
    rc = settings.cutoff_angstrom
    born = compute_born_radii(params, x, rc)
    polar = float(self_energies(q, born, settings).sum())
    order = np.argsort(np.asarray(resindex), kind="stable")
    groups = np.asarray(resindex)[order]
    starts = np.flatnonzero(np.r_[True, groups[1:] != groups[:-1]]) if len(groups) else np.zeros(0, np.intp)
    ends = np.r_[starts[1:], len(groups)]
    table = gb_pair_table(np.ascontiguousarray(x[order]), np.ascontiguousarray(q[order]),
                          np.ascontiguousarray(born[order]), np.ascontiguousarray(starts, np.int64),
                          np.ascontiguousarray(ends, np.int64),
                          np.ascontiguousarray(interleaved_rows(0, len(starts)), np.int64),
                          COULOMB_CONSTANT, settings.dielectric, settings.solvent_dielectric,
                          settings.kappa_per_angstrom, math.inf if rc is None else rc * rc,
                          0.0 if rc is None else 1.0 / rc)
    polar += float(table.sum())
    nonpolar = float(ace_energies(params.radius, born).sum()) if settings.nonpolar == "ace" else 0.0
    return {"solvation_polar": polar, "solvation_nonpolar": nonpolar}


class BindingSolvation:
    """The solvation of binding of A and B, and its change for each alanine mutant.

    Parameters
    ----------
    system : MolecularSystem
        The wild type.
    frame : Frame
        Its coordinates, A (implicit solvent is not periodic: no minimum image).
    settings : EnergySettings
        ``implicit_solvent`` set.
    atoms_a, atoms_b : (n_a,), (n_b,) intp
        The two sides (disjoint, whole residues).
    """

    def __init__(self, system: MolecularSystem, frame: Frame, settings: EnergySettings, atoms_a, atoms_b):
        if settings.implicit_solvent is None:
            raise EnergyError("binding solvation needs implicit-solvent settings")
        self.system, self.frame, self.settings = system, frame, settings
        self.params = born_parameters(system, settings.implicit_solvent)
        self.atoms = {"A": np.asarray(atoms_a, np.intp), "B": np.asarray(atoms_b, np.intp)}
        self.side_energy = {s: self._of(a) for s, a in self.atoms.items()}
        self.complex_energy = self._of(np.concatenate([self.atoms["A"], self.atoms["B"]]))
        self.wild_type = {t: self.complex_energy[t] - self.side_energy["A"][t] - self.side_energy["B"][t]
                          for t in SOLVATION_TERMS}

    def _of(self, atoms) -> dict:
        s = self.system
        return solvation_totals(joined_parameters([(self.params, atoms)]), self.frame.positions[atoms],
                                s.charges[atoms], s.resindex[atoms], self.settings)

    def delta(self, model, side: str, model_parameters: BornParameters | None = None) -> dict:
        """dG of binding solvation when one residue becomes ``model``.

        Parameters
        ----------
        model : ResidueModel
            The residue's alanine (its atoms, positions and charges).
        side : str
            ``"A"`` or ``"B"``: the side the residue is on.
        model_parameters : BornParameters or None, optional
            GB parameters of the model's atoms, in its order (None: the wild type's parameters of
            each atom's origin, which must all be wild-type atoms: the switched-off method).

        Returns
        -------
        dict
            Term (``solvation_polar``, ``solvation_nonpolar``) -> dG, kcal/mol.

        Raises
        ------
        EnergyError
            If a model with rebuilt atoms comes without their parameters.
        """
        s = self.system
        if model_parameters is None:
            if (model.origin < 0).any():
                raise EnergyError(f"{s.residues.label(model.residue)}: the rebuilt atoms of its alanine "
                                  "have no generalized-Born parameters")
            model_parameters = joined_parameters([(self.params, model.origin)])
        own = self.atoms[side]
        rest = own[s.resindex[own] != model.residue]  # the mutated side without the residue
        other = self.atoms["B" if side == "A" else "A"]
        mutated = self._mutated(rest, model, model_parameters)
        complex_ = self._mutated(np.concatenate([rest, other]), model, model_parameters)
        return {t: (complex_[t] - mutated[t]) - (self.complex_energy[t] - self.side_energy[side][t])
                for t in SOLVATION_TERMS}

    def _mutated(self, atoms, model, model_parameters) -> dict:
        s = self.system
        params = joined_parameters([(self.params, atoms), (model_parameters, np.arange(len(model.origin)))])
        return solvation_totals(params, np.concatenate([self.frame.positions[atoms], model.positions]),
                                np.concatenate([s.charges[atoms], model.charges]),
                                np.concatenate([s.resindex[atoms], np.full(len(model.origin), model.residue)]),
                                self.settings)


def template_born_parameters(truncation, residues, model: str) -> dict:
    """GB parameters of the ALA-template models' atoms, from the truncated model as one system.

    Parameters
    ----------
    truncation : Truncation
        The truncated model and its OpenMM system (:func:`energy.analysis.alanine_models.parameterised_truncation`).
    residues : sequence of int
        Residue indices (0-based) whose models are needed.
    model : str
        ``obc2`` or ``gbn2``.

    Returns
    -------
    dict
        Residue index -> BornParameters of its model's atoms, in the order of
        :func:`~energy.analysis.alanine_models.template_models` (the residue's atoms in the
        truncated topology).
    """
    truncated = truncation.system
    params = born_parameters(truncated, model)
    return {int(r): joined_parameters([(params, np.flatnonzero(truncated.resindex == int(r)))]) for r in residues}
