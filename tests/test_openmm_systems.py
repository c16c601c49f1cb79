"""The general OpenMM-System converter against OpenMM itself (Reference platform, OpenMM 8.6).

Inputs: OpenMM's own test.pdb (protein with hydrogens; its waters within 4 A of the protein kept)
under force fields bundled with OpenMM: CHARMM36 (charmm36.xml, charmm36_2024.xml with its NBFIX
pairs, e.g. Arg NC2 - carboxylate OC), Amber 19 + OPC (a 4-site water with one virtual site per
molecule).  References: tests/openmm_terms.py (OpenMM per force group, and a brute-force numpy sum
over OpenMM's own parameters for the residue pairs).  Agreement rule of the project: 1e-4
relative or 1e-3 kcal/mol absolute.
"""
from __future__ import annotations

import copy
import os

import numpy as np
import openmm
import pytest
from data import OPENMM_TEST_PDB
from openmm import app, unit
from openmm_reference import assert_close
from openmm_terms import (
    assert_matrices_close,
    brute_force_residue_pairs,
    dense_pairs,
    openmm_site_positions,
    reference_terms,
)

from energy.decomposition.pipeline import compute
from energy.errors import UnsupportedForceError
from energy.io.builtin import load_builtin
from energy.io.forcefields import force_field_files
from energy.io.openmm_system import system_from_openmm
from energy.model.settings import EnergySettings
from energy.model.system import Frame


def _compare_terms(ours, ref):
    it = ours.interactions
    assert_close(ours.totals["bond"], ref["bond"], "bond")
    assert_close(ours.totals["urey_bradley"], ref["urey_bradley"], "Urey-Bradley")
    assert_close(ours.totals["angle"], ref["angle"], "angle")
    assert_close(float(it["dihedrals"].sum() + it["periodic_impropers"].sum()), ref["torsion"],
                 "PeriodicTorsionForce (dihedral + periodic improper)")
    assert_close(float(it["impropers"].sum()), ref["harmonic_improper"], "harmonic improper (CustomTorsionForce)")
    assert_close(ours.totals["cmap"], ref["cmap"], "CMAP")
    assert_close(ours.totals["coulomb"], ref["coulomb"], "coulomb")
    assert_close(ours.totals["lj"], ref["lj"], "lj")


@pytest.fixture(scope="module")
def small_solvated():
    """test.pdb's protein and its waters within 4 A (about 1,370 atoms), as an OpenMM Modeller."""
    pdb = app.PDBFile(OPENMM_TEST_PDB)
    x = np.asarray(pdb.positions.value_in_unit(unit.angstrom))
    protein = [a.index for a in pdb.topology.atoms() if a.residue.name not in ("HOH", "Cl")]
    far = []
    for res in pdb.topology.residues():
        if res.name == "Cl":
            far.append(res)
        elif res.name == "HOH":
            o = next(a.index for a in res.atoms() if a.element.symbol == "O")
            if np.min(np.linalg.norm(x[protein] - x[o], axis=1)) >= 4.0:
                far.append(res)
    modeller = app.Modeller(pdb.topology, pdb.positions)
    modeller.delete(far)
    modeller.topology.setPeriodicBoxVectors(None)
    return modeller


_BUILT = {}


def _built(modeller, files):
    """OpenMM's System of the small solvated protein under ``files`` (built once per module);
    a copy each time, so a test may change it."""
    if files not in _BUILT:
        ff = app.ForceField(*files)
        m = app.Modeller(modeller.topology, modeller.positions)
        if any(f.endswith("opc.xml") for f in files):
            m.addExtraParticles(ff)  # the M site of every OPC water
        omm = ff.createSystem(m.topology, nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False,
                              removeCMMotion=False)
        _BUILT[files] = (omm, m.topology, np.asarray(m.positions.value_in_unit(unit.angstrom)))
    omm, top, x = _BUILT[files]
    return copy.deepcopy(omm), top, x.copy()


CHARMM_TABLE = lambda a, b: (a, b)  # noqa: E731  ForceField's LJ generator: acoef/r^12 - bcoef/r^6


def _charmm_pair(params):  # ForceField's 1-4 companion "4*scale*epsilon*((sigma/r)^12-(sigma/r)^6)", scale 1
    sigma, epsilon = params
    return 4 * epsilon * sigma ** 12, 4 * epsilon * sigma ** 6


