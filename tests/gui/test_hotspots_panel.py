"""The Hot spots panel: the alanine scan of the scenario run through the window's worker.

Sample: the clash scenario (samples/scenario, invented demo data).  Expected values: the engine's
scan called directly (energy.analysis.hotspot_setup.scan_loaded, itself checked against OpenMM in
tests/test_hotspots.py) and the scenario facts in scenario.json ("hotspots", computed by
samples/scenario_hotspots.py from OpenMM's parameters without Tessera's engine).
"""
import json
import os

import numpy as np
import pytest
from conftest import SCENARIO_DIR

from energy.analysis.hotspot_setup import scan_loaded

META = json.loads((SCENARIO_DIR / "scenario.json").read_text())


@pytest.fixture
def scanned(qtbot, opened):
    panel = opened.hotspot_panel
    panel.group_a.setText("segid A"); panel.group_b.setText("segid B")
    with qtbot.waitSignal(opened.hotspots.scanned, timeout=120000):
        panel.run_button.click()
    return opened


def test_panel_shows_the_engine_scan_and_marks_hot_spots(scanned, tmp_path):
    w = scanned
    panel, snap = w.hotspot_panel, w.snapshot
    expected = scan_loaded(snap.loaded, w.energy_settings, "segid A", "segid B")
    model = panel.model
    assert model.rowCount() == len(expected) == META["hotspots"]["clash"]["n_scanned"]
    np.testing.assert_allclose(model.column_values("ΔE"), expected.total, atol=1e-9)
    # the clashing Trp: the most favourable change (scenario.json hotspots.clash)
    trp = META["clash"][0]
    labels = list(model.column_values("Residue"))
    k = labels.index(trp)
    assert model.column_values("ΔE")[k] == pytest.approx(
        META["hotspots"]["clash"]["delta_kcal_mol"][trp], abs=0.01)
    # bars: one plot per chain, heights = dE of that chain's residues
    bars = panel.bar_data()
    assert set(bars) == {"A", "B"}
    assert sum(len(x) for x, _ in bars.values()) == len(expected)
    # hot spots marked on the map's axes, at their display positions
    hot = expected.residue[expected.is_hot]
    assert w.map.axis_mark_positions() == sorted(int(w.map.position[r]) for r in hot)
    assert "ALA template" in panel.summary.text()
    panel.grab().save(os.path.join(tmp_path, "hotspots.png"))


def test_picking_a_residue_selects_its_row_and_column_and_lists_lost_contacts(scanned):
    w = scanned
    panel, system = w.hotspot_panel, w.snapshot.system
    glu, lys = META["salt_bridge"][1], META["salt_bridge"][0]
    r = next(i for i in range(system.n_residues) if system.residues.label(i) == glu)
    panel.select_residue(r)
    assert w.selection.pair == (r, r)
    assert w.map.cursor() == (int(w.map.position[r]), int(w.map.position[r]))
    assert lys in panel.lost_text()  # its salt-bridge partner loses the most
    k = int(np.flatnonzero(panel.scan.residue == r)[0])
    assert panel.picked_bars() == [(float(system.residues.resid[r]), pytest.approx(panel.scan.total[k]))]
    # and the other way: a selection made elsewhere picks the residue's row here
    other = int(panel.scan.residue[3])
    w.selection.set_pair((other, other))
    current = panel.table.selectionModel().currentIndex()
    assert panel.model.record(current.row()) == 3


def test_the_scan_can_be_cancelled(qtbot, opened):
    panel = opened.hotspot_panel
    panel.run_button.click()
    assert panel.cancel_button.isEnabled()
    panel.cancel_button.click()
    qtbot.waitUntil(lambda: opened.hotspots._job is None, timeout=120000)
    assert opened.hotspots.scan is None
    assert "cancelled" in panel.summary.text()


def test_scan_with_implicit_solvent_settings_shows_the_solvation_columns(qtbot, opened):
    """Compute settings with GB (OBC2 + ACE): the window's scan adds the solvation of binding,
    column by column equal to the engine's scan with the same settings (itself checked against
    OpenMM's CustomGBForce in tests/test_hotspots_solvation.py)."""
    from energy.model.settings import EnergySettings
    w = opened
    w.set_energy_settings(EnergySettings(implicit_solvent="obc2"))
    qtbot.waitUntil(lambda: not w.busy, timeout=120000)
    panel = w.hotspot_panel
    panel.group_a.setText("segid A"); panel.group_b.setText("segid B")
    with qtbot.waitSignal(w.hotspots.scanned, timeout=240000):
        panel.run_button.click()
    expected = scan_loaded(w.snapshot.loaded, w.energy_settings, "segid A", "segid B")
    assert set(expected.delta) == {"coulomb", "lj", "solvation_polar", "solvation_nonpolar"}
    model = panel.model
    np.testing.assert_allclose(model.column_values("ΔE"), expected.total, atol=1e-9)
    np.testing.assert_allclose(model.column_values("Δ GB"), expected.delta["solvation_polar"], atol=1e-9)
    np.testing.assert_allclose(model.column_values("Δ SA"), expected.delta["solvation_nonpolar"], atol=1e-9)
    assert "generalized-Born (OBC2) solvation of binding" in panel.summary.text()
    panel.select_residue(int(expected.residue[0]))
    assert "solvation of binding" in panel.lost_text()
