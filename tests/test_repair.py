"""Repair on request (--repair, --add-hydrogens, --ph, --write-prepared) on real deposited entries
of MDAnalysisTests, each against an outside reference: OpenMM's ForceField.createSystem on the
same prepared topology (tests/openmm_reference.py, the project's agreement rule), the entry's own
REMARK 470 / occupancies, and two runs giving bit-identical totals."""
from __future__ import annotations

import gzip
import json

import numpy as np
import pytest
from data import (
    CYTOCHROME_19HC_GZ,
    MMCIF_1YJP,
    MMCIF_1YJP_GZ,
    OSMOPORIN_1OSM_GZ,
    PROGESTERONE_1A28_GZ,
)
from openmm import app
from openmm_reference import openmm_force_energies
from test_builtin_vs_openmm import _compare, _openmm_system

from app.cli.main import main
from energy.decomposition.pipeline import compute
from energy.io.builtin import load_builtin_prepared
from energy.io.preparation import PreparationOptions, PreparationRecord, _parse
from energy.model.settings import EnergySettings
from energy.terms.registry import TERMS

REPAIR = PreparationOptions(repair=True, drop_unmatched=True)


def _remark_470(path):
    """{"A:GLN682": ["CG", "CD", ...]} from the entry's REMARK 470 (missing atoms)."""
    out = {}
    for line in gzip.open(path, "rt"):
        fields = line.split()
        # REMARK 470 <resname> <chain> <number> <atoms...> (wwPDB format, REMARK 470)
        if line.startswith("REMARK 470") and len(fields) > 5 and fields[4].isdigit():
            out[f"{fields[3]}:{fields[2]}{fields[4]}"] = fields[5:]
    return out


@pytest.fixture(scope="module")
def repaired_1a28():
    """1a28.pdb.gz (MDAnalysisTests; PDB 1A28: progesterone receptor, 2 chains, progesterone STR,
    missing side-chain atoms, no hydrogens), --repair --drop-unmatched, through the API."""
    system, frame, topology, prepared = load_builtin_prepared(PROGESTERONE_1A28_GZ, REPAIR)
    return system, frame, topology, prepared, compute(system, frame, EnergySettings())


def test_repair_rebuilds_what_remark_470_says_is_missing(repaired_1a28):
    """Expected: the rebuilt atoms are exactly the entry's REMARK 470 list, plus the C-terminal
    OXT of each chain's last observed residue (read from the file's ATOM records; REMARK 465 lists
    the residues after them as unobserved); the ligand is left out and named."""
    record = repaired_1a28[3].record
    last = {}
    for line in gzip.open(PROGESTERONE_1A28_GZ, "rt"):
        if line.startswith("ATOM"):
            last[line[21]] = f"{line[21]}:{line[17:20]}{int(line[22:26])}"
    expected = {k: sorted(v) for k, v in _remark_470(PROGESTERONE_1A28_GZ).items()}
    expected.update({label: ["OXT"] for label in last.values()})
    assert {a["residue"]: sorted(a["atoms"]) for a in record.atoms_added} == expected
    assert record.dropped == ["A:STR1", "B:STR2"]
    assert record.hydrogens_added > 4000 and record.residues_replaced == []


def test_repaired_crystal_structure_matches_openmm_and_has_thermal_bonds(repaired_1a28):
    """Expected: every term equals OpenMM createSystem on the same prepared topology (project
    rule); the bond energy averages well under 1 kcal/mol per bond (common practice: a
    thermal structure), and the angle energy under 1 kcal/mol per angle."""
    system, frame, topology, _, ours = repaired_1a28
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(ours, ref)
    assert ours.totals["bond"] / len(system.bonds) < 1.0
    assert ours.totals["angle"] / len(system.angles) < 1.0