@pytest.mark.parametrize("name", ["charmm36", "charmm36_2024"])
def test_charmm36_terms_and_residue_pairs_match_openmm(small_solvated, name):
    omm, top, x = _built(small_solvated, force_field_files(name))
    classes = {f.__class__.__name__ for f in omm.getForces()}
    assert {"CustomNonbondedForce", "CustomBondForce", "CustomTorsionForce", "CMAPTorsionForce"} <= classes
    system = system_from_openmm(omm, top)
    assert len(system.urey_bradley) > 0 and len(system.impropers) > 0 and len(system.cmap) > 0
    frame = Frame(x, None)
    ours = compute(system, frame, EnergySettings())
    _compare_terms(ours, reference_terms(omm, top, x))
    coul, lj = brute_force_residue_pairs(omm, top, x, CHARMM_TABLE, _charmm_pair)
    assert_matrices_close(dense_pairs(ours, "coulomb"), coul, "coulomb residue pairs")
    assert_matrices_close(dense_pairs(ours, "lj"), lj, "lj residue pairs")


def test_charmm36_2024_nbfix_pairs_present_and_used(small_solvated):
    """The NBFIX pairs of charmm36_2024.xml (Arg NC2 - carboxylate OC, epsilon 0.648 kJ/mol, sigma
    0.324 nm in the XML) differ from the combination rule; the engine's table holds them."""
    omm, top, x = _built(small_solvated, force_field_files("charmm36_2024"))
    system = system_from_openmm(omm, top)
    custom = next(f for f in omm.getForces() if f.__class__.__name__ == "CustomNonbondedForce")
    atoms = list(top.atoms())
    nc2 = next(a.index for a in atoms if a.residue.name == "ARG" and a.name == "NH1")
    oc = next(a.index for a in atoms if a.residue.name in ("GLU", "ASP") and a.name in ("OE1", "OD1"))
    ti, tj = system.lj_type[nc2], system.lj_type[oc]
    # charmm36_2024.xml: <NBFixPair class1="NC2" class2="OC" epsilon="0.648..." sigma="0.324..."/>
    assert system.lj_eps[ti, tj] * 4.184 == pytest.approx(0.6481810960000001, rel=1e-9)
    assert system.lj_rmin[ti, tj] / 10 == pytest.approx(2 ** (1 / 6) * 0.3240198637876414, rel=1e-9)
    # its Rmin is not the arithmetic mean of the two types' own (the combination rule)
    assert not np.isclose(system.lj_rmin[ti, tj], (system.lj_rmin[ti, ti] + system.lj_rmin[tj, tj]) / 2)
    assert custom.getNumTabulatedFunctions() == 2


def test_changed_nbfix_entry_is_followed(small_solvated):
    """An A/B table entry changed by hand (a made-up NBFIX between two protein types) gives the LJ
    OpenMM computes with the changed table."""
    omm, top, x = _built(small_solvated, force_field_files("charmm36"))
    custom = next(f for f in omm.getForces() if f.__class__.__name__ == "CustomNonbondedForce")
    nx, ny, a_vals = custom.getTabulatedFunction(0).getFunctionParameters()
    _, _, b_vals = custom.getTabulatedFunction(1).getFunctionParameters()
    a_vals, b_vals = list(a_vals), list(b_vals)
    t1, t2 = 0, 1
    for (p, q) in ((t1, t2), (t2, t1)):
        a_vals[p + nx * q] *= 1.7
        b_vals[p + nx * q] *= 1.3
    custom.getTabulatedFunction(0).setFunctionParameters(nx, ny, a_vals)
    custom.getTabulatedFunction(1).setFunctionParameters(nx, ny, b_vals)
    system = system_from_openmm(omm, top)
    ours = compute(system, Frame(x, None), EnergySettings())
    assert_close(ours.totals["lj"], reference_terms(omm, top, x)["lj"], "lj with a changed A/B entry")


def _amber_table(a, b):  # not used by ForceField systems; Amber/GROMACS readers square acoef
    return a ** 2, b


