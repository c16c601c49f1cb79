"""The alanine scan with generalized Born solvation (issue 19, ``--implicit-solvent``).

The scan's solvation terms are dG_bind = G_solv(AB) - G_solv(A) - G_solv(B) of the mutant minus the
wild type's.  Each mutant checked here is written out as PDB files (the complex, each partner
alone; the wild type likewise) and recomputed from scratch:

* by OpenMM 8.6: ``ForceField('amber14-all.xml', 'amber14/tip3p.xml', 'implicit/obc2.xml')``
  (and ``implicit/gbn2.xml``) ``createSystem`` on each written PDB (read by OpenMM's ``PDBFile``),
  Reference platform, the CustomGBForce's force group: ``sasaMethod=None`` gives the polar part,
  ``'ACE'`` minus that the nonpolar part; agreement 1e-4 relative on each mutant's dG;
* by the project's own full pipeline (``compute`` on each written PDB loaded through the built-in
  route, every atom's Born radius recomputed): agreement 1e-6 kcal/mol.

The switched-off method (PSF route) is checked against OpenMM's CustomGBForce of the wild type
rebuilt with only the kept atoms as particles (the removed atoms neither carry charge nor
descreen).
"""
from __future__ import annotations

import functools

import numpy as np
import openmm
import pytest
from data import SCENARIO_FIXED_PDB
from openmm import app, unit

from energy.analysis.alanine_models import switched_off_model, truncated_topology
from energy.analysis.hotspot_setup import scan_loaded
from energy.analysis.hotspots import alanine_scan
from energy.decomposition.pipeline import compute
from energy.io.builtin import DEFAULT_FORCE_FIELD
from energy.io.loaders import load_system
from energy.io.preparation import prepared_pdb_text
from energy.io.selection import select_atoms
from energy.model.settings import EnergySettings

A, B = "segid A", "segid B"
SOLVATION = ("solvation_polar", "solvation_nonpolar")
KCAL = unit.kilocalorie_per_mole
# Salt-bridge Glu (A) and Lys (B), the Trp, the buried Ile, a C-terminal residue.
LABELS = ("A:GLU7", "B:LYS15", "B:TRP33", "B:ILE27", "A:GLN64")


@pytest.fixture(scope="module")
def fixed():
    return load_system(SCENARIO_FIXED_PDB)


def _index(system, label):
    return next(i for i in range(system.n_residues) if system.residues.label(i) == label)


def _write_parts(topology, positions, folder, stem):
    """The complex and each chain alone as PDB files; returns {"AB", "A", "B"} -> path."""
    paths = {}
    for part, keep in (("AB", {"A", "B"}), ("A", {"A"}), ("B", {"B"})):
        modeller = app.Modeller(topology, positions / 10.0)
        modeller.delete([c for c in modeller.topology.chains() if c.id not in keep])
        pos = np.array(modeller.positions.value_in_unit(unit.nanometer)) * 10.0
        path = folder / f"{stem}_{part}.pdb"
        path.write_text(prepared_pdb_text(modeller.topology, pos))
        paths[part] = str(path)
    return paths


def _binding(energies):
    return {t: energies["AB"][t] - energies["A"][t] - energies["B"][t] for t in energies["AB"]}


def _openmm_solvation(path, model, cutoff=None):
    """OpenMM's polar (GB) and nonpolar (ACE) solvation of a written PDB, kcal/mol."""
    pdb = app.PDBFile(path)
    ff = app.ForceField(*DEFAULT_FORCE_FIELD, f"implicit/{model}.xml")
    out = {}
    for sa in ("ACE", None):
        kw = dict(nonbondedMethod=app.NoCutoff if cutoff is None else app.CutoffNonPeriodic,
                  constraints=None, removeCMMotion=False, sasaMethod=sa)
        if cutoff is not None:
            kw["nonbondedCutoff"] = cutoff / 10.0 * unit.nanometer
        system = ff.createSystem(pdb.topology, **kw)
        for g, force in enumerate(system.getForces()):
            force.setForceGroup(g)
        gb = next(g for g, f in enumerate(system.getForces()) if isinstance(f, openmm.CustomGBForce))
        ctx = openmm.Context(system, openmm.VerletIntegrator(1.0), openmm.Platform.getPlatformByName("Reference"))
        ctx.setPositions(pdb.positions)
        out[sa] = ctx.getState(getEnergy=True, groups={gb}).getPotentialEnergy().value_in_unit(KCAL)
    return {"solvation_polar": out[None], "solvation_nonpolar": out["ACE"] - out[None]}


@functools.cache
def _loaded(path):
    return load_system(path)


