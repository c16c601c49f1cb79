"""The built-in force-field route checked term by term against OpenMM 8.6 (Reference platform).

Reference: OpenMM's own ForceField('amber14-all.xml', 'amber14/tip3p.xml').createSystem on the
very topology our loader matched, evaluated by tests/openmm_reference.py.  Agreement rule of the
project: 1e-4 relative or 1e-3 kcal/mol absolute, per term.
"""
from __future__ import annotations

import MDAnalysis as mda
import numpy as np
import pytest
from data import ADK_OPEN_PDB, OPENMM_TEST_PDB
from openmm import app
from openmm_reference import assert_close, openmm_force_energies

from energy.decomposition.pipeline import compute
from energy.io.builtin import DEFAULT_FORCE_FIELD, load_builtin
from energy.model.settings import EnergySettings


def _openmm_system(topology, method, cutoff_nm=None, switch_nm=None, rf_dielectric=78.5):
    ff = app.ForceField(*DEFAULT_FORCE_FIELD)
    kwargs = dict(nonbondedMethod=method, constraints=None, rigidWater=False, removeCMMotion=False)
    if cutoff_nm is not None:
        kwargs["nonbondedCutoff"] = cutoff_nm
    system = ff.createSystem(topology, **kwargs)
    for force in system.getForces():
        if force.__class__.__name__ == "NonbondedForce":
            force.setUseDispersionCorrection(False)  # ours has no long-range LJ correction
            force.setReactionFieldDielectric(rf_dielectric)
            if switch_nm is not None:
                force.setUseSwitchingFunction(True)
                force.setSwitchingDistance(switch_nm)
    return system


def _compare(ours, ref):
    assert_close(ours.totals["bond"], ref["HarmonicBondForce"], "bond")
    assert_close(ours.totals["angle"], ref["HarmonicAngleForce"], "angle")
    # OpenMM keeps Amber's proper and improper torsions in one PeriodicTorsionForce.
    assert_close(ours.totals["dihedral"] + ours.totals["improper"], ref["PeriodicTorsionForce"],
                 "dihedral + improper")
    assert_close(ours.totals["coulomb"], ref["coulomb"], "coulomb")
    assert_close(ours.totals["lj"], ref["lj"], "lj")
    assert ours.totals["urey_bradley"] == 0.0 and ours.totals["cmap"] == 0.0  # Amber 14 has neither


@pytest.fixture(scope="module")
def solvated():
    """OpenMM's test.pdb: protein with hydrogens in a periodic water box."""
    system, frame, topology, _ = load_builtin(OPENMM_TEST_PDB)
    return system, frame, topology


def test_pdb_with_hydrogens_no_cutoff(solvated):
    system, frame, topology = solvated
    ours = compute(system, frame, EnergySettings())
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(ours, ref)
    assert system.n_atoms == 8867 and len(system.periodic_impropers) > 0


def test_periodic_cutoff_reaction_field(solvated):
    system, frame, topology = solvated
    ours = compute(system, frame, EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field"))
    assert ours.periodic
    ref = openmm_force_energies(_openmm_system(topology, app.CutoffPeriodic, 1.0), frame.positions)
    _compare(ours, ref)


def test_nonperiodic_cutoff_reaction_field_with_switch(solvated):
    system, frame, topology = solvated
    settings = EnergySettings(cutoff_angstrom=9.0, switch_angstrom=7.5, electrostatics="reaction-field",
                              solvent_dielectric=60.0, use_periodic=False)
    ours = compute(system, frame, settings)
    assert not ours.periodic
    ref = openmm_force_energies(_openmm_system(topology, app.CutoffNonPeriodic, 0.9, 0.75, 60.0),
                                frame.positions)
    _compare(ours, ref)


def test_pdb_without_hydrogens_gets_them_added(tmp_path):
    """adk_open.pdb (MDAnalysisTests) stripped of its hydrogens, then --add-hydrogens at pH 7."""
    u = mda.Universe(ADK_OPEN_PDB)
    heavy = u.select_atoms("not name H*")
    stripped = tmp_path / "adk_heavy.pdb"
    heavy.write(str(stripped))
    system, frame, topology, _ = load_builtin(str(stripped), add_hydrogens=True)
    n_h = sum(1 for e in system.elements if e == "H")
    assert n_h > 1500 and system.n_atoms == len(heavy) + n_h
    ours = compute(system, frame, EnergySettings())
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(ours, ref)


def test_total_matches_openmm_potential(solvated):
    """The sum over all terms equals OpenMM's total potential energy."""
    system, frame, topology = solvated
    ours = compute(system, frame, EnergySettings())
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    total_ref = sum(v for k, v in ref.items() if k not in ("coulomb", "lj"))
    assert_close(ours.totals["total"], total_ref, "total")
    assert np.isclose(ours.residue_pairs.total.sum(), ours.totals["total"], rtol=1e-10)
