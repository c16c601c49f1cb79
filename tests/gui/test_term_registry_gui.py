"""A term registered in the term registry (tests/toy_term.py) appears in the window's "Show"
list of the pair map, in the term bars and in the atom-contributions table, with its labels
from the registry and its energy from the engine (k (r - r0)^2 by hand, as in
tests/test_term_registry.py)."""
from __future__ import annotations

import math

import numpy as np
from tiny import make_system
from toy_term import NAME, restraint_table, toy_term_registered

from app.gui.models.atom_table import AtomTableModel, pair_contributions
from app.gui.selection import SelectionModel
from app.gui.views.pair_map import PairMapView
from app.gui.views.term_bars import TermBarsView
from app.state.document import Dataset, LoadSpec, Snapshot
from energy.decomposition.pipeline import compute
from energy.io.loaders import LoadedSystem
from energy.model.system import Frame


def test_registered_term_in_show_list_term_bars_and_atom_table(qtbot):
    positions = np.array([[0.0, 0.0, 0.0], [1.7, 0.2, 0.0], [4.0, 0.0, 0.5]])
    with toy_term_registered():
        base = make_system([0.2, -0.2, 0.1], [1.8] * 3, [0.1] * 3, [0, 0, 1])
        system = type(base)(**{**{f: getattr(base, f) for f in base.__dataclass_fields__},
                               "other_tables": {"restraints": restraint_table([(0, 2)], [10.0], [3.0])}})
        frame = Frame(positions)
        result = compute(system, frame)
        expected = 10.0 * (math.dist(positions[0], positions[2]) - 3.0) ** 2

        view = PairMapView(SelectionModel())
        qtbot.addWidget(view)
        items = {view.quantity_box.itemData(k): view.quantity_box.itemText(k)
                 for k in range(view.quantity_box.count())}
        assert items[NAME] == "Distance restraint"

        bars = TermBarsView()
        qtbot.addWidget(bars)
        bars.set_values("system", dict(result.totals), "whole system")
        ticks = [label for _, label in bars.plots["system"].getAxis("left")._tickLevels[0]]
        assert "restr" in ticks

        snap = Snapshot(LoadSpec("toy.pdb"), LoadedSystem(system, frame), result)
        view.set_dataset(Dataset.from_snapshot(snap))
        contrib = pair_contributions(snap, 0, 1)
        toy_rows = [d for d in contrib.bonded if d["term"] == NAME]
        assert len(toy_rows) == 1 and abs(toy_rows[0]["energy"] - expected) < 1e-9
        table = AtomTableModel()
        table.set_contributions(system, contrib)
        kind = table.column_of("Kind")
        kinds = {table.data(table.index(r, kind)) for r in range(table.rowCount())}
        assert "Distance restraint" in kinds
