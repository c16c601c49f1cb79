"""The window on deposited entries: the note on an ignored unit cell in the status bar."""
from data import NMR_NEOPETROSIAMIDE_PDB
from test_cells import _sme_as_met

from app.state.document import LoadSpec


def test_status_bar_notes_the_ignored_placeholder_cell(qtbot, window, tmp_path):
    """nmr_neopetrosiamide.pdb (MDAnalysisTests; PDB 2JUY, CRYST1 1.000 1.000 1.000), SME made
    MET as in tests/test_cells.py. Expected: the status bar carries the engine's note."""
    path = _sme_as_met(NMR_NEOPETROSIAMIDE_PDB, tmp_path / "2juy_met.pdb")
    with qtbot.waitSignal(window.computeFinished, timeout=60000):
        window.open_spec(LoadSpec(path))
    note = window.snapshot.result.cell_note
    assert note.startswith("unit cell ignored: CRYST1 1 x 1 x 1 A")
    assert note in window.size_label.text()


def test_open_dialog_carries_the_preparation_options(qtbot):
    """The open dialog's repair, pH, template and leave-out controls reach the LoadSpec, and the
    LoadSpec survives the recent-files round trip."""
    from app.gui.dialogs.open_dialog import OpenStructureDialog
    dialog = OpenStructureDialog()
    qtbot.addWidget(dialog)
    dialog.structure.edit.setText("/data/1a28.pdb.gz")
    dialog.repair.setChecked(True)
    dialog.ph.setValue(6.5)
    dialog.forcefield_files.setText("/data/lig.xml; /data/cof.xml")
    dialog.drop_unmatched.setChecked(True)
    spec = dialog.spec()
    assert (spec.repair, spec.ph, spec.forcefield_files, spec.drop_unmatched) == (
        True, 6.5, ("/data/lig.xml", "/data/cof.xml"), True)
    assert LoadSpec.from_dict(spec.as_dict()) == spec
    options = spec.preparation()
    assert options.repair and options.adds_hydrogens and options.ph == 6.5


def test_window_opens_a_model_of_an_ensemble_with_repair(qtbot, window):
    """nmr_neopetrosiamide.pdb (MDAnalysisTests; PDB 2JUY) opened with the dialog's repair option
    at model 3. Expected: the status bar says what preparation did and that the cell was ignored;
    the energies are those of the engine for the same spec."""
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    spec = LoadSpec(NMR_NEOPETROSIAMIDE_PDB, frame=3, repair=True)
    with qtbot.waitSignal(window.computeFinished, timeout=60000):
        window.open_spec(spec)
    text = window.size_label.text()
    assert "prepared: 1 residue(s) replaced" in text and "unit cell ignored" in text
    loaded = load_system(NMR_NEOPETROSIAMIDE_PDB, frame=3, preparation=spec.preparation())
    assert window.snapshot.result.totals == compute(loaded.system, loaded.frame, window.energy_settings).totals
