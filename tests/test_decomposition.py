"""Residue-pair decomposition checked against an independent brute-force double loop, plus the
bookkeeping identities (every matrix sums to its term's total; per-residue totals too)."""
from __future__ import annotations

import itertools

import numpy as np
import pytest
from tiny import random_system

from energy.decomposition.atom_pairs import atom_pair_energies, interaction_energy
from energy.decomposition.pipeline import compute
from energy.decomposition.residue_pairs import split_over_residue_pairs
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.terms.registry import TERMS
from energy.units import COULOMB_CONSTANT


def brute_force_residue_matrix(system, frame, cutoff=None, box=None):
    """Plain Python double loop over atom pairs, written independently of the engine:
    LJ eps_ij[(Rmin_ij/r)^12 - 2(Rmin_ij/r)^6], Coulomb k q_i q_j / r, exceptions with their own
    parameters (no cutoff; intramolecular pairs, so taken as the coordinates give them, never
    as a minimum image: OpenMM NonbondedForce's default, docs/physics.md), optional cutoff and
    orthorhombic minimum image for ordinary pairs."""
    n_res = system.n_residues
    coul = np.zeros((n_res, n_res))
    lj = np.zeros((n_res, n_res))
    x = frame.positions
    exc = {(int(i), int(j)): k for k, (i, j) in enumerate(system.exception_pairs)}
    for a, b in itertools.combinations(range(system.n_atoms), 2):
        d = x[b] - x[a]
        if box is not None and (a, b) not in exc:
            d = d - box * np.round(d / box)
        r = float(np.sqrt(d @ d))
        if (a, b) in exc:
            k = exc[(a, b)]
            qq, rmin, eps = system.exception_qq[k], system.exception_rmin[k], system.exception_eps[k]
        else:
            if cutoff is not None and r >= cutoff:
                continue
            qq = system.charges[a] * system.charges[b]
            rmin = system.lj_rmin[system.lj_type[a], system.lj_type[b]]
            eps = system.lj_eps[system.lj_type[a], system.lj_type[b]]
        i, j = sorted((system.resindex[a], system.resindex[b]))
        coul[i, j] += COULOMB_CONSTANT * qq / r
        lj[i, j] += eps * ((rmin / r) ** 12 - 2 * (rmin / r) ** 6)
    return coul, lj


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_residue_pairs_match_brute_force_no_cutoff(seed):
    system, frame = random_system(np.random.default_rng(seed), n_residues=7)
    result = compute(system, frame)
    coul, lj = brute_force_residue_matrix(system, frame)
    np.testing.assert_allclose(np.triu(result.residue_pairs.dense("coulomb")), coul, rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(np.triu(result.residue_pairs.dense("lj")), lj, rtol=1e-10, atol=1e-10)


@pytest.mark.parametrize("seed", [4, 5])
def test_residue_pairs_match_brute_force_periodic_cutoff(seed):
    system, frame = random_system(np.random.default_rng(seed), n_residues=8, box=24.0)
    box = np.array([24.0, 24.0, 24.0])
    frame = Frame(frame.positions, np.array([24.0, 24.0, 24.0, 90.0, 90.0, 90.0]))
    settings = EnergySettings(cutoff_angstrom=9.0)
    result = compute(system, frame, settings)
    coul, lj = brute_force_residue_matrix(system, frame, cutoff=9.0, box=box)
    np.testing.assert_allclose(np.triu(result.residue_pairs.dense("coulomb")), coul, rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(np.triu(result.residue_pairs.dense("lj")), lj, rtol=1e-10, atol=1e-10)


def test_every_matrix_sums_to_its_term_total_on_a_real_protein(adk_result):
    result = adk_result
    rp = result.residue_pairs
    for term in TERMS:
        assert rp.values[term].sum() == pytest.approx(result.totals[term], rel=1e-10, abs=1e-8), term
        assert rp.per_residue(term).sum() == pytest.approx(result.totals[term], rel=1e-10, abs=1e-8), term
    m = rp.matrix("total")
    assert abs(m - m.T).max() == 0.0


def test_peptide_dihedral_goes_to_the_neighbour_pair_and_cmap_is_split_in_thirds():
    resindex = np.array([0, 0, 1, 1, 2, 2])
    # a dihedral over residues (0, 0, 1, 1) and a cross-term over residues 0, 1, 2.
    atoms = np.array([[0, 1, 2, 3, 0, 0, 0, 0], [0, 1, 2, 3, 2, 3, 4, 5]])
    pi, pj, v = split_over_residue_pairs(atoms[:1, :4], np.array([3.0]), resindex)
    assert list(zip(pi, pj, v)) == [(0, 1, 3.0)]
    pi, pj, v = split_over_residue_pairs(atoms[1:], np.array([3.0]), resindex)
    assert sorted(zip(pi.tolist(), pj.tolist(), v.tolist())) == [(0, 1, 1.0), (0, 2, 1.0), (1, 2, 1.0)]
    pi, pj, v = split_over_residue_pairs(np.array([[0, 1]]), np.array([2.0]), resindex)
    assert list(zip(pi, pj, v)) == [(0, 0, 2.0)]


def test_atom_pairs_add_up_to_the_residue_pair_entry():
    system, frame = random_system(np.random.default_rng(7), n_residues=6)
    result = compute(system, frame)
    rp = result.residue_pairs
    for i, j in [(0, 0), (0, 3), (2, 5)]:
        a = np.flatnonzero(system.resindex == i)
        b = None if i == j else np.flatnonzero(system.resindex == j)
        e = atom_pair_energies(system, frame, None, a, b)
        k = rp.lookup(i, j)
        assert e.coulomb.sum() == pytest.approx(rp.values["coulomb"][k], rel=1e-10, abs=1e-12)
        assert e.lj.sum() == pytest.approx(rp.values["lj"][k], rel=1e-10, abs=1e-12)


def test_interaction_between_chains_equals_the_sum_of_inter_chain_entries():
    system, frame = random_system(np.random.default_rng(8), n_residues=8)
    result = compute(system, frame)
    rp = result.residue_pairs
    chain = system.residues.chain
    inter = chain[rp.pair_i] != chain[rp.pair_j]
    a = np.flatnonzero(chain[system.resindex] == "A")
    b = np.flatnonzero(chain[system.resindex] == "B")
    e = interaction_energy(system, frame, None, a, b)
    assert e["total"] == pytest.approx(rp.column("nonbonded")[inter].sum(), rel=1e-10)


@pytest.fixture(scope="module")
def adk_result():
    from data import ADK_OPEN_PDB

    from energy.io.builtin import load_builtin
    system, frame, _, _ = load_builtin(ADK_OPEN_PDB)
    # adk_open.pdb carries a triclinic (rhombic dodecahedral) cell: minimum image in it.
    result = compute(system, frame, EnergySettings(cutoff_angstrom=10.0))
    assert result.periodic
    return result
