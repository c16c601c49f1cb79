"""Property-based checks (hypothesis) of the pure maths: invariances and bookkeeping."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation
from tiny import random_system

from energy.decomposition.pipeline import compute
from energy.decomposition.residue_pairs import split_over_residue_pairs
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.terms.registry import TERMS

seeds = st.integers(min_value=0, max_value=2**31 - 1)


@settings(max_examples=25, deadline=None)
@given(seed=seeds, use_cutoff=st.booleans())
def test_energies_do_not_change_under_rigid_motion(seed, use_cutoff):
    # A rigid rotation + translation leaves every interatomic distance, hence every energy, unchanged.
    rng = np.random.default_rng(seed)
    system, frame = random_system(rng, n_residues=5)
    rot = Rotation.random(random_state=seed).as_matrix()
    moved = Frame(frame.positions @ rot.T + rng.uniform(-50, 50, 3))
    s = EnergySettings(cutoff_angstrom=8.0) if use_cutoff else EnergySettings()
    a, b = compute(system, frame, s), compute(system, moved, s)
    for term in (*TERMS, "total"):
        assert b.totals[term] == pytest.approx(a.totals[term], rel=1e-9, abs=1e-9)
    np.testing.assert_allclose(b.residue_pairs.dense(), a.residue_pairs.dense(), rtol=1e-8, atol=1e-9)


@settings(max_examples=25, deadline=None)
@given(seed=seeds)
def test_residue_matrix_is_symmetric_and_sums_to_the_totals(seed):
    system, frame = random_system(np.random.default_rng(seed), n_residues=6)
    result = compute(system, frame)
    rp = result.residue_pairs
    assert np.all(rp.pair_i <= rp.pair_j)
    dense = rp.dense()
    np.testing.assert_array_equal(dense, dense.T)
    for term in TERMS:
        assert rp.values[term].sum() == pytest.approx(result.totals[term], rel=1e-10, abs=1e-10)
    assert rp.per_residue().sum() == pytest.approx(result.totals["total"], rel=1e-10, abs=1e-10)


@settings(max_examples=50, deadline=None)
@given(n_res=st.integers(1, 6), width=st.integers(2, 8), rows=st.integers(1, 20), seed=seeds)
def test_bonded_split_conserves_energy(n_res, width, rows, seed):
    rng = np.random.default_rng(seed)
    resindex = rng.integers(0, n_res, 40)
    atoms = rng.integers(0, 40, (rows, width))
    energies = rng.normal(0, 10, rows)
    pi, pj, v = split_over_residue_pairs(atoms, energies, resindex)
    assert np.all(pi <= pj)
    assert v.sum() == pytest.approx(energies.sum(), rel=1e-10, abs=1e-10)
