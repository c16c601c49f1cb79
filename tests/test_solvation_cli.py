"""`tessera scan` / `compare` with --implicit-solvent: the options reach the engine and the new
terms reach the JSON totals, pairs and CSV (the numbers themselves are checked against OpenMM in
tests/test_solvation_vs_openmm.py; here the CLI is compared with the API on the same input)."""
from __future__ import annotations

import csv
import json
import os

import pytest
from data import REPO

from app.cli.main import main
from energy.decomposition.pipeline import compute
from energy.io.loaders import load_system
from energy.model.settings import EnergySettings

PEPTIDE = os.path.join(REPO, "samples", "peptide")
PSF = os.path.join(PEPTIDE, "probe_peptide.psf")
PRM = os.path.join(PEPTIDE, "probe_ff.prm")
PDB = os.path.join(PEPTIDE, "probe_peptide.pdb")


def test_scan_with_implicit_solvent_writes_the_solvation_terms(tmp_path):
    out = tmp_path / "gb.json"
    code = main(["scan", PSF, PDB, "--params", PRM, "--implicit-solvent", "gbn2", "--salt", "0.15",
                 "--solvent-dielectric", "80", "--nonpolar", "ace", "--json", str(out),
                 "--csv-dir", str(tmp_path / "csv"), "--quiet"])
    assert code == 0
    doc = json.loads(out.read_text())
    loaded = load_system(PSF, PDB, [PRM])
    api = compute(loaded.system, loaded.frame,
                  EnergySettings(implicit_solvent="gbn2", salt_molar=0.15, solvent_dielectric=80.0))
    for term in ("solvation_polar", "solvation_nonpolar", "coulomb", "total"):
        assert doc["totals"][term] == pytest.approx(api.totals[term], rel=1e-12)
    assert doc["totals"]["solvation_polar"] < 0 < doc["totals"]["solvation_nonpolar"]
    assert doc["settings"]["implicit_solvent"] == "gbn2" and doc["settings"]["salt_molar"] == 0.15
    pair_sum = sum(p["solvation_polar"] for p in doc["pairs"])
    assert pair_sum == pytest.approx(doc["totals"]["solvation_polar"], rel=1e-9)
    with open(tmp_path / "csv" / "residue_pairs.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert sum(float(r["solvation_nonpolar"]) for r in rows) == pytest.approx(
        doc["totals"]["solvation_nonpolar"], abs=1e-4)


def test_without_implicit_solvent_the_terms_are_zero(tmp_path):
    out = tmp_path / "vac.json"
    assert main(["scan", PSF, PDB, "--params", PRM, "--json", str(out), "--quiet"]) == 0
    doc = json.loads(out.read_text())
    assert doc["totals"]["solvation_polar"] == 0.0 and doc["totals"]["solvation_nonpolar"] == 0.0
