"""Clash check panel, map rings, vdW model and electrostatics settings, model comparison.

Sample: the clash scenario (samples/scenario, invented demo data; the clash residue names are read
from scenario.json).  Expected clash lists come from energy.analysis.clashes called directly; the
electrostatics models are checked against a hand computation of each formula over the atom pairs
(docs/physics.md), written here with numpy and the CODATA-based Coulomb constant.
"""
import json

import numpy as np
import pytest
from conftest import SCENARIO_DIR, SCENARIO_FIXED
from PySide6.QtCore import Qt

from app.state.document import LoadSpec
from energy.analysis.clashes import ClashOptions, find_clashes
from energy.decomposition.atom_pairs import pair_curve
from energy.decomposition.pipeline import compute
from energy.model.settings import EnergySettings
from energy.units import COULOMB_CONSTANT

META = json.loads((SCENARIO_DIR / "scenario.json").read_text())


@pytest.fixture
def checked(qtbot, opened):
    qtbot.waitUntil(lambda: opened.checks.check is not None, timeout=20000)
    return opened


def residue_labels(system, atoms):
    return {system.residues.label(int(system.resindex[a])) for a in atoms}


def test_clash_panel_lists_the_engine_report_and_rings_the_map(checked):
    w = checked
    snap = w.snapshot
    expected = find_clashes(snap.system, snap.frame, ClashOptions())   # Bondi, 0.4 A, heavy atoms
    model = w.clash_panel.model
    assert model.rowCount() == len(expected) > 0
    np.testing.assert_array_equal(model.column_values("Overlap"), expected.overlap)
    np.testing.assert_array_equal(model.column_values("exp-6"), expected.exp6)
    assert residue_labels(snap.system, expected.pairs[0]) == set(META["clash"])
    assert f"{len(expected)} clash(es)" in w.clash_panel.summary.text()
    # per-residue counts: both clash residues, highest first
    counts = w.clash_panel.counts_model
    top = {counts.data(counts.index(r, 0)) for r in range(min(2, counts.rowCount()))}
    assert top == set(META["clash"])
    # rings on the pair map, in both triangles of each clashing residue pair
    i, j = (int(v) for v in sorted(snap.system.resindex[expected.pairs[0]]))
    pi, pj = int(w.map.position[i]), int(w.map.position[j])
    marks = w.map.clash_mark_positions()
    assert (pi, pj) in marks and (pj, pi) in marks
    assert len(marks) == 2 * len(w.checks.check.residue_pairs)
    assert "clash(es), worst overlap" in w.map.describe_cell(pi, pj)
    w.clash_panel.mark.setChecked(False)
    assert w.map.clash_mark_positions() == []


def test_picking_a_clash_selects_residue_and_atom_pair_everywhere(checked):
    w = checked
    rep = w.checks.check.report
    w.clash_panel.table.selectRow(0)
    a, b = (int(v) for v in rep.pairs[0])
    s = w.snapshot.system
    res = tuple(sorted((int(s.resindex[a]), int(s.resindex[b]))))
    assert w.selection.pair == res and w.selection.atom_pair == (a, b)
    assert w.ledger.model.pair_of_row(w.ledger.selected_row()) == res
    r, c = w.map.cursor()
    assert {int(w.map.order[r]), int(w.map.order[c])} == set(res)
    row = w.atoms.table.selectionModel().currentIndex().row()
    assert w.atoms.model.atom_pair_of_row(row) == (a, b)
    assert w.profile.curve_data[4] == pytest.approx(rep.distance[0])
    # and the other way: choosing the same atom pair elsewhere selects the clash row
    w.clash_panel.table.clearSelection()
    w.selection.set_atom_pair(())
    w.selection.set_atom_pair((a, b))
    assert w.clash_panel.selected_clash() == 0


def test_clash_options_rerun_the_check(qtbot, checked):
    w = checked
    n_before = len(w.checks.check.report)
    with qtbot.waitSignal(w.checks.clashesChecked, timeout=20000):
        w.clash_panel.overlap.setValue(0.2)
    snap = w.snapshot
    expected = find_clashes(snap.system, snap.frame, ClashOptions(overlap=0.2))
    assert w.clash_panel.model.rowCount() == len(expected) > n_before
    with qtbot.waitSignal(w.checks.clashesChecked, timeout=20000):
        w.clash_panel.hydrogens.setChecked(True)
    assert w.checks.check.report.options.include_hydrogens


def test_fixed_variant_has_no_clash_and_no_rings(qtbot, window):
    with qtbot.waitSignal(window.checks.clashesChecked, timeout=60000):
        window.open_spec(LoadSpec(str(SCENARIO_FIXED)))
    assert window.clash_panel.model.rowCount() == 0
    assert window.map.clash_mark_positions() == []
    assert "0 clash(es)" in window.clash_panel.summary.text()


