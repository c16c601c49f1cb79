"""Implicit solvent: analytic limits and the residue-pair table against an independent numpy loop.

Sources beside each check: Born 1920 (ion in a dielectric), Coulomb's law in a continuum and the
Debye-Hueckel screened potential (Debye & Hueckel 1923), OpenMM 8.6 for the independent
implementation's total.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from data import ADK_OPEN_PDB
from test_solvation_vs_openmm import _builtin_reference
from tiny import make_system

from energy.decomposition.pipeline import compute
from energy.errors import SettingsError
from energy.io.builtin import load_builtin
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.units import COULOMB_CONSTANT as K

EPS_OUT = 78.5


def _ions(charges, positions, elements):
    n = len(charges)
    system = make_system(charges, np.ones(n), np.zeros(n), np.arange(n), elements=elements)
    return system, Frame(np.asarray(positions, float))


def test_lone_ion_is_the_born_energy():
    """Na+ (mbondi2 default radius 1.5 A) with a neutral carbon 500 A away: no descreening, so the
    OBC2 Born radius is the offset radius rho = 1.5 - 0.09 A (Onufriev, Bashford & Case 2004,
    psi = 0), and the polar solvation is Born's -(k/2)(1/eps_in - 1/eps_out) q^2 / R (Born 1920)."""
    system, frame = _ions([1.0, 0.0], [[0, 0, 0], [500.0, 0, 0]], ["Na", "C"])
    result = compute(system, frame, EnergySettings(implicit_solvent="obc2", nonpolar="none"))
    born = result.interactions["solvation"]["born_radius"][0]
    assert born == pytest.approx(1.41, rel=1e-9)
    expected = -0.5 * K * (1.0 - 1.0 / EPS_OUT) / born
    assert result.totals["solvation_polar"] == pytest.approx(expected, rel=1e-9)
    assert result.totals["solvation_nonpolar"] == 0.0


@pytest.mark.parametrize("salt", [0.0, 0.1])
def test_two_distant_ions_interact_as_in_the_continuum(salt):
    """+1 and -1 at 40 A: Coulomb plus the GB pair term (the pair's effective electrostatics)
    tends to k q1 q2 exp(-kappa r) / (eps_out r) (Coulomb's law in a dielectric; Debye-Hueckel
    1923 with salt)."""
    r = 40.0
    system, frame = _ions([1.0, -1.0], [[0, 0, 0], [r, 0, 0]], ["Na", "Cl"])
    settings = EnergySettings(implicit_solvent="obc2", salt_molar=salt)
    result = compute(system, frame, settings)
    pairs = result.residue_pairs
    k01 = np.flatnonzero((pairs.pair_i == 0) & (pairs.pair_j == 1))[0]
    effective = pairs.column("effective_electrostatics")[k01]
    expected = K * -1.0 * math.exp(-settings.kappa_per_angstrom * r) / (EPS_OUT * r)
    assert effective == pytest.approx(expected, rel=1e-6)
    assert abs(pairs.column("coulomb")[k01]) > 50 * abs(expected)  # the in-vacuo value is far larger


def test_debye_length_of_a_tenth_molar_salt():
    """1/kappa = 0.304 nm / sqrt(I / M) for a 1:1 salt in water at 25 C (textbook value, e.g.
    Israelachvili, Intermolecular and Surface Forces; quoted from memory): 9.61 A at 0.1 M."""
    settings = EnergySettings(implicit_solvent="obc2", salt_molar=0.1, solvent_dielectric=78.5)
    assert 1.0 / settings.kappa_per_angstrom == pytest.approx(3.04 / math.sqrt(0.1), rel=1.5e-3)


def test_implicit_solvent_refuses_other_electrostatics():
    with pytest.raises(SettingsError, match="implicit solvent"):
        EnergySettings(implicit_solvent="obc2", cutoff_angstrom=10.0, electrostatics="reaction-field")
    with pytest.raises(SettingsError, match="implicit solvent must be one of"):
        EnergySettings(implicit_solvent="hct")


# --- residue pairs against an independent numpy implementation -------------------------------

