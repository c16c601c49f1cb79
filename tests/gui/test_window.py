"""The main window on the clash scenario: map, ledger, atom contributions, profile, ordering."""
import numpy as np
import pytest
from conftest import SCENARIO_CLASH
from PySide6.QtCore import QPoint, Qt

from app.gui.models.array_table import SORT_ROLE
from energy.decomposition.atom_pairs import residue_pair_atom_energies
from energy.decomposition.residue_pairs import bonded_terms_for_pair


def strongest_repulsive_pair(rp):
    total = rp.total
    inter = np.flatnonzero(rp.pair_i != rp.pair_j)
    k = inter[np.argmax(total[inter])]
    return int(rp.pair_i[k]), int(rp.pair_j[k]), float(total[k])


def click_cell(qtbot, view, row, col):
    scene = view.scene_point_of_cell(row, col)
    p = view.graphics.mapFromScene(scene)
    qtbot.mouseClick(view.graphics.viewport(), Qt.MouseButton.LeftButton, pos=QPoint(p.x(), p.y()))


def test_map_holds_the_engine_matrix(opened, scenario_snapshot):
    expected = scenario_snapshot.result.residue_pairs.dense("total")
    assert opened.map.matrix.shape == (108, 108) == expected.shape
    np.testing.assert_allclose(opened.map.matrix, expected, rtol=1e-9, atol=1e-9)
    s = scenario_snapshot.system
    assert f"{s.n_atoms:,} atoms" in opened.size_label.text()
    assert "last computation" in opened.time_label.text()
    # the colour scale is symmetric around zero
    lo, hi = opened.map.image.getLevels()
    assert lo == -hi and hi > 0


def test_the_planted_clash_is_the_hottest_cell(opened):
    ds = opened.dataset
    i, j, e = strongest_repulsive_pair(ds.pairs)
    assert {ds.labels[i].split(":")[0], ds.labels[j].split(":")[0]} == {"A", "B"}
    assert "TRP" in ds.labels[i] + ds.labels[j]
    assert e > 100  # kcal/mol: a steric clash, far above any normal contact


def test_click_cell_selects_row_atoms_and_plot(qtbot, opened):
    view = opened.map
    ds = opened.dataset
    i, j, _ = strongest_repulsive_pair(ds.pairs)
    row, col = int(view.position[j]), int(view.position[i])    # lower triangle on purpose
    opened.fit_map()
    with qtbot.waitSignal(opened.selection.pairChanged, timeout=2000):
        click_cell(qtbot, view, row, col)
    assert opened.selection.pair == (min(i, j), max(i, j))
    assert view.cursor() == (row, col)
    ledger_row = opened.ledger.selected_row()
    assert ledger_row >= 0 and opened.ledger.model.pair_of_row(ledger_row) == (min(i, j), max(i, j))
    snap = opened.snapshot
    e = residue_pair_atom_energies(snap.system, snap.frame, snap.result.settings, i, j)
    n_bonded = len(bonded_terms_for_pair(snap.system, snap.result, i, j))
    assert opened.atoms.model.rowCount() == len(e) + n_bonded
    np.testing.assert_allclose(np.sort(opened.profile.coul_points.data["x"]), np.sort(e.distance))
    # the atom rows add up to the residue-pair entry
    k = ds.pairs.lookup(i, j)
    assert e.total.sum() + sum(d["share"] for d in bonded_terms_for_pair(snap.system, snap.result, i, j)) \
        == pytest.approx(ds.pairs.total[k], rel=1e-6)
    # choosing an atom row draws its curves with the current distance marked
    opened.atoms.table.selectRow(0)
    assert opened.selection.atom_pair is not None
    r, coul, lj, params, d, _ = opened.profile.curve_data
    assert opened.profile.now_line.isVisible() and opened.profile.now_line.value() == pytest.approx(d)
    assert len(opened.profile.lj_curve.getData()[0]) == len(r)
    assert "Rmin" in opened.profile.note.textItem.toPlainText()


def test_ledger_row_selects_map_cell_and_arrow_keys_move(qtbot, opened):
    led = opened.ledger
    led.table.selectRow(3)
    pair = led.model.pair_of_row(3)
    assert opened.selection.pair == pair
    r, c = opened.map.cursor()
    assert {int(opened.map.order[r]), int(opened.map.order[c])} == set(pair)
    opened.map.graphics.setFocus()
    qtbot.keyClick(opened.map.graphics, Qt.Key.Key_Right)
    assert opened.map.cursor() == (r, c + 1)
    expected = (int(opened.map.order[r]), int(opened.map.order[c + 1]))
    assert opened.selection.pair == (min(expected), max(expected))
    qtbot.keyClick(opened.map.graphics, Qt.Key.Key_Down)
    assert opened.map.cursor() == (r + 1, c + 1)