def test_amber19_opc_virtual_sites_terms_and_residue_pairs(small_solvated):
    omm, top, x = _built(small_solvated, force_field_files("amber19", "opc"))
    system = system_from_openmm(omm, top)
    n_water = sum(1 for r in top.residues() if r.name == "HOH")
    assert system.virtual_sites is not None and len(system.virtual_sites) == n_water
    # the sites' input positions are spoiled: the engine must place them from their parents
    spoiled = x.copy()
    spoiled[system.virtual_sites.site] += 0.37
    ours = compute(system, Frame(spoiled, None), EnergySettings())
    ref = reference_terms(omm, top, spoiled)  # OpenMM's computeVirtualSites places them there
    _compare_terms(ours, ref)
    coul, lj = brute_force_residue_pairs(omm, top, spoiled)
    assert_matrices_close(dense_pairs(ours, "coulomb"), coul, "coulomb residue pairs (OPC)")
    assert_matrices_close(dense_pairs(ours, "lj"), lj, "lj residue pairs (OPC)")
    # a site's interactions belong to its parent's residue
    sites = system.virtual_sites
    assert np.array_equal(system.resindex[sites.site], system.resindex[sites.parents[:, 0]])


def test_site_follows_its_parent_as_openmm_places_it(small_solvated):
    """Moving a parent atom moves its site exactly as OpenMM's Context.computeVirtualSites does."""
    omm, top, x = _built(small_solvated, force_field_files("amber19", "opc"))
    system = system_from_openmm(omm, top)
    sites = system.virtual_sites
    moved = x.copy()
    rng = np.random.default_rng(7)
    moved[sites.parents[:5, 1]] += rng.normal(0, 0.2, (5, 3))  # first hydrogen of five waters
    ours = sites.place(moved)
    reference = openmm_site_positions(omm, moved)
    np.testing.assert_allclose(ours[sites.site], reference[sites.site], atol=1e-6)
    assert np.linalg.norm(ours[sites.site[:5]] - sites.place(x)[sites.site[:5]], axis=1).min() > 1e-3


def _three_atoms():
    top = app.Topology()
    chain = top.addChain()
    res = top.addResidue("MOL", chain)
    for k in range(4):
        top.addAtom(f"A{k}", app.element.carbon if k < 3 else None, res)
    atoms = list(top.atoms())
    top.addBond(atoms[0], atoms[1])
    top.addBond(atoms[1], atoms[2])
    system = openmm.System()
    for k in range(4):
        system.addParticle(12.0 if k < 3 else 0.0)
    nb = openmm.NonbondedForce()
    for k in range(4):
        nb.addParticle(0.1 * (k - 1.5), 0.3, 0.4)
    nb.addException(0, 1, 0, 1, 0); nb.addException(1, 2, 0, 1, 0); nb.addException(0, 2, 0, 1, 0)
    system.addForce(nb)
    return system, top


@pytest.mark.parametrize("kind", ["two", "three", "outofplane", "local"])
def test_every_site_kind_matches_openmm_geometry(kind):
    """OpenMM's four site classes, each placed as Context.computeVirtualSites places it."""
    system, top = _three_atoms()
    site = {"two": openmm.TwoParticleAverageSite(0, 2, 0.3, 0.7),
            "three": openmm.ThreeParticleAverageSite(0, 1, 2, 0.2, 0.5, 0.3),
            "outofplane": openmm.OutOfPlaneSite(1, 0, 2, 0.4, 0.3, 2.5),
            "local": openmm.LocalCoordinatesSite(1, 0, 2, openmm.Vec3(1, 0, 0), openmm.Vec3(-1, 1, 0),
                                                 openmm.Vec3(-1, 0, 1), openmm.Vec3(0.05, 0.02, -0.03))}[kind]
    system.setVirtualSite(3, site)
    ours_system = system_from_openmm(system, top)
    x = np.array([[0.0, 0.0, 0.0], [1.4, 0.2, 0.1], [2.1, 1.3, -0.4], [9.0, 9.0, 9.0]])
    np.testing.assert_allclose(ours_system.virtual_sites.place(x)[3], openmm_site_positions(system, x)[3], atol=1e-9)