def test_vdw_model_setting_recomputes_with_exp6(qtbot, checked):
    w = checked
    panel = w.settings_panel
    assert panel.electrostatics.findData("shifted") >= 0
    # shifted electrostatics needs a cutoff: the panel says so and computes nothing
    panel.electrostatics.setCurrentIndex(panel.electrostatics.findData("shifted"))
    panel._emit()
    assert "needs a cutoff" in panel.message.text()
    panel.electrostatics.setCurrentIndex(panel.electrostatics.findData("plain"))
    assert not panel.alpha.isEnabled()
    with qtbot.waitSignal(w.computeFinished, timeout=30000):
        panel.vdw.setCurrentIndex(panel.vdw.findData("exp6"))
        panel._emit()
    assert w.energy_settings.vdw == "exp6" and panel.alpha.isEnabled()
    snap = w.snapshot
    expected = compute(snap.system, snap.frame, EnergySettings(vdw="exp6")).residue_pairs
    np.testing.assert_allclose(w.map.matrix, expected.dense("total"), rtol=1e-9, atol=1e-9)
    assert w.energy_settings.exp6_alpha == EnergySettings().exp6_alpha    # LJ-matched, exact


def test_profile_overlays_lj_and_exp6_curves(checked):
    w = checked
    w.clash_panel.table.selectRow(0)
    a, b = w.selection.atom_pair
    r = w.profile.curve_data[0]
    _, lj, _ = pair_curve(w.snapshot.system, EnergySettings(), a, b, r)
    _, e6, _ = pair_curve(w.snapshot.system, EnergySettings(vdw="exp6"), a, b, r)
    np.testing.assert_allclose(w.profile.lj_curve.getData()[1], w.profile._y(lj))
    np.testing.assert_allclose(w.profile.alt_curve.getData()[1], w.profile._y(e6))
    assert "exp-6 would give" in w.profile.info.text()
    w.profile.show_both.setChecked(False)
    xs, _ = w.profile.alt_curve.getData()
    assert xs is None or len(xs) == 0


def test_severity_table_lj_vs_exp6(checked):
    w = checked
    rep = w.checks.check.report
    m = w.model_panel.severity_model
    n = min(10, len(rep))
    assert m.rowCount() == n
    np.testing.assert_array_equal(m.column_values("LJ 12-6"), rep.lj[:n])
    np.testing.assert_array_equal(m.column_values("exp-6"), rep.exp6[:n])
    assert np.all(m.column_values("exp-6") < m.column_values("LJ 12-6"))   # the softer wall
    w.model_panel.severity.selectRow(0)
    assert w.selection.atom_pair == tuple(int(v) for v in rep.pairs[0])


def hand_coulomb(system, x, res_i, res_j, model, rc):
    """k q_i q_j times each model's distance factor, over atom pairs with r < rc (docs/physics.md)."""
    a = np.flatnonzero(system.resindex == res_i)
    b = np.flatnonzero(system.resindex == res_j)
    r = np.linalg.norm(x[a][:, None, :] - x[b][None, :, :], axis=-1)
    qq = system.charges[a][:, None] * system.charges[b][None, :]
    inside = r < rc
    if model == "plain":
        f = 1 / r
    elif model == "distance-dependent":
        f = 1 / (4.0 * r * r)
    elif model == "reaction-field":
        eps_rf = 78.5
        k_rf = (eps_rf - 1) / ((2 * eps_rf + 1) * rc ** 3)
        f = 1 / r + k_rf * r * r - (1 / rc + k_rf * rc * rc)
    else:
        f = 1 / r - 1 / rc + (r - rc) / rc ** 2
    return float(COULOMB_CONSTANT * (qq * f)[inside].sum())


def test_one_click_electrostatics_comparison(qtbot, checked):
    w = checked
    with qtbot.waitSignal(w.checks.electrostaticsCompared, timeout=30000):
        w.model_panel.compare_button.click()
    c = w.model_panel.comparison
    assert c.cutoff == 12.0                      # no cutoff in the settings: 12 A
    m = w.model_panel.elec_model
    assert m.rowCount() == len(c.pairs) == 10
    headers = [m.headerData(k, Qt.Orientation.Horizontal).split("\n")[0] for k in range(m.columnCount())]
    assert headers == ["Residue pair", "Current", "Plain ε=1", "ε = 4r", "Reaction field", "Shifted"]
    s, x = w.snapshot.system, w.snapshot.frame.positions
    chains = [str(ch).strip() for ch in s.residues.chain]
    for (i, j) in c.pairs[:3]:
        assert chains[i] != chains[j]
        for key in ("plain", "distance-dependent", "reaction-field", "shifted"):
            k = list(map(tuple, c.pairs.tolist())).index((int(i), int(j)))
            assert c.coulomb[key][k] == pytest.approx(hand_coulomb(s, x, i, j, key, 12.0), rel=1e-9, abs=1e-9)
    # the salt bridge of the scenario is among the top inter-chain pairs
    assert any(set(lab.split(" – ")) == set(META["salt_bridge"]) for lab in c.labels)
    w.model_panel.elec.selectRow(0)
    assert w.selection.pair == tuple(int(v) for v in c.pairs[m.record(0)])
