"""Solvent as blocks in the window (issue 16): a protein in water with ions opens as the solute
plus "Water (N)" and "Ions (N)"; a residue's water block expands into the waters it interacts
with, and one of them into its atom pairs.

System: OpenMM's bundled ``test.pdb`` (a 35-residue protein with TIP3P waters and two ions,
shipped in openmm/app/data: 2,761 HOH and two chloride ions, residue name "Cl"), Amber 14 +
TIP3P, 12 A cutoff, reaction field.  The counts of waters and ions are read from the file's own
atom records, not from the engine.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from app.state.document import LoadSpec
from energy.model.settings import EnergySettings
from energy.terms.registry import TERMS


@pytest.fixture
def solvated(qtbot, window):
    import openmm
    path = Path(openmm.__file__).parent / "app" / "data" / "test.pdb"
    window.energy_settings = EnergySettings(cutoff_angstrom=12.0)
    with qtbot.waitSignal(window.computeFinished, timeout=120000):
        window.open_spec(LoadSpec(str(path)))
    return window, path


def _residues_in_file(path, names):
    seen = set()
    for line in path.read_text().splitlines():
        if line.startswith(("ATOM", "HETATM")) and line[17:20].strip().upper() in names:
            seen.add((line[21], line[22:27]))
    return len(seen)


def test_solvated_system_shows_solute_and_two_blocks(solvated):
    window, path = solvated
    ds = window.dataset
    n_water = _residues_in_file(path, {"HOH"})
    n_ion = _residues_in_file(path, {"NA", "CL"})   # the file's ions are "Cl"
    assert n_water > 2000 and n_ion == 2
    assert list(ds.labels[-2:]) == [f"Water ({n_water:,})", f"Ions ({n_ion:,})"]
    assert ds.n == ds.snapshot.system.n_residues - n_water - n_ion + 2
    # the blocked table carries every entry: its sums are the system totals (kcal/mol)
    for t in TERMS:
        assert ds.pairs.values[t].sum() == pytest.approx(ds.totals[t], rel=1e-9, abs=1e-6)
    assert "solvent as blocks" in window.size_label.text()
    # the map is the size of the solute plus blocks, not of every water
    assert window.map.matrix.shape == (ds.n, ds.n)


def test_expand_water_block_for_one_residue(qtbot, solvated):
    window, _ = solvated
    ds = window.dataset
    lys = next(k for k, lab in enumerate(ds.labels) if "LYS" in lab)
    water_row = ds.n - 2
    window.selection.set_pair((lys, water_row))
    atoms = window.atoms
    assert atoms.showing_contacts()
    contacts = atoms.contacts
    k = ds.pairs.lookup(lys, water_row)
    assert len(contacts) > 10
    # the waters listed sum to the block's entry with this residue
    for t in TERMS:
        assert contacts.values[t].sum() == pytest.approx(ds.pairs.values[t][k], rel=1e-9, abs=1e-9)
    assert np.all(np.diff(contacts.total) >= 0)          # most favourable first
    classes = ds.snapshot.system.residue_classes
    assert set(classes[contacts.residues]) == {"water"}
    # double-click the strongest water: its atom pairs, and the way back to the list
    atoms._on_member(atoms.contacts_model.index(0, 0))
    assert not atoms.showing_contacts() and atoms.back.isVisible()
    lab = ds.snapshot.system.residues.label(int(contacts.residues[0]))
    assert lab in atoms.caption.text()
    shown = atoms.model.rowCount()
    assert shown > 0
    atoms.back.click()
    assert atoms.showing_contacts()


def test_blocks_switch_off_lists_every_water(qtbot, solvated):
    window, _ = solvated
    n_blocked = window.dataset.n
    window.set_show_blocks(False)
    assert window.dataset.blocks is None
    assert window.dataset.n == window.snapshot.system.n_residues > n_blocked
    window.set_show_blocks(True)
    assert window.dataset.n == n_blocked


def test_settings_fit_a_periodic_box_until_the_user_chooses(qtbot, window):
    """With no compute settings chosen, the solvated box opens with 12 A + reaction field and
    the status bar says so; the next, non-periodic structure is back on all pairs; once the
    user sets something, it is kept for every structure."""
    import openmm
    from conftest import SCENARIO_CLASH
    assert not window.settings_chosen
    path = Path(openmm.__file__).parent / "app" / "data" / "test.pdb"
    with qtbot.waitSignal(window.computeFinished, timeout=120000):
        window.open_spec(LoadSpec(str(path)))
    used = window.snapshot.result.settings
    assert used.cutoff_angstrom == 12.0 and used.electrostatics == "reaction-field"
    assert window.energy_settings == used and window.settings_panel.use_cutoff.isChecked()
    assert "periodic box of 8,867 atoms" in window.statusBar().currentMessage()
    with qtbot.waitSignal(window.computeFinished, timeout=120000):
        window.open_spec(LoadSpec(str(SCENARIO_CLASH)))
    assert window.snapshot.result.settings == EnergySettings()
    window.set_energy_settings(EnergySettings(cutoff_angstrom=9.0))
    qtbot.waitUntil(lambda: not window.busy, timeout=60000)
    with qtbot.waitSignal(window.computeFinished, timeout=120000):
        window.open_spec(LoadSpec(str(path)))
    assert window.snapshot.result.settings.cutoff_angstrom == 9.0
