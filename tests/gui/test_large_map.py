"""The pair map above the dense limit (issue 16): drawn from the sparse table at screen
resolution, never as an n x n array.

The reference for the rastered image is a brute-force numpy block reduction of the dense matrix
(largest |E| per block, its sign kept), computed here on a size where the dense matrix fits.
Memory is measured with :mod:`tracemalloc`, which numpy reports its allocations to.
"""
from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from app.state.document import Dataset
from app.state.map_raster import DENSE_LIMIT, raster
from energy.decomposition.residue_pairs import ResiduePairEnergies
from energy.terms.registry import TERMS


def _random_table(n, n_pairs, seed=0):
    rng = np.random.default_rng(seed)
    i = rng.integers(0, n, n_pairs)
    j = np.minimum(n - 1, i + rng.geometric(0.01, n_pairs) - 1)   # mostly near the diagonal
    keys = np.unique(i.astype(np.int64) * n + j)
    pi, pj = (keys // n).astype(np.intp), (keys % n).astype(np.intp)
    values = {t: np.zeros(len(keys)) for t in TERMS}
    values["coulomb"] = rng.normal(0, 5, len(keys))
    values["lj"] = rng.normal(0, 1, len(keys))
    return ResiduePairEnergies(n, pi, pj, values, rng.uniform(2, 12, len(keys)))


def _dataset(pairs):
    n = pairs.n_residues
    labels = np.array([f"A:RES{k + 1}" for k in range(n)], dtype=object)
    chains = np.array(["A"] * (n // 2) + ["B"] * (n - n // 2), dtype=object)
    return Dataset(labels, chains, pairs, "synthetic", totals={})


def test_raster_keeps_the_largest_magnitude_of_each_block():
    n = 3600
    rp = _random_table(n, 80_000, seed=1)
    dense = rp.dense("total")
    r = raster(rp.pair_i, rp.pair_j, rp.total, n, pixels=1200)
    assert r.bin_rows == r.bin_cols == 3 and r.image.shape == (1200, 1200)
    blocks = dense.reshape(1200, 3, 1200, 3).transpose(0, 2, 1, 3).reshape(1200, 1200, 9)
    pick = np.take_along_axis(blocks, np.abs(blocks).argmax(axis=2)[..., None], axis=2)[..., 0]
    np.testing.assert_array_equal(r.image, pick)
    # a window of 100 rows and columns is drawn one cell per pair, as the dense matrix
    w = raster(rp.pair_i, rp.pair_j, rp.total, n, (500, 600, 450, 550))
    assert w.bin_rows == 1 and w.rect == (449.5, 499.5, 100, 100)
    np.testing.assert_array_equal(w.image, dense[500:600, 450:550])


def test_map_of_30000_rows_builds_no_square_array(qtbot):
    from app.gui.selection import SelectionModel
    from app.gui.views.pair_map import PairMapView
    n = 30_000
    ds = _dataset(_random_table(n, 400_000, seed=2))
    view = PairMapView(SelectionModel())
    qtbot.addWidget(view)
    view.resize(900, 900)
    view.show()
    tracemalloc.start()
    try:
        view.set_dataset(ds)
        qtbot.wait(100)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert n > DENSE_LIMIT and view.large
    square = n * n * 8                      # one float64 n x n array: 7.2 GB
    assert peak < 400e6 < square / 10, f"peak {peak / 1e6:.0f} MB"
    assert max(view.matrix.shape) <= 1200
    assert "largest |E| per pixel" in view.colorbar.axis.labelText
    # hover text reads the pair's value from the table, not from the raster
    k = int(np.argmax(np.abs(ds.pairs.total)))
    i, j = int(ds.pairs.pair_i[k]), int(ds.pairs.pair_j[k])
    assert f"A:RES{i + 1} × A:RES{j + 1}" in view.describe_cell(i, j)
    assert f"{ds.pairs.total[k]:.3f}" in view.describe_cell(i, j)
    # the clustered order is not offered at this size, and the title says so
    view.set_order("profile")
    assert view.linkage is None and "clustered order needs" in view.plot.titleLabel.text


def test_zoom_rasters_finer(qtbot):
    from app.gui.selection import SelectionModel
    from app.gui.views.pair_map import PairMapView
    n = 4000
    rp = _random_table(n, 60_000, seed=3)
    view = PairMapView(SelectionModel())
    qtbot.addWidget(view)
    view.resize(800, 800)
    view.show()
    view.set_dataset(_dataset(rp))
    coarse = view.matrix.shape
    view.plot.setRange(xRange=(999.5, 1099.5), yRange=(999.5, 1099.5), padding=0)
    qtbot.waitUntil(lambda: view.matrix.shape[0] < coarse[0] // 4, timeout=3000)
    (x0, x1), (y0, y1) = view.plot.vb.viewRange()
    r0, c0 = int(np.floor(y0 + 0.5)), int(np.floor(x0 + 0.5))
    h, w = view.matrix.shape
    np.testing.assert_array_equal(view.matrix, rp.dense("total")[r0:r0 + h, c0:c0 + w])


@pytest.mark.parametrize("n", [10, DENSE_LIMIT])
def test_small_maps_stay_dense(qtbot, n):
    from app.gui.selection import SelectionModel
    from app.gui.views.pair_map import PairMapView
    rp = _random_table(n, 5 * n, seed=4)
    view = PairMapView(SelectionModel())
    qtbot.addWidget(view)
    view.set_dataset(_dataset(rp))
    assert not view.large and view.matrix.shape == (n, n)
    np.testing.assert_array_equal(view.matrix, rp.dense("total"))


def test_map_export_of_a_large_table_is_the_rastered_map(qtbot, tmp_path):
    from types import SimpleNamespace

    from matplotlib.image import imread

    from app.gui.exports import export
    from app.gui.selection import SelectionModel
    from app.gui.views.pair_map import PairMapView
    from energy.model.settings import EnergySettings
    rp = _random_table(8000, 100_000, seed=5)
    base = _dataset(rp)
    ds = Dataset(base.labels, base.chains, rp, "synthetic", totals={},
                 stored=SimpleNamespace(settings=EnergySettings()))
    view = PairMapView(SelectionModel())
    qtbot.addWidget(view)
    view.set_dataset(ds)
    path = tmp_path / "map.png"
    export(SimpleNamespace(dataset=ds, snapshot=None, map=view, unit="kcal/mol"), "map", str(path))
    img = imread(path)
    assert img.shape[0] > 400 and img.shape[1] > 400
    rgb = (img[..., :3] * 255).astype(np.int64)
    colours = np.unique(rgb[..., 0] * 65536 + rgb[..., 1] * 256 + rgb[..., 2])
    assert len(colours) > 50     # a drawn map, not a blank canvas
