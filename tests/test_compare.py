"""energy.analysis.compare and `tessera compare`: residue matching, second-minus-first tables, CLI files."""
import csv
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from energy.analysis.compare import compare_results, match_residues
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.model.system import ResidueTable
from energy.output.comparison import difference_rows
from energy.terms.registry import TERMS

ROOT = Path(__file__).resolve().parents[1]
CLASH = ROOT / "samples" / "scenario" / "complex_clash.pdb"
FIXED = ROOT / "samples" / "scenario" / "complex_fixed.pdb"


def residues(spec):
    """ResidueTable from (chain, resid, name) triples."""
    chain, resid, name = zip(*spec)
    return ResidueTable(list(chain), list(resid), list(name), [""] * len(spec))


def test_match_by_chain_and_number_with_mutation_and_gaps():
    a = residues([("A", 1, "ALA"), ("A", 2, "TRP"), ("A", 3, "GLY"), ("B", 1, "LYS")])
    b = residues([("A", 2, "PHE"), ("A", 1, "ALA"), ("B", 1, "LYS"), ("B", 2, "GLU")])
    m = match_residues(a, b)
    assert m.first.tolist() == [0, 1, 3] and m.second.tolist() == [1, 0, 2]
    assert m.mutated.tolist() == [False, True, False]
    assert m.unmatched_first.tolist() == [2] and m.unmatched_second.tolist() == [3]


class _Result:
    def __init__(self, rp, totals):
        self.residue_pairs, self.totals = rp, totals


class _System:
    def __init__(self, res):
        self.residues = res


def _rp(n, entries):
    """ResiduePairEnergies with only the coulomb term set: entries {(i, j): value}."""
    keys = sorted(entries)
    vals = {t: np.zeros(len(keys)) for t in TERMS}
    vals["coulomb"] = np.array([entries[k] for k in keys], float)
    return ResiduePairEnergies(n, np.array([k[0] for k in keys]), np.array([k[1] for k in keys]), vals,
                               np.full(len(keys), 4.0))


def test_difference_is_second_minus_first_over_matched_residues():
    a = residues([("A", 1, "ALA"), ("A", 2, "TRP"), ("A", 3, "GLY")])
    b = residues([("A", 2, "PHE"), ("A", 1, "ALA"), ("A", 4, "SER")])
    totals = dict.fromkeys((*TERMS, "total"), 0.0)
    ra = _Result(_rp(3, {(0, 1): -2.0, (1, 2): 5.0, (0, 0): 1.0}), totals)
    # in b, index 0 is A:2 and index 1 is A:1, so (0, 1) is again the pair A:1-A:2
    rb = _Result(_rp(3, {(0, 1): -3.5, (1, 2): 7.0}), {**totals, "total": 2.0})
    c = compare_results(_System(a), ra, _System(b), rb)
    assert c.labels == ["A:ALA1", "A:TRP>PHE2"]
    assert c.unmatched_first_labels == ["A:GLY3"] and c.unmatched_second_labels == ["A:SER4"]
    d = c.difference.dense("coulomb")
    assert d[0, 1] == pytest.approx(-1.5) and d[1, 0] == pytest.approx(-1.5)
    assert d[0, 0] == pytest.approx(-1.0)
    rows = difference_rows(c)
    assert [abs(r["change_total"]) for r in rows] == sorted((abs(r["change_total"]) for r in rows), reverse=True)
    assert c.totals_difference()["total"] == 2.0


@pytest.fixture(scope="module")
def scenario_results():
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    out = []
    for path in (CLASH, FIXED):
        loaded = load_system(str(path))
        out.append((loaded.system, compute(loaded.system, loaded.frame)))
    return out


def test_scenario_fix_removes_the_clash(scenario_results):
    (s1, r1), (s2, r2) = scenario_results
    c = compare_results(s1, r1, s2, r2)
    assert len(c.match) == s1.n_residues and not c.unmatched_first_labels and not c.unmatched_second_labels
    rows = difference_rows(c)
    top = rows[0]
    assert "TRP" in top["label_i"] + top["label_j"]
    assert top["change_total"] < -100       # the clash (> +100 kcal/mol) is gone in the fixed model
    assert top["first_total"] > 100
    np.testing.assert_allclose(c.difference.dense("total"),
                               r2.residue_pairs.dense("total") - r1.residue_pairs.dense("total"), atol=1e-9)


def test_compare_command_writes_json_and_csv(tmp_path):
    out = tmp_path / "cmp.json"
    proc = subprocess.run([sys.executable, "-m", "app.cli.main", "compare", str(CLASH), str(FIXED),
                           "--json", str(out), "--csv-dir", str(tmp_path / "csv"), "--top", "3"],
                          capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "second minus first" in proc.stdout and "TRP" in proc.stdout
    doc = json.loads(out.read_text())
    assert doc["n_matched_residues"] == 108 and doc["unmatched_first"] == []
    with open(tmp_path / "csv" / "pair_changes.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == len(doc["pairs"])
    for r, p in zip(rows[:50], doc["pairs"][:50]):
        assert float(r["change_total"]) == pytest.approx(p["change_total"], abs=1e-6)
        assert float(r["change_total"]) == pytest.approx(float(r["second_total"]) - float(r["first_total"]), abs=1e-5)
    assert (tmp_path / "csv" / "residue_changes.csv").exists()


def test_compare_command_reports_a_bad_file_in_one_line(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "app.cli.main", "compare", str(CLASH), str(tmp_path / "none.pdb")],
                          capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "file not found" in proc.stderr
