"""Every total is finite or the computation fails, naming the term and the first interaction.

The readers and :func:`energy.io.validation.check_frame` refuse every input known to give a
non-finite energy (non-finite or unbounded parameters, coincident atoms, degenerate cells), so a
non-finite energy that still appears is a bug: :func:`check_finite` raises
:class:`~energy.errors.NonFiniteEnergyError` before any result leaves the pipeline, and the
writers (:mod:`energy.output.report`) refuse non-finite values as a second line of defence.
"""
from __future__ import annotations

import numpy as np

from energy.errors import NonFiniteEnergyError
from energy.terms import registry
from energy.terms.registry import TERMS


def _atoms_text(system, atoms) -> str:
    return ", ".join(f"{int(a) + 1} ({system.atom_label(int(a))})"
                     for a in atoms)


def _first_bad(values) -> int | None:
    bad = np.flatnonzero(~np.isfinite(np.asarray(values, np.float64)))
    return int(bad[0]) if len(bad) else None


def _nonbonded_culprit(system, frame, settings, term: str, interactions, residue_pairs) -> str:
    """The first exception pair, else the first residue pair and its first atom pair, whose
    ``term`` (``coulomb`` or ``lj``) energy is not finite."""
    k = _first_bad(interactions["exceptions"][term])
    if k is not None:
        return f"exception pair {k + 1}: atoms {_atoms_text(system, system.exception_pairs[k])}"
    k = _first_bad(residue_pairs.values[term])
    if k is None:
        return "the sum over pairs overflowed"
    ri, rj = int(residue_pairs.pair_i[k]), int(residue_pairs.pair_j[k])
    where = f"residue pair {system.residues.label(ri)} - {system.residues.label(rj)}"
    from energy.decomposition.atom_pairs import residue_pair_atom_energies
    atoms = residue_pair_atom_energies(system, frame, settings, ri, rj)
    a = _first_bad(getattr(atoms, term))
    if a is not None:
        where += f", atoms {_atoms_text(system, atoms.pairs[a])} at {atoms.distance[a]:.4g} A"
    return where


def check_finite(system, frame, settings, totals: dict, interactions: dict, residue_pairs) -> None:
    """Raise :class:`NonFiniteEnergyError` if a total of ``totals`` is not finite.

    Parameters
    ----------
    system, frame, settings
        The computation's inputs (to name the interaction).
    totals : dict
        Term -> kcal/mol, plus ``total``.
    interactions : dict
        Per-interaction energies of the bonded tables and the exception pairs (as in
        :class:`energy.decomposition.pipeline.EnergyResult`).
    residue_pairs : ResiduePairEnergies
        The decomposition, to find the residue pair of a nonbonded term.
    """
    for term in TERMS:
        if np.isfinite(totals[term]):
            continue
        if term in ("coulomb", "lj"):
            raise NonFiniteEnergyError(term, _nonbonded_culprit(system, frame, settings, term,
                                                                interactions, residue_pairs))
        for name, form in registry.bonded_tables():
            if name != term:
                continue
            k = _first_bad(interactions[form.attr])
            if k is not None:
                table = registry.table_of(system, form)
                raise NonFiniteEnergyError(term, f"{form.attr} entry {k + 1}: atoms "
                                                 f"{_atoms_text(system, table.atoms[k])}")
        raise NonFiniteEnergyError(term, "the sum overflowed")
    if not np.isfinite(totals["total"]):
        raise NonFiniteEnergyError("total", "the sum of the finite term totals overflowed")
