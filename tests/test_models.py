"""Alternative repulsion (exp-6) and electrostatics (shifted-force) models: analytic checks."""
from __future__ import annotations

import numpy as np
import pytest
from tiny import make_system

from energy.decomposition.pipeline import compute
from energy.model.settings import EXP6_ALPHA_MATCHING_LJ, EnergySettings
from energy.model.system import Frame
from energy.terms.nonbonded import exp6_turnover
from energy.units import COULOMB_CONSTANT

RMIN_HALF, EPS = (1.9, 1.7), (0.12, 0.08)
RMIN, DEPTH = sum(RMIN_HALF), np.sqrt(EPS[0] * EPS[1])


def _energy(r, settings, q=(0.0, 0.0), term="lj"):
    system = make_system(q, RMIN_HALF, EPS, [0, 1])
    frame = Frame(np.array([[0.0, 0.0, 0.0], [r, 0.0, 0.0]]))
    return compute(system, frame, settings).totals[term]


EXP6 = EnergySettings(vdw="exp6")


def test_default_alpha_is_the_root_matching_lj_curvature():
    # Derived in docs/physics.md: E''(Rmin) of exp-6 is eps 6a(a-7)/((a-6)Rmin^2); of LJ 12-6 it is
    # 72 eps/Rmin^2; equal when a^2 - 19a + 72 = 0, a = (19 + sqrt 73)/2 = 13.772.
    a = EXP6_ALPHA_MATCHING_LJ
    assert a == pytest.approx(13.7720, abs=1e-4)
    assert 6 * a * (a - 7) / (a - 6) == pytest.approx(72.0, rel=1e-12)


def test_exp6_minimum_at_rmin_with_depth_minus_eps():
    assert _energy(RMIN, EXP6) == pytest.approx(-DEPTH, rel=1e-12)
    h = 1e-4
    left, right = _energy(RMIN - h, EXP6), _energy(RMIN + h, EXP6)
    assert left > -DEPTH and right > -DEPTH
    assert (right - left) / (2 * h) == pytest.approx(0.0, abs=1e-6)  # flat at the minimum


def test_exp6_curvature_matches_lj_at_the_minimum_for_the_default_alpha():
    h = 1e-3
    def second(settings):
        return (_energy(RMIN + h, settings) - 2 * _energy(RMIN, settings) + _energy(RMIN - h, settings)) / h**2
    lj_curv = second(EnergySettings())
    assert lj_curv == pytest.approx(72 * DEPTH / RMIN**2, rel=1e-5)  # analytic LJ curvature
    assert second(EXP6) == pytest.approx(lj_curv, rel=1e-4)


def test_exp6_is_held_flat_inside_the_turnover_point():
    x_turn = exp6_turnover(EXP6_ALPHA_MATCHING_LJ)
    a = EXP6_ALPHA_MATCHING_LJ
    assert a * (1 - x_turn) + 7 * np.log(x_turn) == pytest.approx(0.0, abs=1e-10)  # dE/dr = 0 there
    r_turn = x_turn * RMIN
    e_max = _energy(r_turn, EXP6)
    analytic = DEPTH / (a - 6) * (6 * np.exp(a * (1 - x_turn)) - a / x_turn**6)
    assert e_max == pytest.approx(analytic, rel=1e-10)
    assert e_max > 0
    for r in (0.9 * r_turn, 0.5 * r_turn, 0.1 * r_turn):
        assert _energy(r, EXP6) == pytest.approx(e_max, rel=1e-12)
    # Outside the turnover the curve falls monotonically towards the minimum.
    rs = np.linspace(r_turn * 1.01, RMIN, 50)
    es = [_energy(r, EXP6) for r in rs]
    assert np.all(np.diff(es) < 0)


def test_exp6_is_softer_than_lj_in_a_clash():
    r = 0.6 * RMIN
    assert 0 < _energy(r, EXP6) < _energy(r, EnergySettings())


def test_shifted_force_coulomb_by_hand_and_smooth_at_the_cutoff():
    # Shifted-force Coulomb (the undamped limit of Fennell & Gezelter, J. Chem. Phys. 124, 234104
    # (2006)): E = k q q (1/r - 1/rc + (r - rc)/rc^2); E(rc) = 0 and dE/dr(rc) = 0.
    rc = 10.0
    s = EnergySettings(cutoff_angstrom=rc, electrostatics="shifted")
    q = (0.6, -0.9)
    r = 4.0
    expected = COULOMB_CONSTANT * q[0] * q[1] * (1 / r - 1 / rc + (r - rc) / rc**2)
    assert _energy(r, s, q, "coulomb") == pytest.approx(expected, rel=1e-12)
    h = 1e-4
    e1, e2 = _energy(rc - 2 * h, s, q, "coulomb"), _energy(rc - h, s, q, "coulomb")
    assert abs(e2) < 1e-6 and abs((e2 - e1) / h) < 1e-3
    assert _energy(rc + 0.01, s, q, "coulomb") == 0.0
