"""Pair statistics over frames against numpy's mean and std (population, ddof = 0) of the dense
per-frame tables, a pair without an entry in a frame counting as 0 (docs/trajectories.md)."""
from __future__ import annotations

import numpy as np
import pytest

from energy.analysis.pair_statistics import COLUMNS, PairStatistics
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.terms.registry import TERMS

N_RES = 30


def _frames(rng, n_frames):
    """Per-frame sparse tables over a random subset of pairs; one pair (3, 4) is always there,
    at -1e4 kcal/mol +- 1e-3 (a large mean with a tiny spread, where plain sums lose digits)."""
    all_keys = np.array([i * N_RES + j for i in range(N_RES) for j in range(i, N_RES)])
    out = []
    for _ in range(n_frames):
        keys = np.union1d(rng.choice(all_keys, 120, replace=False), [3 * N_RES + 4])
        values = {t: rng.normal(0.0, 2.0, len(keys)) for t in TERMS}
        k = int(np.searchsorted(keys, 3 * N_RES + 4))
        values["coulomb"][k] = -1e4 + rng.normal(0.0, 1e-3)
        i, j = keys // N_RES, keys % N_RES
        out.append(ResiduePairEnergies(N_RES, i.astype(np.intp), j.astype(np.intp), values,
                                       rng.uniform(2.0, 9.0, len(keys))))
    return out


def _dense(frames):
    """(n_frames, n_res * n_res, len(COLUMNS)) with zeros where a frame has no entry."""
    table = np.zeros((len(frames), N_RES * N_RES, len(COLUMNS)))
    for f, rp in enumerate(frames):
        keys = rp.pair_i * N_RES + rp.pair_j
        for c, t in enumerate(TERMS):
            table[f, keys, c] = rp.values[t]
        table[f, keys, -1] = rp.total
    return table


def test_mean_std_persistence_match_numpy_and_merging_equals_adding():
    rng = np.random.default_rng(3)
    frames = _frames(rng, 11)
    whole = PairStatistics(N_RES, threshold=-1.0)
    for f, rp in enumerate(frames):
        whole.add(f, rp)
    # the same frames in three chunks, merged in order (as the trajectory code does)
    merged = PairStatistics(N_RES, threshold=-1.0)
    for chunk in (range(0, 4), range(4, 8), range(8, 11)):
        part = PairStatistics(N_RES, threshold=-1.0)
        for f in chunk:
            part.add(f, frames[f])
        merged.merge(part)
    dense = _dense(frames)
    keys = whole.keys
    assert np.array_equal(keys, np.unique(np.concatenate([rp.pair_i * N_RES + rp.pair_j for rp in frames])))
    ref_mean = dense[:, keys].mean(axis=0)              # numpy reference
    ref_std = dense[:, keys].std(axis=0)
    for stats in (whole, merged):
        assert stats.n == 11 and np.array_equal(stats.keys, keys)
        np.testing.assert_allclose(stats.mean, ref_mean, rtol=1e-12, atol=1e-12)
        np.testing.assert_allclose(stats.std(), ref_std, rtol=1e-9, atol=1e-11)
        below = (dense[:, keys, -1] < -1.0).mean(axis=0)   # absent frames count as 0, not below
        np.testing.assert_allclose(stats.persistence(), below, rtol=0, atol=1e-15)
    k = whole.lookup(3, 4)
    c = COLUMNS.index("coulomb")
    # the large-mean pair: spread of 1e-3 on a mean of -1e4 kept to 1e-6 relative or better
    assert whole.std()[k, c] == pytest.approx(ref_std[k, c], rel=1e-6)
    assert ref_std[k, c] < 2e-3