def _numpy_obc2(x, q, radius, screen, resindex, n_res, kappa, cutoff):
    """OBC2 written out again in numpy from the published formulas (HCT integral, Hawkins, Cramer
    & Truhlar 1996; OBC II tanh, Onufriev, Bashford & Case 2004; Still 1990 f_GB), atom by atom."""
    rho = radius - 0.09
    s = screen * rho
    n = len(q)
    rc2 = np.inf if cutoff is None else cutoff * cutoff
    born = np.empty(n)
    for i in range(n):
        d = np.sqrt(((x - x[i]) ** 2).sum(axis=1))
        ok = (np.arange(n) != i) & (d * d < rc2) & (d + s >= rho[i])
        r, sj = d[ok], s[ok]
        upper = r + sj
        lower = np.maximum(rho[i], np.abs(r - sj))
        inv_u2, inv_l2 = 1 / upper ** 2, 1 / lower ** 2
        integral = np.sum(0.5 * (1 / lower - 1 / upper + (r / 4) * (inv_u2 - inv_l2)
                                 + np.log(lower / upper) / (2 * r) + (sj ** 2 / (4 * r)) * (inv_l2 - inv_u2)))
        psi = integral * rho[i]
        born[i] = 1.0 / (1.0 / rho[i] - np.tanh(psi - 0.8 * psi ** 2 + 4.85 * psi ** 3) / radius[i])
    table = np.zeros((n_res, n_res))
    shift = 0.0 if cutoff is None else 1.0 / cutoff
    self_terms = -0.5 * K * (1.0 - np.exp(-kappa * born) / EPS_OUT) * q * q / born
    np.add.at(table, (resindex, resindex), self_terms)
    for a in range(n - 1):
        b = np.arange(a + 1, n)
        r2 = ((x[b] - x[a]) ** 2).sum(axis=1)
        keep = r2 < rc2
        b, r2 = b[keep], r2[keep]
        bb = born[a] * born[b]
        f = np.sqrt(r2 + bb * np.exp(-r2 / (4 * bb)))
        e = -K * (1.0 - np.exp(-kappa * f) / EPS_OUT) * q[a] * q[b] * (1.0 / f - shift)
        lo = np.minimum(resindex[a], resindex[b])
        hi = np.maximum(resindex[a], resindex[b])
        np.add.at(table, (lo, hi), e)
    return born, table


@pytest.fixture(scope="module")
def adk():
    system, frame, topology, _ = load_builtin(ADK_OPEN_PDB)
    return system, frame, topology


@pytest.mark.parametrize("cutoff,salt", [(None, 0.1), (12.0, 0.0), (9.0, 0.15)])
def test_residue_pairs_equal_an_independent_numpy_loop(adk, cutoff, salt):
    """adk_open.pdb (MDAnalysisTests), OBC2: the numpy implementation's total matches OpenMM 8.6
    (ForceField + implicit/obc2.xml, Reference platform) to 1e-4, and our residue-pair table of
    solvation_polar equals the numpy one to 1e-8 kcal/mol, entry by entry."""
    from energy.terms.born_parameters import born_parameters

    system, frame, topology = adk
    settings = EnergySettings(implicit_solvent="obc2", cutoff_angstrom=cutoff, salt_molar=salt,
                              use_periodic=False)
    params = born_parameters(system, "obc2")
    born, table = _numpy_obc2(frame.positions, system.charges, params.radius, params.screen,
                              system.resindex, system.n_residues, settings.kappa_per_angstrom, cutoff)
    ref = _builtin_reference(topology, frame.positions, "obc2", cutoff, settings.kappa_per_angstrom * 10.0)
    assert table.sum() == pytest.approx(ref["solvation_polar"], rel=1e-4)
    result = compute(system, frame, settings)
    np.testing.assert_allclose(result.interactions["solvation"]["born_radius"], born, rtol=1e-10)
    ours = np.zeros_like(table)
    pairs = result.residue_pairs
    ours[pairs.pair_i, pairs.pair_j] = pairs.column("solvation_polar")
    assert np.count_nonzero(table) > 1000
    np.testing.assert_allclose(ours, table, rtol=0, atol=1e-8)


