"""The nonbonded kernel's two paths agree: the SIMD block path (partners gathered into one block)
and the atom-pair-by-atom-pair path, on random invented systems, with and without a periodic cell,
for every electrostatics mode and with switching.  The external checks of the same sums are the
OpenMM comparisons (tests/test_builtin_vs_openmm.py) and the brute-force image sums
(tests/test_periodic.py); this file pins the optimised path to the plain one."""
from __future__ import annotations

import numpy as np
import pytest
from tiny import random_system

from energy.decomposition import pipeline
from energy.decomposition.pipeline import compute
from energy.model.settings import EnergySettings
from energy.model.system import Frame

SETTINGS = {
    "no cutoff": EnergySettings(),
    "cutoff 9 plain": EnergySettings(cutoff_angstrom=9.0),
    "reaction field + switch": EnergySettings(cutoff_angstrom=9.0, switch_angstrom=7.0,
                                              electrostatics="reaction-field"),
    "distance-dependent": EnergySettings(cutoff_angstrom=9.0, electrostatics="distance-dependent"),
    "shifted": EnergySettings(cutoff_angstrom=9.0, electrostatics="shifted"),
}


# Periodic images need a cutoff (minimum image within r_c, common practice), so no "no cutoff" there.
CASES = [(name, False) for name in sorted(SETTINGS)] + \
        [(name, True) for name in sorted(SETTINGS) if SETTINGS[name].cutoff_angstrom is not None]


@pytest.mark.parametrize("name,periodic", CASES)
def test_simd_path_matches_atom_pair_path(name, periodic, monkeypatch):
    system, frame = random_system(np.random.default_rng(31), n_residues=40,
                                  atoms_per_residue=(1, 9), box=26.0, n_exceptions=25)
    if periodic:
        frame = Frame(frame.positions, np.array([27.0, 27.0, 27.0, 90.0, 90.0, 90.0]))
    settings = SETTINGS[name]
    fast = compute(system, frame, settings)
    monkeypatch.setattr(pipeline, "VECTORISED_KERNEL", False)
    plain = compute(system, frame, settings)
    for term in ("coulomb", "lj"):
        assert fast.totals[term] == pytest.approx(plain.totals[term], rel=1e-12, abs=1e-10)
        np.testing.assert_allclose(fast.residue_pairs.values[term], plain.residue_pairs.values[term],
                                   rtol=1e-11, atol=1e-10)
    np.testing.assert_array_equal(fast.residue_pairs.pair_i, plain.residue_pairs.pair_i)
    np.testing.assert_allclose(fast.residue_pairs.min_heavy_distance,
                               plain.residue_pairs.min_heavy_distance, rtol=1e-14)
    assert fast.n_atom_pairs == plain.n_atom_pairs


def test_all_pairs_in_blocks_keeps_totals_and_lists_every_large_pair(monkeypatch):
    # Block mode (no cutoff, large system) made to trigger on a small invented system.
    from energy._kernels import residue_rows
    from energy.errors import SettingsError
    system, frame = random_system(np.random.default_rng(7), n_residues=60, atoms_per_residue=(1, 6),
                                  box=40.0, n_exceptions=30)  # residues < 50 A wide: energy.io.validation
    listed = compute(system, frame, EnergySettings())
    monkeypatch.setattr(residue_rows, "ALL_PAIRS_LISTED_LIMIT", 10)
    monkeypatch.setattr(residue_rows, "BLOCK_PAIRS", 97)      # many blocks, rows split unevenly
    monkeypatch.setattr(residue_rows, "UNLISTED_BELOW", 0.05)
    blocked = compute(system, frame, EnergySettings())
    for term in ("coulomb", "lj", "total"):
        assert blocked.totals[term] == pytest.approx(listed.totals[term], rel=1e-12, abs=1e-10)
    assert blocked.n_atom_pairs == listed.n_atom_pairs
    a, b = listed.residue_pairs, blocked.residue_pairs
    key_a = a.pair_i.astype(np.int64) * a.n_residues + a.pair_j
    key_b = b.pair_i.astype(np.int64) * b.n_residues + b.pair_j
    assert np.all(np.diff(key_b) > 0)                          # still sorted CSR order
    kept = np.isin(key_a, key_b)
    nonbonded = np.abs(a.values["coulomb"]) + np.abs(a.values["lj"])
    # every pair at or above the threshold (and every diagonal entry) is listed ...
    assert np.all(kept[(nonbonded >= 0.05) | (a.pair_i == a.pair_j)])
    # ... with the same numbers, and what is left out adds up to the unlisted sums
    for term in ("coulomb", "lj"):
        np.testing.assert_allclose(b.values[term], a.values[term][kept], rtol=1e-12, atol=1e-12)
        assert blocked.unlisted[term] == pytest.approx(a.values[term][~kept].sum(), abs=1e-9)
    assert blocked.unlisted["n_pairs"] == int((~kept).sum()) > 0
    assert listed.unlisted is None

    monkeypatch.setattr(residue_rows, "MAX_LISTED_PAIRS", 100)
    with pytest.raises(SettingsError, match="set a cutoff"):
        compute(system, frame, EnergySettings())