def test_unknown_force_is_refused_naming_its_class():
    system, top = _three_atoms()
    system.addForce(openmm.CustomCompoundBondForce(3, "k*distance(p1,p3)"))
    with pytest.raises(UnsupportedForceError, match="CustomCompoundBondForce") as info:
        system_from_openmm(system, top)
    assert info.value.force_class == "CustomCompoundBondForce"


@pytest.mark.parametrize("force", [openmm.GBSAOBCForce, lambda: openmm.CustomGBForce()])
def test_implicit_solvent_is_refused_for_now(force):
    system, top = _three_atoms()
    system.addForce(force())
    with pytest.raises(UnsupportedForceError, match="implicit solvent"):
        system_from_openmm(system, top)


def test_unknown_custom_form_is_refused_naming_the_expression():
    system, top = _three_atoms()
    morse = openmm.CustomBondForce("D*(1-exp(-a*(r-r0)))^2")
    system.addForce(morse)
    with pytest.raises(UnsupportedForceError, match="CustomBondForce.*exp"):
        system_from_openmm(system, top)


def test_restraints_are_left_out_with_a_note():
    system, top = _three_atoms()
    restraint = openmm.CustomExternalForce("k*((x-x0)^2+(y-y0)^2+(z-z0)^2)")
    for name in ("k", "x0", "y0", "z0"):
        restraint.addPerParticleParameter(name)
    restraint.addParticle(0, [100.0, 0.0, 0.0, 0.0])
    system.addForce(restraint)
    converted = system_from_openmm(system, top)
    assert len(converted.notes) == 1 and "CustomExternalForce" in converted.notes[0]
    assert "left out" in converted.notes[0]


def test_serialised_system_round_trip(tmp_path):
    """A System written by OpenMM's XmlSerializer with the PDB of its atoms gives the same energies
    as the System it came from (reference: OpenMM on that System)."""
    from energy.io.loaders import load_system
    from energy.io.openmm_routes import load_serialized_system
    pdb = app.PDBFile(OPENMM_TEST_PDB)
    ff = app.ForceField(*force_field_files("amber14"))
    omm = ff.createSystem(pdb.topology, nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False,
                          removeCMMotion=False)
    xml = tmp_path / "system.xml"
    xml.write_text(openmm.XmlSerializer.serialize(omm))
    system, frame = load_serialized_system(str(xml), OPENMM_TEST_PDB)
    ours = compute(system, frame, EnergySettings())
    ref = reference_terms(omm, pdb.topology, frame.positions)
    _compare_terms(ours, ref)
    loaded = load_system(str(xml), OPENMM_TEST_PDB)  # the same through the one entry point
    direct, _, _, _ = load_builtin(OPENMM_TEST_PDB)
    assert loaded.system.n_atoms == direct.n_atoms
    np.testing.assert_array_equal(loaded.system.charges, direct.charges)
    assert os.path.basename(loaded.system.source_files[0]) == "system.xml"


def test_copy_keeps_virtual_sites(small_solvated):
    """A converted system survives a deep copy / pickling (worker processes of trajectories)."""
    import pickle
    omm, top, _ = _built(small_solvated, force_field_files("amber19", "opc"))
    system = system_from_openmm(omm, top)
    again = pickle.loads(pickle.dumps(copy.deepcopy(system)))
    np.testing.assert_array_equal(again.virtual_sites.parents, system.virtual_sites.parents)


def test_sites_are_placed_in_every_trajectory_frame(small_solvated, tmp_path):
    """A PDB with OPC waters (sites included, written by OpenMM's PDBFile) and a 2-frame DCD whose
    second frame moves hydrogens but leaves the sites where they were: every frame's terms match
    OpenMM with its computeVirtualSites."""
    import MDAnalysis as mda

    from energy.analysis.trajectory import TrajectoryRequest, TrajectorySource
    from energy.io.preparation import PreparationOptions
    omm, top, x = _built(small_solvated, force_field_files("amber19", "opc"))
    pdb = tmp_path / "opc.pdb"
    with open(pdb, "w") as handle:
        app.PDBFile.writeFile(top, x * unit.angstrom, handle, keepIds=True)
    moved = x.copy()
    hydrogens = [a.index for a in top.atoms() if a.residue.name == "HOH" and a.name == "H1"][:20]
    moved[hydrogens] += 0.25
    dcd = tmp_path / "opc.dcd"
    u = mda.Universe.empty(len(x), trajectory=True)
    with mda.Writer(str(dcd), len(x)) as writer:
        for positions in (x, moved):
            u.atoms.positions = positions
            writer.write(u.atoms)
    request = TrajectoryRequest(str(pdb), str(dcd),
                                preparation=PreparationOptions(force_field_name="amber19", water="opc"))
    source = TrajectorySource(request)
    system = source.system
    assert len(system.virtual_sites) == len([r for r in top.residues() if r.name == "HOH"])
    for frame, positions in zip(source.frames([0, 1]), (x, moved)):
        record, _ = source.evaluate(frame)
        raw = positions.astype(np.float32).astype(np.float64)  # as the DCD stores them
        ref = reference_terms(omm, top, raw)
        assert_close(record.totals["coulomb"], ref["coulomb"], f"frame {frame.index}: coulomb")
        assert_close(record.totals["lj"], ref["lj"], f"frame {frame.index}: lj")


