"""Record tables: energies first, less used columns last or hidden (the header's column menu
shows them and the choice is kept), |Change| coloured neutrally, "Closest" empty for a residue
with itself.  The scenario's data come from the engine (samples/scenario, invented demo data);
the checks are on what the tables show."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import Qt

from app.gui.models.atom_table import AtomTableModel, pair_contributions
from app.gui.models.pair_table import PairTableModel
from app.gui.views.tables import column_menu, fit_columns, record_table
from app.state.document import Dataset

FIXED = Path(__file__).resolve().parents[2] / "samples" / "scenario" / "complex_fixed.pdb"


def _titles(model):
    return [model.column_title(c) for c in range(model.columnCount())]


def test_atom_table_energies_first_types_hidden_and_the_column_menu(qtbot, scenario_snapshot):
    snap = scenario_snapshot
    labels = [snap.system.residues.label(k) for k in range(snap.system.n_residues)]
    i, j = labels.index("A:ALA25"), labels.index("B:TRP33")    # the planted clash (scenario.json)
    model = AtomTableModel()
    contrib = pair_contributions(snap, i, j)
    model.set_contributions(snap.system, contrib)
    titles = _titles(model)
    assert titles[:6] == ["Atom i", "Atom j", "r", "Coulomb", "LJ", "Total"]
    table = record_table("atoms", model)
    qtbot.addWidget(table)
    table.resize(420, 300)
    table.show()
    fit_columns(table)
    header = table.horizontalHeader()
    types = model.column_of("Types")
    assert header.isSectionHidden(types) and not header.isSectionHidden(model.column_of("Total"))
    menu = column_menu(table)
    entries = {a.text(): a for a in menu.actions()}
    assert set(entries) == set(titles) and not entries["Types"].isChecked()
    entries["Types"].setChecked(True)                        # shown from the header's menu
    assert not header.isSectionHidden(types)
    entries["Kind"].setChecked(False)
    model.set_contributions(snap.system, contrib)            # new contents: the choices are kept
    fit_columns(table)
    assert not header.isSectionHidden(types) and header.isSectionHidden(model.column_of("Kind"))
    # the atom labels are the one format, the energies those of the engine
    total = model.column_values("Total")[: contrib.n_nonbonded]
    np.testing.assert_array_equal(total, contrib.energies.total)
    assert model.data(model.index(0, 0)).startswith("A:ALA25 ")


def test_compare_ledger_change_size_is_neutral_and_closest_empty_for_a_residue_itself(scenario_snapshot):
    from app.state.document import LoadSpec, Snapshot
    from energy.analysis.compare import compare_results
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    snap = scenario_snapshot
    loaded = load_system(str(FIXED))
    fixed = Snapshot(LoadSpec(str(FIXED)), loaded, compute(loaded.system, loaded.frame))
    comparison = compare_results(snap.system, snap.result, fixed.system, fixed.result)
    ds = Dataset.from_comparison(comparison, snap, fixed)
    model = PairTableModel()
    model.set_dataset(ds)
    size = model.column_of("|Change|")
    assert size > model.column_of("Δ Bonded")                 # the signed changes come first
    assert model.rowCount() > 10
    for r in range(min(50, model.rowCount())):
        assert model.data(model.index(r, size), Qt.ItemDataRole.ForegroundRole) is None
    single = PairTableModel()
    single.set_dataset(Dataset.from_snapshot(snap))
    closest = single.column_of("Closest")
    rows = [r for r in range(single.rowCount()) if single.pair_of_row(r)[0] == single.pair_of_row(r)[1]]
    assert rows and all(single.data(single.index(r, closest)) == "" for r in rows)
    other = next(r for r in range(single.rowCount()) if single.pair_of_row(r)[0] != single.pair_of_row(r)[1])
    assert single.data(single.index(other, closest)) != ""


def test_sizing_on_the_widest_rows_gives_the_widths_of_sizing_on_every_row(qtbot):
    """The columns sized from the few rows `widest_rows` names are as wide as Qt's own
    resizeColumnsToContents makes them from every row (the reference: Qt's sizing)."""
    import numpy as np
    from PySide6.QtWidgets import QTableView

    from app.gui.models.array_table import ArrayTableModel, Column
    from app.gui.views.tables import _size_to_contents
    rng = np.random.default_rng(7)
    energies = np.concatenate([rng.normal(0, 30, 400), [-99.999, 99.5, -4321.25, 98765.4, 2.5e6, -3e7, np.nan]])
    labels = np.array([f"A:{'LYS' if k % 3 else 'TRP'}{k}{' ' * (k % 11)}" for k in range(len(energies))],
                      dtype=object)
    distances = np.abs(rng.normal(4, 3, len(energies)))
    distances[5] = np.inf
    columns = [Column("pair", labels), Column("Coulomb", energies, kind="energy", signed=True),
               Column("d", distances, kind="distance")]
    widths = []
    for size in (_size_to_contents, QTableView.resizeColumnsToContents):
        table = QTableView()
        qtbot.addWidget(table)
        model = ArrayTableModel()
        model.set_columns(columns, len(energies))
        table.setModel(model)
        size(table)
        widths.append([table.horizontalHeader().sectionSize(c) for c in range(3)])
    assert widths[0] == widths[1]


def test_atom_table_gb_column_sums_to_the_salt_bridge_entry(qtbot):
    """With GB OBC2 the atom table of the scenario's salt bridge A:GLU7 - B:LYS15 (samples/scenario,
    invented demo data; its README numbers) shows each atom pair's GB term, outside Total; the
    column sums to the pair's solvation_polar entry of the engine's residue-pair table (which
    tests/test_solvation_analytic.py checks against a numpy double loop and OpenMM)."""
    from app.state.document import LoadSpec, Snapshot
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    from energy.model.settings import EnergySettings

    loaded = load_system(str(FIXED))
    result = compute(loaded.system, loaded.frame, EnergySettings(implicit_solvent="obc2"))
    snap = Snapshot(LoadSpec(str(FIXED)), loaded, result)
    labels = [snap.system.residues.label(k) for k in range(snap.system.n_residues)]
    i, j = sorted((labels.index("A:GLU7"), labels.index("B:LYS15")))
    model = AtomTableModel()
    contrib = pair_contributions(snap, i, j)
    model.set_contributions(snap.system, contrib)
    gb = model.column_values("GB")[: contrib.n_nonbonded]
    entry = result.residue_pairs.column("solvation_polar")[
        np.flatnonzero((result.residue_pairs.pair_i == i) & (result.residue_pairs.pair_j == j))[0]]
    assert gb.sum() == pytest.approx(entry, abs=1e-8) and entry > 50.0   # README: +90.0 kcal/mol
    np.testing.assert_array_equal(model.column_values("Total")[: contrib.n_nonbonded], contrib.energies.total)
