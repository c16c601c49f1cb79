"""Damaged inputs opened in the window: one error dialog each (the exact one-line message of the
bad-input catalogue, tests/bad_inputs/), and the previous system stays open and usable (issue 14)."""
import json
from pathlib import Path

import numpy as np
import pytest

from app.state.document import LoadSpec

ROOT = Path(__file__).resolve().parents[2]
ENTRIES = {Path(e["file"]).name: e
           for e in json.loads((ROOT / "tests" / "bad_inputs" / "catalogue.json").read_text(encoding="utf-8"))}
#: One entry per reader and per kind of check (PSF counts and numbers, parameters, PDB text,
#: geometry, cells, multi-model PDB, DCD).
SAMPLE = ("psf_nbond_deleted.psf", "psf_ntheta_count_lowered.psf", "psf_charge_underscore.psf",
          "psf_count_5000_digits.psf", "prm_cmap_1e999.prm", "prm_periodicity_inf.prm",
          "pdb_coincident_atoms.pdb", "pdb_far_atom.pdb", "pdb_cryst1_180.pdb", "pdb_models_differ.pdb",
          "dcd_not_a_dcd.dcd", "dcd_truncated_frame.dcd")


def _spec(entry) -> LoadSpec:
    i = entry["inputs"]
    return LoadSpec(i["structure"], i["coords"], tuple(i["params"]), i["frame"])


def test_each_damaged_input_gives_one_dialog_and_keeps_the_previous_system(qtbot, opened, error_boxes,
                                                                           monkeypatch):
    monkeypatch.chdir(ROOT)  # the catalogue's paths (and so its messages) are relative to the root
    old_snapshot, old_dataset = opened.snapshot, opened.dataset
    for name in SAMPLE:
        entry = ENTRIES[name]
        before = len(error_boxes)
        with qtbot.waitSignal(opened.computeFailed, timeout=30000) as blocker:
            opened.open_spec(_spec(entry))
        qtbot.waitUntil(lambda: not opened.busy, timeout=10000)
        assert len(error_boxes) == before + 1, name
        assert error_boxes[-1] == blocker.args[0] == entry["message"], name
        assert opened.snapshot is old_snapshot and opened.dataset is old_dataset, name
    assert opened.map.matrix.shape == (108, 108)
    # ... and the old system is still usable: a recompute with other settings goes through
    with qtbot.waitSignal(opened.computeFinished, timeout=30000):
        opened.settings_panel.use_cutoff.setChecked(True)
        opened.settings_panel.cutoff.setValue(9.0)
        opened.settings_panel.recompute.click()
    assert opened.snapshot.result.settings.cutoff_angstrom == 9.0
    np.testing.assert_allclose(opened.map.matrix, opened.snapshot.result.residue_pairs.dense("total"))


@pytest.mark.parametrize("fill", [b"\x00", b"1 "])
def test_a_megabyte_line_gives_one_short_dialog(qtbot, opened, error_boxes, tmp_path, fill):
    """A 1 MB line inside the PSF's atom records: one dialog whose text is capped (the reader
    quotes at most 80 characters of a field; the message is at most MESSAGE_CAP)."""
    from energy.errors import MESSAGE_CAP
    psf = (ROOT / "samples" / "peptide" / "probe_peptide.psf").read_bytes().split(b"\n")
    psf.insert(9, fill * (1 << 20))
    path = tmp_path / "huge.psf"
    path.write_bytes(b"\n".join(psf))
    spec = LoadSpec(str(path), str(ROOT / "samples" / "peptide" / "probe_peptide.pdb"),
                    (str(ROOT / "samples" / "peptide" / "probe_ff.prm"),))
    old = opened.snapshot
    before = len(error_boxes)
    with qtbot.waitSignal(opened.computeFailed, timeout=30000):
        opened.open_spec(spec)
    qtbot.waitUntil(lambda: not opened.busy, timeout=10000)
    assert len(error_boxes) == before + 1
    assert len(error_boxes[-1]) <= MESSAGE_CAP and "\n" not in error_boxes[-1]
    assert str(path) in error_boxes[-1]
    assert opened.snapshot is old
