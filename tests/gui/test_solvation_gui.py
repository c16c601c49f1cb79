"""Implicit solvent in the window: the compute settings build it, the map's Show list offers the
effective electrostatics and the pair ledger gets the solvation columns.  The expected value is
the continuum limit k q1 q2 / (eps_out r) (Coulomb's law in a dielectric), as in
tests/test_solvation_analytic.py."""
from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt
from tiny import make_system

from app.gui.models.pair_table import PairTableModel
from app.gui.selection import SelectionModel
from app.gui.views.pair_map import PairMapView
from app.gui.views.settings_panel import ComputeSettingsPanel
from app.state.document import Dataset, LoadSpec, Snapshot
from energy.decomposition.pipeline import compute
from energy.io.loaders import LoadedSystem
from energy.model.settings import EnergySettings
from energy.model.system import Frame
from energy.units import COULOMB_CONSTANT


def test_settings_panel_builds_implicit_solvent_settings(qtbot):
    panel = ComputeSettingsPanel(EnergySettings(), "kcal/mol")
    qtbot.addWidget(panel)
    assert not panel.salt.isEnabled()
    panel.implicit.setCurrentIndex(panel.implicit.findData("gbn2"))
    panel.salt.setValue(0.15)
    s = panel.current()
    assert s.implicit_solvent == "gbn2" and s.salt_molar == 0.15 and s.nonpolar == "ace"
    assert panel.salt.isEnabled() and "GB GBN2" in s.describe()
    panel.set_settings(EnergySettings())
    assert panel.current().implicit_solvent is None


def test_effective_electrostatics_in_show_list_and_ledger(qtbot):
    r = 40.0
    system = make_system([1.0, -1.0], [1.0, 1.0], [0.0, 0.0], [0, 1], elements=["Na", "Cl"])
    frame = Frame(np.array([[0.0, 0.0, 0.0], [r, 0.0, 0.0]]))
    result = compute(system, frame, EnergySettings(implicit_solvent="obc2"))
    snap = Snapshot(LoadSpec("ions.pdb"), LoadedSystem(system, frame), result)
    ds = Dataset.from_snapshot(snap)

    view = PairMapView(SelectionModel())
    qtbot.addWidget(view)
    keys = [view.quantity_box.itemData(k) for k in range(view.quantity_box.count())]
    assert {"effective_electrostatics", "solvation_polar", "solvation_nonpolar"} <= set(keys)
    view.set_dataset(ds)
    view.set_quantity("effective_electrostatics")
    assert view.quantity == "effective_electrostatics"

    model = PairTableModel()
    model.set_dataset(ds)
    titles = [model.headerData(c, Qt.Orientation.Horizontal) for c in range(model.columnCount())]
    column = next(c for c, t in enumerate(titles) if t.startswith("Eff. elec."))
    row = next(k for k in range(model.rowCount()) if model.pair_of_row(k) == (0, 1))
    value = model._columns[column].values[model.record(row)]
    expected = -COULOMB_CONSTANT / (78.5 * r)
    pairs = ds.pairs
    k01 = np.flatnonzero((pairs.pair_i == 0) & (pairs.pair_j == 1))[0]
    assert abs(pairs.column("effective_electrostatics")[k01] - expected) < 1e-6 * abs(expected)
    assert abs(value - expected) < 1e-6 * abs(expected)
