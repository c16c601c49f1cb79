"""Simulation setups in the window: Amber files dropped together (in either order) are told apart
by suffix and computed; a topology without coordinates gives one error line.  Inputs:
MDAnalysisTests' parmed_ala2_solv.parm7 + .rst7 (open data); the energy itself is checked
against OpenMM in tests/test_amber_routes.py, here the window's totals equal the engine's."""
from __future__ import annotations

import MDAnalysisTests.datafiles as mdat
import pytest

from energy.decomposition.pipeline import compute
from energy.io.loaders import load_system


def test_dropped_amber_files_are_opened(qtbot, window):
    with qtbot.waitSignal(window.computeFinished, timeout=120000):
        window.open_files([mdat.RST7_ala2, mdat.PRM7_ala2])  # coordinates first: sorted by suffix
    spec = window.snapshot.spec
    assert (spec.structure, spec.coords) == (mdat.PRM7_ala2, mdat.RST7_ala2)
    loaded = load_system(mdat.PRM7_ala2, mdat.RST7_ala2)
    # a solvated periodic box: with no settings chosen the window fits them to it (app/state/defaults.py)
    used = window.snapshot.result.settings
    assert used.cutoff_angstrom is not None and used.electrostatics == "reaction-field"
    direct = compute(loaded.system, loaded.frame, used)
    assert window.snapshot.result.totals["coulomb"] == pytest.approx(direct.totals["coulomb"], rel=1e-12)


def test_topology_without_coordinates_is_one_error_line(window, error_boxes):
    window.open_files([mdat.PRM7_ala2])
    assert len(error_boxes) == 1
    assert "needs coordinates" in error_boxes[0] and "\n" not in error_boxes[0]