def test_pdb_route_adds_the_sites_of_a_four_site_water(small_solvated, tmp_path, capsys):
    """--forcefield amber19 --water opc on a PDB with 3-site waters: the M sites are added
    (OpenMM's Modeller.addExtraParticles) and the terms match OpenMM's ForceField on the same
    atoms; the command line takes the same options."""
    from app.cli.main import main
    from energy.io.loaders import load_system
    from energy.io.preparation import PreparationOptions
    pdb = tmp_path / "three_site.pdb"
    with open(pdb, "w") as handle:
        app.PDBFile.writeFile(small_solvated.topology, small_solvated.positions, handle, keepIds=True)
    loaded = load_system(str(pdb), preparation=PreparationOptions(force_field_name="amber19", water="opc"))
    n_water = sum(1 for r in small_solvated.topology.residues() if r.name == "HOH")
    assert len(loaded.system.virtual_sites) == n_water
    ff = app.ForceField(*force_field_files("amber19", "opc"))
    reread = app.PDBFile(str(pdb))
    m = app.Modeller(reread.topology, reread.positions)
    m.addExtraParticles(ff)
    omm = ff.createSystem(m.topology, nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False,
                          removeCMMotion=False)
    ours = compute(loaded.system, loaded.frame, EnergySettings())
    _compare_terms(ours, reference_terms(omm, m.topology, loaded.frame.positions))
    assert main(["scan", str(pdb), "--forcefield", "amber19", "--water", "opc", "--json",
                 str(tmp_path / "r.json")]) == 0
    assert main(["forcefields"]) == 0
    listing = capsys.readouterr().out
    assert "amber19" in listing and "charmm36" in listing and "opc" in listing
    assert main(["scan", str(pdb), "--forcefield", "charmm36", "--water", "opc"]) == 2  # CHARMM36 has no OPC
    assert "--water opc: the charmm36 force field has" in capsys.readouterr().err


def test_charmm36_accepts_amber_named_termini_and_matches_openmm():
    """The scenario's PDB (Amber-named termini: H1/H2/H3, OXT) under --forcefield charmm36: OpenMM's
    createSystem matches its termini through CHARMM36's NTER/CTER patches (getUnmatchedResidues,
    which ignores patches, reported every terminus and the loader used to refuse them).  Every term
    against ForceField('charmm36.xml', 'charmm36/water.xml').createSystem on OpenMM's own PDBFile
    read of the same file, Reference platform (tests/openmm_terms.py)."""
    from data import SCENARIO_FIXED_PDB
    files = force_field_files("charmm36")
    system, frame, _, _ = load_builtin(SCENARIO_FIXED_PDB, force_field=files)
    pdb = app.PDBFile(SCENARIO_FIXED_PDB)
    omm = app.ForceField(*files).createSystem(pdb.topology, nonbondedMethod=app.NoCutoff, constraints=None,
                                              rigidWater=False, removeCMMotion=False)
    assert system.n_atoms == pdb.topology.getNumAtoms()
    names = [a.name for a in next(pdb.topology.residues()).atoms()]
    assert {"H2", "H3"} <= set(names)  # an Amber-style N terminus (OpenMM reads H1 as H)
    ours = compute(system, frame, EnergySettings())
    _compare_terms(ours, reference_terms(omm, pdb.topology, frame.positions))
