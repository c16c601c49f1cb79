"""Residue templates from OpenMM force-field XML files (--forcefield-file) and leaving out what
no template matches (--drop-unmatched), on the invented ligand sample (samples/ligand/, made by
samples/make_ligand.py)."""
from __future__ import annotations

import json
import os

import pytest
from data import REPO, SCENARIO_FIXED_PDB
from openmm import app
from openmm_reference import openmm_force_energies

from app.cli.main import main
from energy.decomposition.pipeline import compute
from energy.errors import StructureFileError, UnknownResidueError
from energy.io.builtin import DEFAULT_FORCE_FIELD, load_builtin_prepared
from energy.io.loaders import load_system
from energy.io.preparation import PreparationOptions
from energy.model.settings import EnergySettings

LIGAND_DIR = os.path.join(REPO, "samples", "ligand")
COMPLEX = os.path.join(LIGAND_DIR, "complex_with_ligand.pdb")
TEMPLATE = os.path.join(LIGAND_DIR, "probe_ligand.xml")


def test_without_the_template_the_ligand_is_named():
    with pytest.raises(UnknownResidueError) as err:
        load_builtin_prepared(COMPLEX, PreparationOptions())
    assert str(err.value) == (
        f"{COMPLEX}: 1 residue(s) match no template of amber14-all.xml + amber14/tip3p.xml. No "
        "template: PLG x1 (L:PLG1); give their templates with --forcefield-file FILE.xml (OpenMM "
        "force-field XML), or leave them out with --drop-unmatched.")


def test_forcefield_file_template_matches_openmm():
    """Expected: every term equals OpenMM's ForceField(amber14-all.xml, amber14/tip3p.xml,
    probe_ligand.xml).createSystem on the same topology (project rule), and the ligand's own
    bonded terms are there (5 bonds, 7 angles, 3 torsions of the template)."""
    from test_builtin_vs_openmm import _compare
    system, frame, topology, _ = load_builtin_prepared(COMPLEX, PreparationOptions(forcefield_files=(TEMPLATE,)))
    ours = compute(system, frame, EnergySettings())
    omm = app.ForceField(*DEFAULT_FORCE_FIELD, TEMPLATE).createSystem(
        topology, nonbondedMethod=app.NoCutoff, constraints=None, rigidWater=False, removeCMMotion=False)
    _compare(ours, openmm_force_energies(omm, frame.positions))
    ligand = {i for i in range(system.n_atoms) if system.residues.resname[system.resindex[i]] == "PLG"}
    count = lambda t: sum(all(a in ligand for a in row) for row in t.atoms)  # noqa: E731
    assert (count(system.bonds), count(system.angles), count(system.dihedrals)) == (5, 7, 3)
    assert "probe_ligand.xml" in system.force_field


def test_drop_unmatched_leaves_out_and_lists_the_ligand(tmp_path, capsys):
    """Expected: the ligand is listed and left out; what remains is exactly the scenario's
    complex_fixed.pdb (same atoms, same energies to 1e-9 kcal/mol)."""
    out = tmp_path / "dropped.json"
    assert main(["scan", COMPLEX, "--drop-unmatched", "--json", str(out)]) == 0
    assert "preparation: left out 1 residue(s) matching no template: L:PLG1" in capsys.readouterr().out
    doc = json.loads(out.read_text())
    assert doc["preparation"]["dropped_residues"] == ["L:PLG1"]
    protein = load_system(SCENARIO_FIXED_PDB)
    reference = compute(protein.system, protein.frame, EnergySettings())
    assert doc["n_atoms"] == protein.system.n_atoms
    for term, value in reference.totals.items():
        assert doc["totals"][term] == pytest.approx(value, abs=1e-9, rel=0)


def test_a_bad_forcefield_file_is_named(tmp_path):
    bad = tmp_path / "broken.xml"
    bad.write_text("<ForceField><Residues><Residue name='X'>")
    with pytest.raises(StructureFileError, match=r"broken.xml: not a force-field XML file OpenMM can read"):
        load_builtin_prepared(COMPLEX, PreparationOptions(forcefield_files=(str(bad),)))
    with pytest.raises(StructureFileError, match="force-field file not found"):
        load_builtin_prepared(COMPLEX, PreparationOptions(forcefield_files=(str(tmp_path / "none.xml"),)))