def test_rebuilt_residues_clash_no_more_than_deposited_ones(repaired_1a28):
    """The relaxation of rebuilt atoms with the force field (PDBFixer's soft relaxation alone left
    A:ASN705's ND2 1.6 A from A:HIS703's ND1, +3,700 kcal/mol of LJ). Expected: each residue with
    rebuilt atoms has a per-residue LJ energy below the largest of the residues repair did not
    touch (deposited atoms only), and the LJ total is attractive."""
    system, _, _, prepared, ours = repaired_1a28
    per = ours.residue_pairs.per_residue("lj")
    labels = [system.residues.label(i) for i in range(system.n_residues)]
    rebuilt = {a["residue"] for a in prepared.record.atoms_added}
    untouched = max(v for label, v in zip(labels, per) if label not in rebuilt)
    assert all(per[labels.index(label)] < untouched for label in rebuilt)
    assert ours.totals["lj"] < 0.0


def test_two_runs_give_identical_totals_and_the_prepared_pdb(repaired_1a28, tmp_path):
    """Expected: a second run (the CLI, same input and options) gives bit-identical totals in its
    JSON; its preparation block and the written PDB describe the same atoms."""
    out, pdb = tmp_path / "run2.json", tmp_path / "prepared.pdb"
    assert main(["scan", PROGESTERONE_1A28_GZ, "--repair", "--drop-unmatched", "--json", str(out),
                 "--write-prepared", str(pdb), "--quiet"]) == 0
    doc = json.loads(out.read_text())
    first = repaired_1a28[4]
    assert {t: doc["totals"][t] for t in (*TERMS, "total")} == {t: first.totals[t] for t in (*TERMS, "total")}
    assert doc["preparation"]["dropped_residues"] == ["A:STR1", "B:STR2"]
    assert doc["preparation"]["prepared_pdb"] == str(pdb)
    assert app.PDBFile(str(pdb)).topology.getNumAtoms() == doc["n_atoms"] == repaired_1a28[0].n_atoms


@pytest.fixture(scope="module")
def adk_heavy(tmp_path_factory):
    """adk_open.pdb (MDAnalysisTests) without its hydrogens, as in test_builtin_vs_openmm."""
    import MDAnalysis as mda
    from data import ADK_OPEN_PDB
    path = tmp_path_factory.mktemp("adk") / "adk_heavy.pdb"
    mda.Universe(ADK_OPEN_PDB).select_atoms("not name H*").write(str(path))
    return str(path)


def test_add_hydrogens_is_deterministic(adk_heavy):
    """--add-hydrogens twice on the same file. Expected: bit-identical positions and totals (the
    issue saw totals move by 5-8 kcal/mol between identical runs)."""
    runs = [load_builtin_prepared(adk_heavy, PreparationOptions(add_hydrogens=True)) for _ in range(2)]
    assert np.array_equal(runs[0][1].positions, runs[1][1].positions)
    totals = [compute(s, f, EnergySettings()).totals for s, f, _, _ in runs]
    assert totals[0] == totals[1]


def test_ph_changes_the_protonation(adk_heavy):
    """pH 7 and pH 2 (Modeller's pKa rule: Asp, Glu and His protonated at pH 2, common practice).
    Expected: more hydrogens at pH 2, recorded with the pH."""
    at7 = load_builtin_prepared(adk_heavy, PreparationOptions(add_hydrogens=True))[3].record
    at2 = load_builtin_prepared(adk_heavy, PreparationOptions(add_hydrogens=True, ph=2.0))[3].record
    assert at2.hydrogens_added > at7.hydrogens_added and at2.as_dict()["ph"] == 2.0


def test_insertion_codes_kept_through_repair():
    """1osm.pdb.gz (MDAnalysisTests; PDB 1OSM, insertion codes, no hydrogens, its last residue
    A:ILE181A without OXT), --repair. Expected: every term equal to OpenMM createSystem on the
    prepared topology; residues keep their insertion codes; the OXT is rebuilt on A:ILE181A."""
    system, frame, topology, prepared = load_builtin_prepared(OSMOPORIN_1OSM_GZ, PreparationOptions(repair=True))
    ours = compute(system, frame, EnergySettings())
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(ours, ref)
    labels = {system.residues.label(i) for i in range(system.n_residues)}
    assert {"A:ILE181A", "A:ALA163F", "A:GLU163D"} <= labels
    assert {"residue": "A:ILE181A", "atoms": ["OXT"]} in prepared.record.atoms_added


