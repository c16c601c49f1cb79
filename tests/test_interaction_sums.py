"""The A-vs-B interaction summed without an atom-pair list (issue 16): memory independent of
the number of atom pairs, the same sums as the listed pairs, each pair counted once when the
two selections overlap.

System: OpenMM's bundled ``test.pdb`` (8,867 atoms: a protein in TIP3P water), Amber 14 + TIP3P
through the built-in route, all pairs (no cutoff).  The residue-pair table it is checked against
is validated against OpenMM per term elsewhere (tests/test_openmm_reference.py).
"""
from __future__ import annotations

import tracemalloc
from pathlib import Path

import numpy as np
import openmm
import pytest

from energy.decomposition.atom_pairs import atom_pair_energies, interaction_energy
from energy.decomposition.pipeline import compute
from energy.io.loaders import load_system
from energy.model.settings import EnergySettings

PATH = Path(openmm.__file__).parent / "app" / "data" / "test.pdb"


@pytest.fixture(scope="module")
def loaded():
    return load_system(str(PATH))


def _peak(fn):
    tracemalloc.start()
    try:
        fn()
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def test_memory_does_not_grow_with_the_number_of_atom_pairs(loaded):
    s, f = loaded.system, loaded.frame
    small_a, small_b = np.arange(0, 1000), np.arange(1000, 2000)        # 1.0M atom pairs
    big_a, big_b = np.arange(0, 4400), np.arange(4400, 8867)           # 19.7M atom pairs
    interaction_energy(s, f, None, small_a, small_b)                    # warm caches
    small = _peak(lambda: interaction_energy(s, f, None, small_a, small_b))
    big = _peak(lambda: interaction_energy(s, f, None, big_a, big_b))
    listed = 19.65e6 * (2 * 8 + 3 * 8 + 1)     # what a list of those pairs would take, bytes
    assert big < 2.5 * small + 50e6, f"peak {big / 1e6:.0f} MB at 19.7M pairs vs {small / 1e6:.0f} MB at 1M"
    assert big < listed / 4


def test_sums_equal_the_listed_pairs_and_the_residue_table(loaded):
    s, f = loaded.system, loaded.frame
    protein = np.flatnonzero(s.residue_classes[s.resindex] == "protein")
    water = np.flatnonzero(s.residue_classes[s.resindex] == "water")
    e = interaction_energy(s, f, None, protein, water)
    listed = atom_pair_energies(s, f, None, protein, water)
    assert e["n_pairs"] == len(listed) == len(protein) * len(water)
    assert e["coulomb"] == pytest.approx(listed.coulomb.sum(), rel=1e-11)
    assert e["lj"] == pytest.approx(listed.lj.sum(), rel=1e-11)
    rp = compute(s, f, EnergySettings()).residue_pairs
    cls = s.residue_classes
    cross = ((cls[rp.pair_i] == "protein") & (cls[rp.pair_j] == "water")) | \
            ((cls[rp.pair_i] == "water") & (cls[rp.pair_j] == "protein"))
    assert e["total"] == pytest.approx(rp.column("nonbonded")[cross].sum(), rel=1e-9)


def test_overlapping_selections_count_each_pair_once(loaded):
    s, f = loaded.system, loaded.frame
    a, b = np.arange(0, 700), np.arange(400, 1100)           # 300 atoms in both
    e = interaction_energy(s, f, None, a, b)
    listed = atom_pair_energies(s, f, None, a, b)
    # unordered pairs: A' x B (A' = A minus B) plus the pairs within the overlap, exceptions
    # (1-2, 1-3 pairs have none) apart
    assert e["n_pairs"] == len(listed)
    assert e["coulomb"] == pytest.approx(listed.coulomb.sum(), rel=1e-11)
    assert e["lj"] == pytest.approx(listed.lj.sum(), rel=1e-11)


def test_with_a_periodic_cutoff(loaded):
    s, f = loaded.system, loaded.frame
    settings = EnergySettings(cutoff_angstrom=10.0, electrostatics="reaction-field")
    a, b = np.arange(0, 600), np.arange(300, 8867)
    e = interaction_energy(s, f, settings, a, b)
    listed = atom_pair_energies(s, f, settings, a, b)
    assert e["n_pairs"] == len(listed)
    assert e["total"] == pytest.approx(listed.coulomb.sum() + listed.lj.sum(), rel=1e-11)
