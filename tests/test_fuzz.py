"""Seeded mutation fuzzing of every reader and the pipeline, with a fixed budget (issue 14).

``tests/fuzzing.py`` describes the base inputs (the invented probe peptide as PSF + parameters +
PDB / CRD / DCD, as a PDB, a two-model PDB and an mmCIF for the built-in route), the mutations
and the property.  ``make fuzz`` (``scripts/fuzz.py``) runs the long campaign (10,000 cases); this
test runs :data:`BUDGET` cases of a fixed seed (never timed here: the campaign reports times).
"""
import collections

import pytest
from fuzzing import Case, Fuzzer, describe, judge_message, judge_totals

from energy.errors import MESSAGE_CAP

BUDGET = 200
SEED = 14


@pytest.fixture(scope="module")
def fuzzer(tmp_path_factory):
    return Fuzzer(tmp_path_factory.mktemp("fuzz"))


def test_damaged_inputs_give_equal_finite_totals_or_one_line_energy_errors(fuzzer):
    outcomes = [fuzzer.run(SEED, k) for k in range(BUDGET)]
    failures = [describe(o) for o in outcomes if o.failed]
    assert not failures, "\n".join(failures)
    # the budget exercises what it claims: every mutation, both outcomes, strict cases that
    # still parse (compared with the undamaged totals) and the command line
    kinds = collections.Counter(o.case.mutation for o in outcomes)
    assert len(kinds) >= 12, kinds
    status = collections.Counter(o.status for o in outcomes)
    assert status["error"] > BUDGET // 2 and status["ok"] > 10, status
    assert any(o.status == "ok" and o.case.strict for o in outcomes)
    assert any(o.case.via_cli for o in outcomes)
    assert len({o.case.base for o in outcomes}) == len(fuzzer.bases)


def test_reference_totals_are_those_of_the_undamaged_files(fuzzer):
    from fuzzing import PEPTIDE

    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    loaded = load_system(str(PEPTIDE / "probe_peptide.psf"), str(PEPTIDE / "probe_peptide.pdb"),
                         [str(PEPTIDE / "probe_ff.prm")])
    totals = compute(loaded.system, loaded.frame).totals
    assert fuzzer.reference["psf+pdb", 0] == {k: float(v) for k, v in totals.items()}


def _case(strict=True):
    return Case(0, "psf+pdb", 0, "structure", "truncate", "test", strict, False)


def test_the_judge_can_fail():
    """The property is not vacuous: each kind of failure is recognised."""
    ref = {"bond": 1.0, "total": 2.0}
    assert judge_totals(_case(), {"bond": 1.0, "total": 2.0 + 1e-9}, ref).status == "ok"
    assert judge_totals(_case(), {"bond": 1.5, "total": 2.5}, ref).status == "silent change"
    assert judge_totals(_case(strict=False), {"bond": 1.5, "total": 2.5}, ref).status == "ok"
    assert judge_totals(_case(strict=False), {"bond": float("nan"), "total": 2.0}, ref).status == "non-finite"
    assert judge_message(_case(), "two\nlines").status == "multi-line message"
    assert judge_message(_case(), "x" * (MESSAGE_CAP + 1)).status == "message over cap"
    assert judge_message(_case(), "f.psf:3: bad").status == "error"
