"""`tessera hotspots`: its JSON and CSV, the method labels, and one-line errors.

Expected values: the scenario facts in samples/scenario/scenario.json ("hotspots": computed by
samples/scenario_hotspots.py from OpenMM's parameters without Tessera's engine); on the PSF route,
the project's interaction_energy of the switched-off atoms (itself checked against OpenMM's
CharmmPsfFile system in tests/test_charmm_vs_openmm.py).
"""
from __future__ import annotations

import csv
import json
import os

import numpy as np
import pytest
from data import REPO, SCENARIO_DIR, SCENARIO_FIXED_PDB

from app.cli.main import main
from energy.decomposition.atom_pairs import interaction_energy
from energy.io.loaders import load_system

FACTS = json.load(open(os.path.join(SCENARIO_DIR, "scenario.json")))
PEPTIDE = os.path.join(REPO, "samples", "peptide")


def test_json_and_csv_of_the_scenario(tmp_path):
    out, table = tmp_path / "h.json", tmp_path / "h.csv"
    code = main(["hotspots", SCENARIO_FIXED_PDB, "--select-a", "segid A", "--select-b", "segid B",
                 "--json", str(out), "--csv", str(table), "--quiet"])
    assert code == 0
    doc = json.loads(out.read_text())
    facts = FACTS["hotspots"]["fixed"]
    assert len(doc["residues"]) == facts["n_scanned"]
    assert [r["label"] for r in doc["residues"][:5]] == facts["top5"]
    by_label = {r["label"]: r for r in doc["residues"]}
    for label, delta in facts["delta_kcal_mol"].items():
        assert by_label[label]["delta_total"] == pytest.approx(delta, abs=0.01)
        assert by_label[label]["rank"] == facts["rank"][label]
    assert doc["methods"] == ["ALA template"] and "ddG" in doc["caveat"]
    assert all(r["hot"] == (r["delta_total"] >= 2.0) for r in doc["residues"])
    assert {s["reason"] for s in doc["skipped"]} <= {"glycine has no side chain", "already alanine"}
    rows = list(csv.DictReader(table.open()))
    assert len(rows) == facts["n_scanned"]
    assert rows[0]["label"] == facts["top5"][0] and rows[0]["method"] == "ALA template"
    assert rows[0]["lost_1"] == "B:LYS15"  # the salt-bridge partner loses the most
    np.testing.assert_allclose([float(r["delta_total"]) for r in rows],
                               [r["delta_total"] for r in doc["residues"]], atol=1e-6)


def test_result_file_round_trip(tmp_path):
    """The result file read back (energy.results.load) holds the same
    rows as the JSON (which the test above checks against the OpenMM-only scenario facts)."""
    from energy.results import load
    out, h5 = tmp_path / "h.json", tmp_path / "h.h5"
    assert main(["hotspots", SCENARIO_FIXED_PDB, "--select-a", "segid A", "--select-b", "segid B",
                 "--json", str(out), "--out", str(h5), "--quiet"]) == 0
    doc = json.loads(out.read_text())
    stored = load(str(h5))
    assert stored.kind == "hotspots"
    t = stored.hotspots
    assert list(t["residue"]) == [r["residue"] for r in doc["residues"]]
    np.testing.assert_array_equal(t["delta_coulomb"] + t["delta_lj"], [r["delta_total"] for r in doc["residues"]])
    assert list(t["method"]) == [r["method"] for r in doc["residues"]]
    assert t["select_a"] == "segid A" and json.loads(t["terms"]) == ["coulomb", "lj"]
    assert len(t["skipped_residue"]) == len(doc["skipped"])
    assert stored.residues.label(int(t["residue"][0])) == doc["residues"][0]["label"]


def test_psf_route_switches_the_side_chain_off_and_says_so(tmp_path, capsys):
    psf, pdb = os.path.join(PEPTIDE, "probe_peptide.psf"), os.path.join(PEPTIDE, "probe_peptide.pdb")
    prm = os.path.join(PEPTIDE, "probe_ff.prm")
    out = tmp_path / "p.json"
    code = main(["hotspots", psf, pdb, "--params", prm, "--select-a", "resid 2", "--select-b", "resid 4",
                 "--interface", "8", "--json", str(out), "--top", "5"])
    assert code == 0
    text = capsys.readouterr().out
    assert "side chain switched off" in text
    doc = json.loads(out.read_text())
    ser = next(r for r in doc["residues"] if r["resname"] == "SER")
    assert ser["method"] == "side chain switched off"
    loaded = load_system(psf, pdb, [prm])
    s = loaded.system
    own = np.flatnonzero(s.resindex == ser["residue"])
    gone = own[np.isin(s.names[own], ["OG", "HG1", "HG"])]
    partner = np.flatnonzero(s.residues.resid[s.resindex] == 2)
    e = interaction_energy(s, loaded.frame, None, gone, partner)
    assert ser["delta_total"] == pytest.approx(-e["total"], abs=1e-9)


def test_errors_are_one_line(tmp_path, capsys):
    code = main(["hotspots", SCENARIO_FIXED_PDB, "--select-a", "segid A", "--select-b", "segid A or segid B",
                 "--quiet"])
    err = capsys.readouterr().err.strip()
    assert code == 2 and "disjoint" in err and "\n" not in err
    code = main(["hotspots", SCENARIO_FIXED_PDB, "--select-a", "segid A and name CA", "--select-b", "segid B",
                 "--quiet"])
    err = capsys.readouterr().err.strip()
    assert code == 2 and "part of residue" in err