def _ours(path, settings):
    loaded = _loaded(path)
    totals = compute(loaded.system, loaded.frame, settings).totals
    return {t: totals[t] for t in ("coulomb", "lj", *SOLVATION)}


@pytest.fixture(scope="module")
def written(fixed, tmp_path_factory):
    """The wild type's and each mutant's complex and chains as PDB files."""
    folder = tmp_path_factory.mktemp("gb_mutants")
    top, pos = fixed.prepared_topology, fixed.frame.positions
    out = {"wild": _write_parts(top, pos, folder, "wild")}
    for label in LABELS:
        r = _index(fixed.system, label)
        mtop, mpos, _ = truncated_topology(top, pos, [r])
        out[label] = _write_parts(mtop, mpos, folder, f"mutant_{r}")
    return out


@pytest.mark.parametrize("model", ["obc2", "gbn2"])
def test_solvation_delta_matches_openmm_on_the_written_mutants(fixed, written, model):
    settings = EnergySettings(implicit_solvent=model)
    scan = scan_loaded(fixed, settings, A, B)
    wild = _binding({p: _openmm_solvation(path, model) for p, path in written["wild"].items()})
    for t in SOLVATION:
        assert scan.wild_type[t] == pytest.approx(wild[t], rel=1e-4), t
    for label in LABELS:
        k = list(scan.label).index(label)
        mutant = _binding({p: _openmm_solvation(path, model) for p, path in written[label].items()})
        for t in SOLVATION:
            ref = mutant[t] - wild[t]
            assert scan.delta[t][k] == pytest.approx(ref, rel=1e-4), (label, t, scan.delta[t][k], ref)
            assert abs(ref) > 1e-3, (label, t)  # a change that the check can see
    # the salt bridge's desolvation: the polar term opposes the vacuum Coulomb loss
    k = list(scan.label).index("A:GLU7")
    assert scan.delta["coulomb"][k] > 50 and scan.delta["solvation_polar"][k] < -50


@pytest.mark.parametrize("settings", [EnergySettings(implicit_solvent="obc2"),
                                      EnergySettings(implicit_solvent="gbn2", cutoff_angstrom=12.0,
                                                     salt_molar=0.15),
                                      EnergySettings(implicit_solvent="obc2", nonpolar="none",
                                                     dielectric=2.0)],
                         ids=["obc2", "gbn2-cutoff-salt", "obc2-no-ace-eps2"])
def test_every_term_matches_the_full_recomputation_of_the_written_mutants(fixed, written, settings):
    """Every term of dE (Coulomb and LJ of the A-B interaction, both solvation terms) against the
    project's pipeline on the written complex and chains (interaction = E(AB) - E(A) - E(B))."""
    scan = scan_loaded(fixed, settings, A, B)
    assert set(scan.delta) == {"coulomb", "lj", *SOLVATION}
    wild = _binding({p: _ours(path, settings) for p, path in written["wild"].items()})
    for t, v in wild.items():
        assert scan.wild_type[t] == pytest.approx(v, abs=1e-6), t
    for label in LABELS[:3]:
        k = list(scan.label).index(label)
        mutant = _binding({p: _ours(path, settings) for p, path in written[label].items()})
        for t in scan.delta:
            assert scan.delta[t][k] == pytest.approx(mutant[t] - wild[t], abs=1e-6), (label, t)
        pairwise = scan.delta["coulomb"][k] + scan.delta["lj"][k]
        assert scan.removed[k] + scan.rebuilt[k] == pytest.approx(pairwise, abs=1e-9)


def _kept_atoms_gb_energy(omm_system, positions_angstrom, kept):
    """OpenMM's CustomGBForce of ``omm_system`` with only the ``kept`` atoms as particles
    (a new CustomGBForce with the same computed values and energy terms), kcal/mol."""
    gb = next(f for f in omm_system.getForces() if isinstance(f, openmm.CustomGBForce))
    new = openmm.CustomGBForce()
    for k in range(gb.getNumPerParticleParameters()):
        new.addPerParticleParameter(gb.getPerParticleParameterName(k))
    for k in range(gb.getNumGlobalParameters()):
        new.addGlobalParameter(gb.getGlobalParameterName(k), gb.getGlobalParameterDefaultValue(k))
    for k in range(gb.getNumTabulatedFunctions()):
        new.addTabulatedFunction(gb.getTabulatedFunctionName(k), copy_function(gb.getTabulatedFunction(k)))
    for k in range(gb.getNumComputedValues()):
        new.addComputedValue(*gb.getComputedValueParameters(k))
    for k in range(gb.getNumEnergyTerms()):
        new.addEnergyTerm(*gb.getEnergyTermParameters(k))
    new.setNonbondedMethod(gb.getNonbondedMethod())
    for i in kept:
        new.addParticle(gb.getParticleParameters(int(i)))
    system = openmm.System()
    for _ in kept:
        system.addParticle(1.0)
    system.addForce(new)
    ctx = openmm.Context(system, openmm.VerletIntegrator(1.0), openmm.Platform.getPlatformByName("Reference"))
    ctx.setPositions(np.asarray(positions_angstrom)[kept] / 10.0)
    return ctx.getState(getEnergy=True).getPotentialEnergy().value_in_unit(KCAL)


