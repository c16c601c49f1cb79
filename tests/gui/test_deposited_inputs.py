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
