"""The term registry is the one source of term names: a toy term registered here (tests/toy_term.py)
reaches the pipeline's totals, the residue-pair decomposition, the scan JSON and both CSV tables
with no other change.  Reference: the restraint energy by hand, k (r - r0)^2 with the distance
from math.dist (Hooke's law; the engine's bond convention without 1/2, docs/physics.md)."""
from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest
from tiny import make_system
from toy_term import NAME, restraint_table, toy_term_registered

from energy.decomposition.pipeline import compute
from energy.io.loaders import LoadedSystem
from energy.model.system import Frame
from energy.output import report
from energy.terms import registry
from energy.terms.registry import BONDED_TERMS, TERMS

POSITIONS = np.array([[0.0, 0.0, 0.0], [1.7, 0.2, 0.0], [4.0, 0.0, 0.5], [6.5, 1.0, 0.0]])
RESTRAINTS = dict(pairs=[(0, 2), (1, 3)], k=[10.0, 4.0], r0=[3.0, 4.5])


def _by_hand():
    e = []
    for (i, j), k, r0 in zip(RESTRAINTS["pairs"], RESTRAINTS["k"], RESTRAINTS["r0"]):
        e.append(k * (math.dist(POSITIONS[i], POSITIONS[j]) - r0) ** 2)
    return e


@pytest.fixture
def toy_result():
    with toy_term_registered():
        base = make_system([0.2, -0.2, 0.1, -0.1], [1.8] * 4, [0.1] * 4, [0, 0, 1, 2])
        system = type(base)(**{**{f: getattr(base, f) for f in base.__dataclass_fields__},
                               "other_tables": {"restraints": restraint_table(**RESTRAINTS)}})
        frame = Frame(POSITIONS)
        result = compute(system, frame)
        yield system, frame, result


def test_registered_term_is_listed_after_the_bonded_terms_and_removed_again():
    assert NAME not in TERMS
    with toy_term_registered():
        assert TERMS[:7] == ("bond", "urey_bradley", "angle", "dihedral", "improper", "cmap", NAME)
        assert NAME in BONDED_TERMS and TERMS[-4:] == ("coulomb", "lj", "solvation_polar", "solvation_nonpolar")
        assert registry.short_label(NAME) == "restr"
        assert "restraint" in registry.map_quantities()
        with pytest.raises(ValueError, match="already registered"):
            registry.register(registry.term(NAME))
    assert NAME not in TERMS and len(TERMS) == 10


def test_toy_term_in_totals_and_residue_pairs(toy_result):
    system, frame, result = toy_result
    e = _by_hand()
    assert result.totals[NAME] == pytest.approx(sum(e), rel=1e-12)
    assert result.totals["total"] == pytest.approx(sum(result.totals[t] for t in TERMS), rel=1e-12)
    rp = result.residue_pairs
    # restraint (0, 2): residues 0 and 1; restraint (1, 3): residues 0 and 2 (attribution rule)
    assert rp.values[NAME][rp.lookup(0, 1)] == pytest.approx(e[0], rel=1e-12)
    assert rp.values[NAME][rp.lookup(0, 2)] == pytest.approx(e[1], rel=1e-12)
    assert rp.column("bonded").sum() == pytest.approx(sum(e), rel=1e-12)


def test_toy_term_in_scan_json_and_csv(toy_result, tmp_path):
    system, frame, result = toy_result          # the toy term is registered while this runs
    loaded = LoadedSystem(system, frame)
    path = tmp_path / "scan.json"
    report.write_scan_json(path, report.scan_document(loaded, result), result)
    doc = json.loads(path.read_text())
    assert doc["totals"][NAME] == pytest.approx(sum(_by_hand()), rel=1e-12)
    pair = next(p for p in doc["pairs"] if (p["i"], p["j"]) == (0, 1))
    assert pair[NAME] == pytest.approx(_by_hand()[0], rel=1e-12)
    rows = list(csv.DictReader(io.StringIO(report.pair_table_csv(system, result))))
    assert float(next(r for r in rows if (r["i"], r["j"]) == ("0", "2"))[NAME]) == \
        pytest.approx(_by_hand()[1], abs=1e-6)
    per_residue = list(csv.DictReader(io.StringIO(report.residue_table_csv(system, result))))
    assert sum(float(r[NAME]) for r in per_residue) == pytest.approx(sum(_by_hand()), abs=1e-5)
