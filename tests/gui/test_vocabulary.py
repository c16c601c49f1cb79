"""Every user-visible string of the window (actions, docks, tabs, column headers, combo items,
buttons, labels, tool tips) and of the command-line help uses one vocabulary: the term labels of
the term registry, one name for the group interaction, one atom-label format ("A:ALA25 CB"),
the window's symbols, and no command-line option in a window message.

The reference for the labels is the term registry (energy/terms/registry.py); the atom-label
format and the forbidden variants are those of issue 20 (one name per thing).
"""
from __future__ import annotations

import re

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QAbstractButton, QComboBox, QDockWidget, QLabel, QTabBar, QTableView

from energy.terms.registry import TERMS, long_label, map_quantities, short_label

#: Variants issue 20 retired, with the one name kept (the registry's labels for the LJ term).
RETIRED = {
    "van der Waals": "LJ / Lennard-Jones 12-6", "vdW": "LJ", "Repulsion model": "LJ term form",
    "repulsion-dispersion": "LJ term form", "other vdW model": "other LJ term form",
    "Interface energy": "Group interaction", "Group A vs B": "Group interaction", "A vs B:": "Group interaction",
    "Amber14": "Amber 14", "Urey-bradley": "Urey-Bradley", "Cmap": "CMAP", "Exp-6": "exp-6",
    "eps=": "ε", "alpha=": "α", "Atom 1": "Atom i", "Atom 2": "Atom j", "Residue 1": "Residue i",
    "Residue 2": "Residue j", "scanned": "computed",
}
#: An atom label the old way, "CB (ALA25)" or "CB A:ALA25" (name before the residue).
OLD_ATOM_LABEL = re.compile(r"\b[A-Z][A-Z0-9']{0,3} \(?[A-Z]:?[A-Z]{3}-?\d+\)?")
#: The one atom-label format: residue label (chain optional), a space, the atom name.
ATOM_LABEL = re.compile(r"^(?:[A-Za-z0-9]:)?[A-Z0-9]{1,4}-?\d+[A-Z]? [A-Z0-9'*]{1,4}$")
CLI_OPTION = re.compile(r"(?<![\w-])--[a-z][a-z0-9-]+")


def _headers(table: QTableView) -> list[str]:
    m = table.model()
    if m is None:
        return []
    return [str(m.headerData(c, Qt.Orientation.Horizontal, Qt.ItemDataRole.DisplayRole) or "")
            for c in range(m.columnCount())]


def visible_strings(window) -> list[str]:
    """Every string the window shows or offers: actions, docks, tabs, table headers, combo
    items, buttons, labels and their tool tips."""
    out = []
    for action in window.findChildren(type(window.act_open)):
        out += [action.text(), action.iconText(), action.toolTip(), action.statusTip()]
    for dock in window.findChildren(QDockWidget):
        out.append(dock.windowTitle())
    for bar in window.findChildren(QTabBar):
        out += [bar.tabText(k) for k in range(bar.count())]
    for table in window.findChildren(QTableView):
        out += _headers(table)
    for box in window.findChildren(QComboBox):
        out += [box.itemText(k) for k in range(box.count())] + [box.toolTip()]
    for w in window.findChildren(QAbstractButton) + window.findChildren(QLabel):
        out += [w.text(), w.toolTip()]
    return [s for s in out if s]


@pytest.fixture
def shown(qtbot, opened):
    """The window with the clash pair, an atom pair, the clash check and the group interaction."""
    w = opened
    rp = w.dataset.pairs
    inter = [k for k in range(len(rp)) if rp.pair_i[k] != rp.pair_j[k]]
    k = max(inter, key=lambda k: rp.total[k])
    w.selection.set_pair((int(rp.pair_i[k]), int(rp.pair_j[k])))
    w.atoms.table.selectRow(0)
    if w.checks.check is None:
        qtbot.waitUntil(lambda: w.checks.check is not None, timeout=30000)
    with qtbot.waitSignal(w.groupsComputed, timeout=30000):
        w.roster.set_groups_text("segid A", "segid B")
        w.roster.apply.click()
    return w


def test_window_strings_use_one_vocabulary(shown):
    strings = visible_strings(shown)
    assert len(strings) > 100                       # the whole window, not an empty one
    text = "\n".join(strings)
    for old, new in RETIRED.items():
        assert old not in text, f"{old!r} shown; the one name is {new!r}"
    assert not OLD_ATOM_LABEL.findall(text), OLD_ATOM_LABEL.findall(text)[:5]
    assert not CLI_OPTION.findall(text), CLI_OPTION.findall(text)[:5]
    # the term labels are the registry's: the map's Show list, the term bars, the column titles
    box = shown.map.quantity_box
    assert [box.itemText(k) for k in range(box.count())] == list(map_quantities().values())
    ticks = [label for _, label in shown.bars.plots["system"].getAxis("left")._tickLevels[0]]
    assert {short_label(t) for t in TERMS if shown.dataset.totals.get(t, 0.0)} <= set(ticks)
    ledger = [h.split("\n")[0] for h in _headers(shown.ledger.table)]
    assert short_label("coulomb") in ledger and short_label("lj") in ledger   # "Coulomb", "LJ"
    assert shown.settings_panel.vdw.itemText(0).startswith(long_label("lj"))
    # the toolbar's buttons are whole phrases: "Compare with" says with what, the map image says export
    toolbar = [a.iconText() for a in shown.findChild(type(shown.frame_toolbar), "toolbar_main").actions()]
    assert "Compare with a second structure" in toolbar and "Export map image" in toolbar


def test_every_atom_label_has_the_one_format(shown):
    labels = []
    for view, titles in ((shown.atoms, ("Atom i", "Atom j")), (shown.clash_panel, ("Atom i", "Atom j"))):
        m = view.model
        for title in titles:
            col = m.column_of(title)
            assert col >= 0, title
            labels += [m.data(m.index(r, col)) for r in range(m.rowCount())]
    labels = [s for s in labels if s]
    assert len(labels) > 10
    bad = [s for s in labels if not ATOM_LABEL.match(s)]
    assert not bad, bad[:5]
    assert "A:ALA25 CB" in labels or "B:TRP33 CZ3" in labels     # the scenario's clash atoms
    # the profile's info line and the status texts carry the same format
    info = shown.profile.info.text()
    a, b = shown.selection.atom_pair
    s = shown.snapshot.system
    assert s.atom_label(a) in info and s.atom_label(b) in info


def test_window_messages_name_controls_not_options():
    """The engine's messages name tessera options; the window shows its own controls instead."""
    from app.gui.wording import in_window_terms
    from energy.errors import SettingsError
    from energy.model.settings import EnergySettings
    with pytest.raises(SettingsError) as err:
        EnergySettings(cutoff_angstrom=None, switch_angstrom=8.0)
    assert "--cutoff" in str(err.value)                 # the command line's wording
    shown = in_window_terms(str(err.value))
    assert "--" not in shown and '"Cutoff" in Compute settings' in shown


def test_command_help_uses_the_same_words(capsys):
    from app.cli.main import main
    text = ""
    for command in ("scan", "compare", "overlaps"):
        with pytest.raises(SystemExit):
            main([command, "--help"])
        text += capsys.readouterr().out
    for old in ("van der Waals", "vdW", "repulsion-dispersion", "Repulsion model", "Amber14",
                "Interface energy", "MDAnalysis selection A"):
        assert old not in text, old
    assert "--no-periodic" in text and "ANGSTROM" in text and "ALPHA" in text