# --- atom-level entries of the drill-down ------------------------------------------------------

@pytest.mark.parametrize("cutoff,salt", [(None, 0.0), (12.0, 0.1)])
def test_atom_pair_gb_entries_sum_to_the_residue_pair_entry(adk, cutoff, salt):
    """adk_open.pdb (MDAnalysisTests), OBC2: each atom pair of the drill-down carries the Still
    pair term written out here in numpy from the frame's Born radii (Still et al. 1990, with the
    OpenMM cutoff shift); over a residue pair they sum to its solvation_polar entry (whose table is
    checked above against the numpy double loop and OpenMM), and on the diagonal the pairs plus
    the residue's Born self terms do."""
    from energy.decomposition.atom_pairs import residue_pair_atom_energies

    system, frame, _ = adk
    settings = EnergySettings(implicit_solvent="obc2", cutoff_angstrom=cutoff, salt_molar=salt,
                              use_periodic=False)
    result = compute(system, frame, settings)
    solv = result.interactions["solvation"]
    pairs = result.residue_pairs
    gb = pairs.column("solvation_polar")
    off = np.flatnonzero(pairs.pair_i != pairs.pair_j)
    diag = np.flatnonzero(pairs.pair_i == pairs.pair_j)
    picked = [off[np.argmax(np.abs(gb[off]))], off[np.argmin(np.abs(gb[off]) + (gb[off] == 0) * 1e9)],
              diag[np.argmax(np.abs(gb[diag]))], off[len(off) // 2]]
    kappa, shift = settings.kappa_per_angstrom, 0.0 if cutoff is None else 1.0 / cutoff
    x, q, born = frame.positions, system.charges, solv["born_radius"]
    for k in picked:
        i, j = int(pairs.pair_i[k]), int(pairs.pair_j[k])
        atoms = residue_pair_atom_energies(system, frame, settings, i, j, solv["born_radius"])
        a, b = atoms.pairs[:, 0], atoms.pairs[:, 1]
        r2 = ((x[a] - x[b]) ** 2).sum(axis=1)
        bb = born[a] * born[b]
        f = np.sqrt(r2 + bb * np.exp(-r2 / (4 * bb)))
        still = np.where(r2 < (np.inf if cutoff is None else cutoff ** 2),
                         -K * (1.0 - np.exp(-kappa * f) / EPS_OUT) * q[a] * q[b] * (1.0 / f - shift), 0.0)
        np.testing.assert_allclose(atoms.solvation_polar, still, rtol=1e-12, atol=1e-12)
        total = atoms.solvation_polar.sum()
        if i == j:
            total += solv["self_polar"][system.resindex == i].sum()
        assert total == pytest.approx(gb[k], rel=0, abs=1e-8), (i, j)
        # the Born radii computed by the drill-down itself (none given) are the same
        again = residue_pair_atom_energies(system, frame, settings, i, j)
        np.testing.assert_allclose(again.solvation_polar, atoms.solvation_polar, rtol=1e-12, atol=1e-12)
    assert abs(gb[picked[0]]) > 1.0  # not vacuous


def test_dense_residue_limit_applies_only_without_a_cutoff(adk, monkeypatch):
    """docs/physics.md: without a cutoff the GB pair sums use a dense residue table (a residue
    limit, a settings error beyond it); with a cutoff they follow the listed pairs, no limit.
    adk (214 residues) against a limit lowered to 100; the cutoff run's total is OpenMM's
    (checked in test_solvation_vs_openmm at 12 A), here only that it runs and is the same as
    with the normal limit."""
    from energy.terms import solvation

    system, frame, _ = adk
    with_cutoff = EnergySettings(implicit_solvent="obc2", cutoff_angstrom=12.0, use_periodic=False)
    expected = compute(system, frame, with_cutoff).totals["solvation_polar"]
    monkeypatch.setattr(solvation, "MAX_RESIDUES", 100)
    with pytest.raises(SettingsError, match="without a cutoff is limited to 100 residues"):
        compute(system, frame, EnergySettings(implicit_solvent="obc2", use_periodic=False))
    assert compute(system, frame, with_cutoff).totals["solvation_polar"] == expected