def test_ledger_sorts_and_filters(opened):
    model = opened.ledger.model
    total_col = [model.headerData(k, Qt.Orientation.Horizontal).split("\n")[0]
                 for k in range(model.columnCount())].index("Total")
    opened.ledger.table.sortByColumn(total_col, Qt.SortOrder.DescendingOrder)
    values = [model.data(model.index(r, total_col), SORT_ROLE) for r in range(model.rowCount())]
    assert values == sorted(values, reverse=True)
    assert values[0] == pytest.approx(float(opened.dataset.pairs.total.max()))
    # filter: between chain A and chain B only
    opened.ledger.set_between("A", "B", True)
    n = model.rowCount()
    assert 0 < n < len(opened.dataset.pairs)
    for r in range(n):
        i, j = model.pair_of_row(r)
        assert {opened.dataset.chains[i], opened.dataset.chains[j]} == {"A", "B"}
    opened.ledger.text.setText("trp")
    assert 0 < model.rowCount() < n
    for r in range(model.rowCount()):
        i, j = model.pair_of_row(r)
        assert "TRP" in opened.dataset.labels[i] + opened.dataset.labels[j]


@pytest.mark.parametrize("mode", ["energy", "chain", "profile"])
def test_axis_reordering(opened, mode):
    view = opened.map
    dense = opened.dataset.pairs.dense("total")
    view.set_order(mode)
    o = view.order
    assert sorted(o.tolist()) == list(range(opened.dataset.n))
    np.testing.assert_allclose(view.matrix, dense[np.ix_(o, o)])
    assert view.left_axis.labels == list(opened.dataset.labels[o])
    if mode == "energy":
        per = opened.dataset.pairs.per_residue("total")[o]
        assert np.all(np.diff(per) >= 0)
    if mode == "chain":
        ch = list(opened.dataset.chains[o])
        assert ch == sorted(ch)
    assert "axis order" in view.plot.titleLabel.text


def test_units_rescale_every_view(opened):
    kcal = opened.map.matrix.copy()
    opened.settings_panel.unit.setCurrentIndex(opened.settings_panel.unit.findData("kJ/mol"))
    np.testing.assert_allclose(opened.map.matrix, kcal * 4.184)
    assert "kJ/mol" in opened.ledger.count.text()          # the ledger names its unit once
    total = opened.ledger.model.column_of("Total")
    shown = float(opened.ledger.model.data(opened.ledger.model.index(0, total)).replace(",", ""))
    assert shown == pytest.approx(opened.ledger.model.column_values("Total")[opened.ledger.model.record(0)]
                                  * 4.184, abs=0.06)
    assert opened.app_settings.unit == "kJ/mol"


def test_clustered_order_draws_the_tree_scipy_would(opened):
    # Reference: scipy.cluster.hierarchy.dendrogram(no_plot=True) lays out the same linkage with
    # leaf k at x = 10 k + 5; our tree, drawn over display positions, must be the same drawing.
    from scipy.cluster.hierarchy import dendrogram
    view = opened.map
    view.set_order("sequence")
    xs, _ = view.tree.getData()
    assert view.tree_segments() is None and (xs is None or len(xs) == 0)
    view.set_order("profile")
    z = view.linkage
    n = opened.dataset.n
    ref = dendrogram(z, no_plot=True)
    assert ref["leaves"] == view.order.tolist()
    x0, y0, x1, y1 = view.tree_segments()
    scale = 0.16 * n / z[:, 2].max()
    ours = {tuple(np.round(s, 6)) for s in zip(x0, -0.5 - y0, x1, -0.5 - y1)}
    theirs = set()
    for xs, hs in zip(ref["icoord"], ref["dcoord"]):
        xs = (np.asarray(xs) - 5.0) / 10.0
        hs = np.asarray(hs) * scale
        for a in range(3):
            theirs.add(tuple(np.round((xs[a], hs[a], xs[a + 1], hs[a + 1]), 6)))
    assert ours == theirs
    xs, ys = view.tree.getData()
    assert len(xs) == 6 * (n - 1) and ys.max() <= -0.5 + 1e-9   # above the matrix (y inverted)
    # chain boundaries stay on the matrix and do not cross the tree
    view.set_order("chain")
    assert view.chain_boundary_segments() == 2                  # chains A | B: one cut, two lines
    bx, by = view.boundaries.getData()
    assert by.min() >= -0.5 and bx.min() >= -0.5 and max(bx.max(), by.max()) <= n - 0.5


def test_status_bar_says_when_small_pairs_are_not_listed(qtbot, opened, monkeypatch):
    # Block mode without a cutoff (energy/residue_rows.py), made to trigger on the scenario.
    from energy._kernels import residue_rows
    monkeypatch.setattr(residue_rows, "ALL_PAIRS_LISTED_LIMIT", 10)
    monkeypatch.setattr(residue_rows, "UNLISTED_BELOW", 0.05)
    with qtbot.waitSignal(opened.computeFinished, timeout=30000):
        opened.recompute()
    unlisted = opened.snapshot.result.unlisted
    assert unlisted["n_pairs"] > 0
    assert f"{unlisted['n_pairs']:,} residue pairs under 0.05 kcal/mol not listed" in opened.size_label.text()


def test_window_opens_the_demo_scenario_when_started_without_files(qtbot, window):
    """`tessera` alone opens the bundled demo (samples/scenario/complex_clash.pdb, located through
    resources.demo_structure): the map shows its residues."""
    import resources
    demo = resources.demo_structure()
    assert demo is not None and demo.samefile(SCENARIO_CLASH)
    with qtbot.waitSignal(window.computeFinished, timeout=30000):
        window.open_default()
    assert window.snapshot.spec.structure == str(demo)
    assert window.dataset.n == window.snapshot.system.n_residues > 100