def test_mmcif_entry_plain_and_gzipped():
    """1YJP.cif and 1YJP.cif.gz (MDAnalysisTests; PDB 1YJP, GNNQQNY peptide and 7 waters, mmCIF),
    --add-hydrogens. Expected: every term equal to OpenMM createSystem on the prepared topology;
    the gzipped file gives bit-identical totals."""
    system, frame, topology, _ = load_builtin_prepared(MMCIF_1YJP, PreparationOptions(add_hydrogens=True))
    ours = compute(system, frame, EnergySettings())
    ref = openmm_force_energies(_openmm_system(topology, app.NoCutoff), frame.positions)
    _compare(ours, ref)
    s2, f2, _, _ = load_builtin_prepared(MMCIF_1YJP_GZ, PreparationOptions(add_hydrogens=True))
    assert compute(s2, f2, EnergySettings()).totals == ours.totals


def _altloc_lines(path, chain, resseq, label):
    return {line[12:16].strip(): np.array([float(line[30:38]), float(line[38:46]), float(line[46:54])])
            for line in gzip.open(path, "rt")
            if line.startswith(("ATOM", "HETATM")) and line[21] == chain and int(line[22:26]) == resseq
            and line[16] in (label, " ")}


def test_alternate_locations_highest_occupancy_then_first_label():
    """19hc.pdb.gz (MDAnalysisTests; PDB 19HC): 14 residues with altlocs. Expected: B:GLU191
    (occupancies A 0.45, B 0.55 in the file) keeps B, every other one A (A >= B in the file); the
    kept atoms carry the file's coordinates of the chosen label."""
    record = PreparationRecord(PreparationOptions())
    topology, models, _, _, _ = _parse(CYTOCHROME_19HC_GZ, record)
    chosen = {a["residue"]: a["chosen"] for a in record.altlocs}
    assert len(chosen) == 14 and chosen.pop("B:GLU191") == "B" and set(chosen.values()) == {"A"}
    glu = next(a for a in record.altlocs if a["residue"] == "B:GLU191")
    assert glu["labels"] == {"A": 0.45, "B": 0.55}
    expected = _altloc_lines(CYTOCHROME_19HC_GZ, "B", 191, "B")
    residue = next(r for r in topology.residues() if r.chain.id == "B" and r.id == "191")
    got = {a.name: models[0][a.index] for a in residue.atoms()}
    assert set(got) == set(expected)
    for name, xyz in expected.items():
        assert np.allclose(got[name], xyz, atol=1e-9), name


def test_alternate_locations_tie_keeps_the_first_label():
    """3PWP.cif.gz (MDAnalysisTests; PDB 3PWP, mmCIF): B:GLN2 has two labels of occupancy 0.5.
    Expected: the first label, A."""
    from data import _MDAT_DATA
    record = PreparationRecord(PreparationOptions())
    _parse(f"{_MDAT_DATA}/mmcif/3PWP.cif.gz", record)
    assert record.altlocs == [{"residue": "B:GLN2", "labels": {"A": 0.5, "B": 0.5}, "chosen": "A"}]


def test_repair_and_ph_need_the_built_in_route():
    """A PSF is used as it is: asking to prepare it is an error, not silently ignored."""
    import os

    from data import REPO

    from energy.errors import StructureFileError
    from energy.io.loaders import load_system
    pep = os.path.join(REPO, "samples", "peptide")
    with pytest.raises(StructureFileError, match="a PSF topology is used as it is"):
        load_system(os.path.join(pep, "probe_peptide.psf"), os.path.join(pep, "probe_peptide.pdb"),
                    [os.path.join(pep, "probe_ff.prm")], preparation=PreparationOptions(repair=True))
