"""Chain breaks on the built-in route: never bonded across, both ends chain termini, each listed."""
from __future__ import annotations

import json

import MDAnalysis as mda
import numpy as np
import pytest
from data import ADK_OPEN_PDB, MMCIF_1BD2_GZ
from openmm import app
from openmm_reference import openmm_force_energies
from test_builtin_vs_openmm import _compare, _openmm_system

from app.cli.main import main
from energy.decomposition.pipeline import compute
from energy.errors import UnknownResidueError
from energy.io.builtin import DEFAULT_FORCE_FIELD, build_force_field, load_builtin_prepared
from energy.io.preparation import GAP_C_N_ANGSTROM, PreparationOptions, prepare_structure
from energy.model.settings import EnergySettings


@pytest.fixture(scope="module")
def adk_with_a_gap(tmp_path_factory):
    """adk_open.pdb (MDAnalysisTests; adenylate kinase with hydrogens) with residues 60-62
    deleted, as a user deleting unmatched residues would: VAL59 and LEU63 are now neighbours in
    the file, 6 A apart."""
    path = tmp_path_factory.mktemp("gap") / "adk_gap.pdb"
    lines = [line for line in open(ADK_OPEN_PDB)
             if not (line.startswith("ATOM") and 60 <= int(line[22:26]) <= 62)]
    path.write_text("".join(lines))
    return str(path)


def _c_n_distance_in_file(path):
    u = mda.Universe(path)
    c = u.select_atoms("resid 59 and name C").positions[0]
    n = u.select_atoms("resid 63 and name N").positions[0]
    return float(np.linalg.norm(n - c))


def test_a_gap_is_reported_with_the_repair_it_needs(adk_with_a_gap):
    """Expected (exact message): the two ends lack their terminal atoms, and --repair is named."""
    with pytest.raises(UnknownResidueError) as err:
        load_builtin_prepared(adk_with_a_gap, PreparationOptions())
    assert str(err.value) == (
        f"{adk_with_a_gap}: 2 residue(s) match no template of amber14-all.xml + amber14/tip3p.xml. "
        "Chain breaks (never bonded across; both ends become chain termini): VAL59 - LEU63 "
        "(C-N 5.97 A). Standard residues with missing or extra atoms: VAL x1 (VAL59), LEU x1 "
        "(LEU63); --repair rebuilds missing heavy atoms and terminal groups.")


def test_a_gap_is_never_bonded_across(adk_with_a_gap):
    """Expected: the gap is listed with the C-N distance of the file (read independently with
    MDAnalysis); no bonded term joins VAL59 and LEU63; VAL59 gets a C-terminal OXT and LEU63 an
    N-terminal NH3+; energies equal OpenMM's createSystem on the same prepared topology (project
    rule); bonds average well under 1 kcal/mol each (common practice for a thermal structure;
    bonding across the gap gave +3,499 kcal/mol on one bond in the issue)."""
    system, frame, topology, prepared = load_builtin_prepared(adk_with_a_gap, PreparationOptions(repair=True))
    gaps = prepared.record.gaps
    assert len(gaps) == 1 and gaps[0]["after"] == "VAL59" and gaps[0]["before"] == "LEU63"
    assert gaps[0]["c_n_distance"] == pytest.approx(_c_n_distance_in_file(adk_with_a_gap), abs=1e-3)
    assert gaps[0]["c_n_distance"] > GAP_C_N_ANGSTROM
    labels = np.array([system.residues.label(r) for r in system.resindex])
    val59, leu63 = np.flatnonzero(labels == "VAL59"), np.flatnonzero(labels == "LEU63")
    for table in (system.bonds, system.angles, system.dihedrals, system.periodic_impropers):
        atoms = table.atoms
        assert not np.any(np.isin(atoms, val59).any(axis=1) & np.isin(atoms, leu63).any(axis=1))
    assert "OXT" in set(system.names[val59])
    n63 = leu63[system.names[leu63] == "N"][0]
    partners = [b for a, b in system.bonds.atoms if a == n63] + [a for a, b in system.bonds.atoms if b == n63]
    assert sorted(system.elements[partners]) == ["C", "H", "H", "H"]  # NH3+: a chain N-terminus
    ours = compute(system, frame, EnergySettings())
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(ours, ref)
    assert ours.totals["bond"] / len(system.bonds) < 1.0


def test_gaps_are_listed_in_the_summary_and_json(adk_with_a_gap, tmp_path, capsys):
    out = tmp_path / "gap.json"
    assert main(["scan", adk_with_a_gap, "--repair", "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "preparation: gap: chain break between VAL59 and LEU63 (C-N 5.97 A)" in text
    doc = json.loads(out.read_text())
    assert [(g["after"], g["before"]) for g in doc["preparation"]["gaps"]] == [("VAL59", "LEU63")]
    assert doc["preparation"]["gap_c_n_threshold_angstrom"] == GAP_C_N_ANGSTROM


def test_real_gaps_of_an_mmcif_entry():
    """1BD2.cif.gz (MDAnalysisTests; PDB 1BD2, a T-cell receptor/MHC complex, mmCIF, gzip).
    Expected: exactly the two internal breaks that the entry's own
    _pdbx_unobs_or_zero_occ_residues lists (chain D, residues 133-136 and 170-172 unobserved;
    204-210 are at the C-terminus, not a break)."""
    ff = build_force_field(DEFAULT_FORCE_FIELD)
    prepared = prepare_structure(MMCIF_1BD2_GZ, PreparationOptions(), ff, "amber14")
    assert [(g["after"], g["before"]) for g in prepared.record.gaps] == [
        ("D:LYS132", "D:SER137"), ("D:ARG169", "D:PHE173")]
    chains = [c.id for c in prepared.topology.chains()]
    assert chains.count("D") == 3  # chain D split twice
