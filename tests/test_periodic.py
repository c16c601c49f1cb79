"""Periodic cells, orthorhombic and triclinic: the residue-pair search and the energies against
independent brute force over lattice images (the minimum-image convention, common practice)."""
from __future__ import annotations

import itertools

import numpy as np
import pytest
from tiny import random_system

from energy._kernels.cells import candidate_pairs_cells
from energy._kernels.pbc import box_matrix
from energy.decomposition.pipeline import compute
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.units import COULOMB_CONSTANT

# A rhombic dodecahedron (a = b = c, alpha = beta = 60, gamma = 90 degrees, as written by common
# simulation set-ups, e.g. the CRYST1 of MDAnalysisTests' adk_open.pdb), a monoclinic cell and a
# plain cube, and a slab (a cuboid long along z: the search's grid covers x and y whole but not
# z, a case of its own in energy._kernels.cells).
CELLS = {
    "dodecahedron": np.array([32.0, 32.0, 32.0, 60.0, 60.0, 90.0]),
    "monoclinic": np.array([30.0, 28.0, 33.0, 90.0, 104.0, 90.0]),
    "cube": np.array([28.0, 28.0, 28.0, 90.0, 90.0, 90.0]),
    "slab": np.array([28.0, 28.0, 90.0, 90.0, 90.0, 90.0]),
}


def _images(h, reach=2):
    return np.array([i * h[0] + j * h[1] + k * h[2]
                     for i, j, k in itertools.product(range(-reach, reach + 1), repeat=3)])


def _min_dist2(d, images):
    return float(np.min(np.sum((d[None, :] + images) ** 2, axis=1)))


@pytest.mark.parametrize("name", sorted(CELLS))
def test_residue_pair_search_finds_every_pair_brute_force(name):
    rng = np.random.default_rng(11)
    h = box_matrix(CELLS[name])
    n = 120
    centers = rng.uniform(-10, 40, (n, 3))
    radii = rng.uniform(0.5, 5.0, n)
    cutoff = 9.0
    pair_i, pair_j, row_start = candidate_pairs_cells(centers, radii, cutoff, h)
    found = set(zip(pair_i.tolist(), pair_j.tolist()))
    assert np.all(np.diff(pair_i.astype(np.int64) * n + pair_j) > 0)  # sorted, unique
    assert np.array_equal(row_start, np.searchsorted(pair_i, np.arange(n + 1)))
    images = _images(h)
    expected = {(i, i) for i in range(n)}
    for i, j in itertools.combinations(range(n), 2):
        if _min_dist2(centers[j] - centers[i], images) < (cutoff + radii[i] + radii[j]) ** 2:
            expected.add((i, j))
    assert found == expected


def test_residue_pair_search_without_cell_finds_every_pair_brute_force():
    # Non-periodic grid: clustered centres (two blobs far apart) and a few large radii, so rows
    # reach over several cells and some cells stay empty.
    rng = np.random.default_rng(12)
    n = 150
    centers = np.concatenate([rng.normal(0.0, 6.0, (n // 2, 3)), rng.normal(40.0, 6.0, (n - n // 2, 3))])
    radii = rng.uniform(0.3, 1.5, n)
    radii[rng.choice(n, 5, replace=False)] = 6.0
    cutoff = 8.0
    pair_i, pair_j, row_start = candidate_pairs_cells(centers, radii, cutoff)
    found = set(zip(pair_i.tolist(), pair_j.tolist()))
    assert np.array_equal(row_start, np.searchsorted(pair_i, np.arange(n + 1)))
    d = np.linalg.norm(centers[:, None] - centers[None], axis=2)
    lim = cutoff + radii[:, None] + radii[None]
    expected = {(i, j) for i in range(n) for j in range(i, n) if i == j or d[i, j] < lim[i, j]}
    assert found == expected


@pytest.mark.parametrize("name", sorted(CELLS))
def test_periodic_energies_match_brute_force_over_images(name):
    system, frame = random_system(np.random.default_rng(5), n_residues=10, box=30.0, n_exceptions=0)
    frame = Frame(frame.positions, CELLS[name])
    cutoff = 10.0
    result = compute(system, frame, EnergySettings(cutoff_angstrom=cutoff))
    images = _images(box_matrix(CELLS[name]))
    x = frame.positions
    coul = lj = 0.0
    for a, b in itertools.combinations(range(system.n_atoms), 2):
        r2 = _min_dist2(x[b] - x[a], images)
        if r2 >= cutoff ** 2:
            continue
        r = np.sqrt(r2)
        rmin = system.lj_rmin[system.lj_type[a], system.lj_type[b]]
        eps = system.lj_eps[system.lj_type[a], system.lj_type[b]]
        coul += COULOMB_CONSTANT * system.charges[a] * system.charges[b] / r
        lj += eps * ((rmin / r) ** 12 - 2 * (rmin / r) ** 6)
    assert result.periodic
    assert result.totals["coulomb"] == pytest.approx(coul, rel=1e-10, abs=1e-9)
    assert result.totals["lj"] == pytest.approx(lj, rel=1e-10, abs=1e-9)
