"""OpenMM (the outside reference) computing energies term by term, in kcal/mol.

Each force gets its own force group; the NonbondedForce is evaluated twice more, once with all
charges (and exception charge products) zeroed to get Lennard-Jones alone, and Coulomb is the
difference.  The Reference platform is used: slow but exact double precision.
"""
from __future__ import annotations

import copy

import numpy as np
import openmm
from openmm import unit

KCAL = unit.kilocalorie_per_mole


def _energy(system, positions_nm, groups=None, box=None):
    ctx = openmm.Context(system, openmm.VerletIntegrator(1.0),
                         openmm.Platform.getPlatformByName("Reference"))
    if box is not None:
        ctx.setPeriodicBoxVectors(*box)
    ctx.setPositions(positions_nm)
    kwargs = {"groups": groups} if groups is not None else {}
    return ctx.getState(getEnergy=True, **kwargs).getPotentialEnergy().value_in_unit(KCAL)


def zero_charges(nb: openmm.NonbondedForce) -> None:
    """Set every charge and exception charge product of ``nb`` to zero (LJ alone remains)."""
    for i in range(nb.getNumParticles()):
        _, s, e = nb.getParticleParameters(i)
        nb.setParticleParameters(i, 0.0, s, e)
    for k in range(nb.getNumExceptions()):
        i, j, _, s, e = nb.getExceptionParameters(k)
        nb.setExceptionParameters(k, i, j, 0.0, s, e)


def openmm_force_energies(system: openmm.System, positions_angstrom) -> dict:
    """Energy of each force class of ``system`` (kcal/mol); NonbondedForce split into
    ``coulomb`` and ``lj``.  ``positions_angstrom`` is (n, 3)."""
    system = copy.deepcopy(system)
    pos = np.asarray(positions_angstrom) / 10.0
    names = {}
    for g, force in enumerate(system.getForces()):
        force.setForceGroup(g)
        names[g] = force.__class__.__name__
    out = {}
    for g, name in names.items():
        if name == "CMMotionRemover":
            continue
        out[name] = out.get(name, 0.0) + _energy(system, pos, {g})
    nb_groups = [g for g, n in names.items() if n == "NonbondedForce"]
    if nb_groups:
        g = nb_groups[0]
        zero_charges(system.getForce(g))
        out["lj"] = _energy(system, pos, {g})
        out["coulomb"] = out["NonbondedForce"] - out["lj"]
    return out


def assert_close(ours: float, reference: float, what: str, rel=1e-4, abs_=1e-3):
    """The issue's agreement rule: 1e-4 relative or 1e-3 kcal/mol absolute."""
    diff = abs(ours - reference)
    assert diff <= abs_ or diff <= rel * abs(reference), (
        f"{what}: ours {ours:.6f} vs OpenMM {reference:.6f} kcal/mol (diff {diff:.3g})")
