"""Analytic checks of the pair forms against published formulas and constants."""
from __future__ import annotations

import numpy as np
import pytest
from tiny import make_system

from energy.decomposition.pipeline import compute
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.units import COULOMB_CONSTANT


def _two_atoms(r, q=(0.0, 0.0), rmin_half=(1.0, 1.0), eps=(0.0, 0.0)):
    system = make_system(q, rmin_half, eps, [0, 1])
    return system, Frame(np.array([[0.0, 0.0, 0.0], [r, 0.0, 0.0]]))


def test_coulomb_constant_from_codata_2018():
    # k = e^2 N_A / (4 pi eps0) with CODATA 2018 values = 332.0637 kcal/mol A e^-2; OpenMM 8.6's
    # ONE_4PI_EPS0 = 138.935456 kJ/mol nm e^-2 is the same constant (138.935456 * 10 / 4.184).
    assert COULOMB_CONSTANT == pytest.approx(332.0637, abs=5e-4)
    assert COULOMB_CONSTANT == pytest.approx(138.935456 * 10 / 4.184, rel=2e-8)  # 9 digits given


def test_two_unit_charges_three_angstrom_apart_give_k_over_3():
    # Coulomb's law in vacuum: E = k q1 q2 / r = 332.0637 / 3 = 110.6879 kcal/mol (CODATA 2018 k).
    system, frame = _two_atoms(3.0, q=(1.0, 1.0))
    result = compute(system, frame, EnergySettings())
    assert result.totals["coulomb"] == pytest.approx(COULOMB_CONSTANT / 3.0, rel=1e-12)
    assert result.totals["coulomb"] == pytest.approx(110.6879, abs=1e-3)
    assert result.totals["lj"] == 0.0


@pytest.mark.parametrize("rmin_half,eps", [((1.7, 1.9), (0.1, 0.2)), ((1.0, 2.1), (0.046, 0.15))])
def test_lj_minimum_at_rmin_with_depth_minus_eps(rmin_half, eps):
    # eps[(Rmin/r)^12 - 2(Rmin/r)^6] has its minimum -eps at r = Rmin (CHARMM form; e.g.
    # MacKerell et al., J. Phys. Chem. B 102, 3586 (1998)), with Rmin = sum of Rmin/2 and
    # eps = sqrt(eps_i eps_j).
    rmin = sum(rmin_half)
    depth = np.sqrt(eps[0] * eps[1])
    r_grid = np.linspace(0.8 * rmin, 1.5 * rmin, 401)
    energies = []
    for r in r_grid:
        system, frame = _two_atoms(r, rmin_half=rmin_half, eps=eps)
        energies.append(compute(system, frame).totals["lj"])
    energies = np.array(energies)
    k = int(np.argmin(energies))
    assert r_grid[k] == pytest.approx(rmin, abs=r_grid[1] - r_grid[0])
    system, frame = _two_atoms(rmin, rmin_half=rmin_half, eps=eps)
    assert compute(system, frame).totals["lj"] == pytest.approx(-depth, rel=1e-12)


def test_distance_dependent_dielectric_by_hand():
    # eps = D r (common practice for in-vacuo analysis): E = k q1 q2 / (D r^2).
    system, frame = _two_atoms(4.0, q=(0.5, -0.8))
    result = compute(system, frame, EnergySettings(electrostatics="distance-dependent", dielectric=4.0))
    assert result.totals["coulomb"] == pytest.approx(COULOMB_CONSTANT * 0.5 * -0.8 / (4.0 * 16.0), rel=1e-12)


def test_reaction_field_by_hand_and_zero_at_cutoff():
    # Reaction field (Tironi et al., J. Chem. Phys. 102, 5451 (1995)) with eps_in = 1:
    # E = k q q (1/r + k_rf r^2 - c_rf), k_rf = (eps_rf - 1)/((2 eps_rf + 1) rc^3), c_rf = 1/rc + k_rf rc^2
    rc, eps_rf, r = 12.0, 78.5, 5.0
    k_rf = (eps_rf - 1) / ((2 * eps_rf + 1) * rc ** 3)
    c_rf = 1 / rc + k_rf * rc ** 2
    settings = EnergySettings(cutoff_angstrom=rc, electrostatics="reaction-field", solvent_dielectric=eps_rf)
    system, frame = _two_atoms(r, q=(1.0, -1.0))
    e = compute(system, frame, settings).totals["coulomb"]
    assert e == pytest.approx(-COULOMB_CONSTANT * (1 / r + k_rf * r * r - c_rf), rel=1e-12)
    system, frame = _two_atoms(rc - 1e-9, q=(1.0, -1.0))
    assert abs(compute(system, frame, settings).totals["coulomb"]) < 1e-6  # vanishes at the cutoff
    system, frame = _two_atoms(rc + 0.01, q=(1.0, -1.0))
    assert compute(system, frame, settings).totals["coulomb"] == 0.0


def test_switching_function_polynomial():
    # S(x) = 1 - 10x^3 + 15x^4 - 6x^5, x = (r - r_on)/(rc - r_on): the quintic "smoothstep" used by
    # OpenMM's NonbondedForce switching (OpenMM user guide, "Lennard-Jones interaction").
    rmin_half, eps = (1.8, 1.8), (0.2, 0.2)
    r_on, rc = 8.0, 10.0
    settings = EnergySettings(cutoff_angstrom=rc, switch_angstrom=r_on)
    for r in (7.0, 8.5, 9.0, 9.9):
        system, frame = _two_atoms(r, rmin_half=rmin_half, eps=eps)
        plain = 0.2 * ((3.6 / r) ** 12 - 2 * (3.6 / r) ** 6)
        x = max(0.0, (r - r_on) / (rc - r_on))
        s = 1 - 10 * x ** 3 + 15 * x ** 4 - 6 * x ** 5
        assert compute(system, frame, settings).totals["lj"] == pytest.approx(plain * s, rel=1e-12)


def test_exception_pairs_use_their_own_parameters_and_skip_the_ordinary_sum():
    # A 1-4 pair with scaled charge product 0.25 e^2 and its own Rmin 3.0 A, eps 0.1 kcal/mol.
    system = make_system([1.0, 1.0], [1.0, 1.0], [0.5, 0.5], [0, 0], exceptions=[(0, 1, 0.25, 3.0, 0.1)])
    frame = Frame(np.array([[0.0, 0.0, 0.0], [3.0, 0.0, 0.0]]))
    result = compute(system, frame)
    assert result.totals["coulomb"] == pytest.approx(COULOMB_CONSTANT * 0.25 / 3.0, rel=1e-12)
    assert result.totals["lj"] == pytest.approx(-0.1, rel=1e-12)