def copy_function(function):
    """A copy of a tabulated function (OpenMM's serializer round trip)."""
    return openmm.XmlSerializer.deserialize(openmm.XmlSerializer.serialize(function))


def test_switched_off_solvation_matches_openmm_without_the_removed_atoms(fixed):
    """Side chain switched off: the atoms beyond CB leave the solvation calculation too.  OpenMM's
    CustomGBForce (implicit/obc2.xml, sasaMethod=None) of the wild type with only the kept atoms
    of A, of B, and of both, for the complex and the mutated chain."""
    system, frame = fixed.system, fixed.frame
    settings = EnergySettings(implicit_solvent="obc2", nonpolar="none")
    atoms_a, atoms_b = select_atoms(system, frame, A), select_atoms(system, frame, B)
    residues = [_index(system, lab) for lab in ("A:GLU7", "B:TRP33")]
    models = {r: switched_off_model(system, frame.positions, r, system.bonds.atoms) for r in residues}
    scan = alanine_scan(system, frame, settings, atoms_a, atoms_b, models)
    ff = app.ForceField(*DEFAULT_FORCE_FIELD, "implicit/obc2.xml")
    omm = ff.createSystem(fixed.prepared_topology, nonbondedMethod=app.NoCutoff, constraints=None,
                          removeCMMotion=False, sasaMethod=None)
    x = frame.positions

    def binding(a, b):
        return (_kept_atoms_gb_energy(omm, x, np.concatenate([a, b])) - _kept_atoms_gb_energy(omm, x, a)
                - _kept_atoms_gb_energy(omm, x, b))
    wild = binding(atoms_a, atoms_b)
    assert scan.wild_type["solvation_polar"] == pytest.approx(wild, rel=1e-4)
    for r in residues:
        k = int(np.flatnonzero(scan.residue == r)[0])
        off = np.setdiff1d(np.flatnonzero(system.resindex == r), models[r].origin)
        a, b = np.setdiff1d(atoms_a, off), np.setdiff1d(atoms_b, off)
        ref = binding(a, b) - wild
        assert scan.delta["solvation_polar"][k] == pytest.approx(ref, rel=1e-4), system.residues.label(r)
        assert abs(ref) > 0.1


def test_scenario_gb_scan_matches_the_recorded_facts(fixed):
    """samples/scenario/scenario.json "hotspots_gb", computed by samples/scenario_hotspots.py --gb
    from OpenMM's own systems (ForceField + implicit/obc2.xml, CustomGBForce) without Tessera's
    engine: per-term dE of the named residues, their ranks, the count above the marker; and the
    clashing Trp on the clashing model."""
    import json
    import os

    from data import SCENARIO_CLASH_PDB, SCENARIO_DIR
    facts = json.load(open(os.path.join(SCENARIO_DIR, "scenario.json")))
    gb = facts["hotspots_gb"]
    scan = scan_loaded(fixed, EnergySettings(implicit_solvent="obc2"), A, B)
    labels = list(scan.label)
    assert len(scan) == gb["fixed"]["n_scanned"] and int(scan.is_hot.sum()) == gb["fixed"]["n_hot"]
    assert labels[:5] == gb["fixed"]["top5"]
    for label, terms in gb["fixed"]["terms_kcal_mol"].items():
        k = labels.index(label)
        assert k + 1 == gb["fixed"]["rank"][label]
        for t, v in terms.items():
            assert scan.delta[t][k] == pytest.approx(v, abs=0.002), (label, t)
    clash = scan_loaded(load_system(SCENARIO_CLASH_PDB), EnergySettings(implicit_solvent="obc2"), A, B)
    trp = facts["clash"][0]
    k = list(clash.label).index(trp)
    assert k == len(clash) - 1  # still the most favourable change: the removed clash dominates
    assert clash.total[k] == pytest.approx(gb["clash"]["delta_kcal_mol"][trp], abs=0.002)
