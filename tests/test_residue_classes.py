"""Residue classes and solvent blocks.

Class names are checked against the residue templates of OpenMM's bundled Amber 14 force-field
files (openmm/app/data/amber14/*.xml, read here with the standard library's XML parser): every
template of protein.ff14SB is protein, of DNA.OL15 and RNA.OL3 nucleic, of lipid17 lipid, and
of tip3p.xml water (HOH) or ion (every other template there).  Blocked tables are checked
against brute-force sums of the full table (the definition of a block; common practice)."""
from __future__ import annotations

import os
import xml.etree.ElementTree as ET

import numpy as np
import openmm.app
import pytest

from energy.decomposition.blocks import block_residue_pairs, has_solvent
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.model.residue_classes import residue_class, residue_classes
from energy.model.system import ResidueTable
from energy.terms.registry import TERMS

AMBER14 = os.path.join(os.path.dirname(openmm.app.__file__), "data", "amber14")


def _templates(name):
    root = ET.parse(os.path.join(AMBER14, name)).getroot()
    return [r.get("name") for r in root.iter("Residue")]


@pytest.mark.parametrize("xml_file,expected", [("protein.ff14SB.xml", "protein"), ("DNA.OL15.xml", "nucleic"),
                                                ("RNA.OL3.xml", "nucleic"), ("lipid17.xml", "lipid")])
def test_every_openmm_template_of_a_family_gets_its_class(xml_file, expected):
    names = _templates(xml_file)
    assert len(names) > 10
    assert {n: residue_class(n) for n in names if residue_class(n) != expected} == {}


def test_tip3p_file_waters_and_ions():
    names = _templates("tip3p.xml")
    assert residue_class("HOH") == "water"
    assert {n: residue_class(n) for n in names if n != "HOH" and residue_class(n) != "ion"} == {}


def test_common_names_of_other_packages_and_segments():
    # CHARMM (TIP3 water, SOD/CLA ions, HSD histidine) and GROMACS (SOL water): common practice
    for name, cls in [("TIP3", "water"), ("SOL", "water"), ("WAT", "water"), ("SOD", "ion"), ("CLA", "ion"),
                      ("Na+", "ion"), ("HSD", "protein"), ("MSE", "protein"), ("HEM", "ligand"),
                      ("ACT", "ligand"), ("LIG", "ligand")]:
        assert residue_class(name) == cls, name
    assert residue_class("XYZ", "SOLV") == "water" and residue_class("XYZ", "IONS") == "ion"
    table = ResidueTable(np.array(["A", "A", "W", "I"]), np.arange(1, 5), np.array(["LYS", "HEM", "TIP3", "SOD"]),
                         np.array([""] * 4))
    assert list(residue_classes(table)) == ["protein", "ligand", "water", "ion"]


def _random_table(rng, n_res, classes):
    i, j = np.triu_indices(n_res)
    keep = rng.random(len(i)) < 0.4
    i, j = i[keep], j[keep]
    values = {t: rng.normal(0, 3, len(i)) for t in TERMS}
    return ResiduePairEnergies(n_res, i.astype(np.intp), j.astype(np.intp), values,
                               rng.uniform(1.5, 12.0, len(i))), np.array(classes, dtype=object)


@pytest.mark.parametrize("seed", range(5))
def test_blocks_sum_exactly_to_the_full_table(seed):
    rng = np.random.default_rng(seed)
    n_res = 40
    classes = rng.choice(["protein", "ligand", "water", "water", "ion"], n_res)
    rp, classes = _random_table(rng, n_res, classes)
    labels = [f"R{k}" for k in range(n_res)]
    b = block_residue_pairs(rp, classes, labels)
    assert has_solvent(classes)
    for t in (*TERMS, "total"):
        assert b.pairs.column(t).sum() == pytest.approx(rp.column(t).sum(), rel=1e-12, abs=1e-9)
    solvent = {"water": np.flatnonzero(classes == "water"), "ion": np.flatnonzero(classes == "ion")}
    full = rp.dense("total")
    upper = np.triu(full)
    w = solvent["water"]
    # block diagonal: every water-water entry (i <= j), brute force over the dense upper triangle
    wrow = b.residue_to_row[w[0]]
    assert b.pairs.column("total")[b.pairs.lookup(wrow, wrow)] == pytest.approx(upper[np.ix_(w, w)].sum(), abs=1e-9)
    solute = np.flatnonzero(~np.isin(classes, ["water", "ion"]))
    r = solute[0]
    k = b.pairs.lookup(b.residue_to_row[r], wrow)
    expected = full[r, w].sum()
    got = 0.0 if k is None else b.pairs.column("total")[k]
    assert got == pytest.approx(expected, abs=1e-9)
    assert list(b.labels[: len(solute)]) == [labels[s] for s in solute]
    assert b.labels[len(solute)] == f"Water ({len(w)})"
    assert np.allclose(b.pairs.per_residue("total").sum(), rp.per_residue("total").sum())


def test_scan_of_a_solvated_box_lists_solvent_as_blocks(tmp_path):
    """`tessera scan` on a protein in TIP3P water with ions (built from OpenMM's bundled
    test.pdb: its protein, waters and ions as shipped, 12 A cutoff, reaction field): the JSON and
    CSV hold solute pairs plus the water and ion blocks, and the blocks' entries plus the solute
    pairs sum to the same totals as --every-residue's full listing."""
    import csv
    import json

    from app.cli.main import main
    pdb = os.path.join(os.path.dirname(openmm.app.__file__), "data", "test.pdb")
    blocked_json, full_json = tmp_path / "b.json", tmp_path / "f.json"
    common = [pdb, "--cutoff", "9", "--electrostatics", "reaction-field", "--quiet"]
    assert main(["scan", *common, "--json", str(blocked_json), "--csv-dir", str(tmp_path / "csv")]) == 0
    assert main(["scan", *common, "--json", str(full_json), "--every-residue"]) == 0
    b, f = json.loads(blocked_json.read_text()), json.loads(full_json.read_text())
    names = {blk["name"]: blk for blk in b["blocks"]}
    assert "water" in names and names["water"]["label"].startswith("Water (")
    classes = [r["class"] for r in f["residues"]]
    assert names["water"]["n_residues"] == classes.count("water")
    for t in ("coulomb", "lj", "total"):
        listed = sum(p[t] for p in b["pairs"]) + sum(p[t] for p in b["block_pairs"])
        assert listed == pytest.approx(sum(p[t] for p in f["pairs"]), rel=1e-9, abs=1e-6)
        assert listed == pytest.approx(f["totals"][t], rel=1e-9, abs=1e-6)
    solvent = {k for k, c in enumerate(classes) if c in ("water", "ion")}
    assert all(p["i"] not in solvent and p["j"] not in solvent for p in b["pairs"])
    with open(tmp_path / "csv" / "residue_pairs.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert any(r["label_j"].startswith("Water (") and r["j"] == "" for r in rows)
    with open(tmp_path / "csv" / "residues.csv") as fh:
        residue_rows = list(csv.DictReader(fh))
    solute_count = len(classes) - len(solvent)
    assert len(residue_rows) == solute_count + len(b["blocks"])  # solute residues, then one row per block
    assert [r["resname"] for r in residue_rows[solute_count:]] == [blk["label"] for blk in b["blocks"]]
    for t in ("coulomb", "lj", "total"):  # per-row halves of the pairs sum to the totals (6-decimal rounding)
        assert sum(float(r[t]) for r in residue_rows) == pytest.approx(f["totals"][t], abs=1e-6 * len(residue_rows))
