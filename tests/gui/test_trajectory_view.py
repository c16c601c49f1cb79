"""Trajectories in the viewer: background scan, frames on demand, mean over frames, time series.

Sample: samples/scenario/complex_clash.pdb + relax.dcd (invented demo data made by
samples/make_scenario.py; the planted clash relaxing).  The frame count and the clash residue
pair are read from samples/scenario/scenario.json, not hard-coded.  Expected values come from the
engine called directly (energy.decomposition.pipeline.compute on frames read with energy.io), independently of
the viewer's per-frame store and of the scan's statistics.
"""
import json

import numpy as np
import pytest
from conftest import SCENARIO_CLASH, SCENARIO_DIR
from PySide6.QtCore import QPoint, Qt

from app.state.document import LoadSpec
from energy.decomposition.pipeline import compute
from energy.io.charmm_system import read_frame

TRAJECTORY = SCENARIO_DIR / "relax.dcd"
META = json.loads((SCENARIO_DIR / "scenario.json").read_text())


def residue_index(system, label):
    labels = [system.residues.label(k) for k in range(system.n_residues)]
    return labels.index(label)


def clash_pair(system):
    i, j = (residue_index(system, lab) for lab in META["clash"])
    return (min(i, j), max(i, j))


def open_trajectory(qtbot, window):
    with qtbot.waitSignal(window.computeFinished, timeout=60000):
        window.open_spec(LoadSpec(str(SCENARIO_CLASH), str(TRAJECTORY)))
    assert window.trajectory.active and window.frame_toolbar.isVisible()
    return window


def engine_frame(window, k):
    s = window.snapshot.system
    fr = read_frame(str(TRAJECTORY), s.n_atoms, s.names, k)
    return compute(s, fr, window.energy_settings)


def click_plot(qtbot, view, frame):
    scene = view.scene_point_of_frame(frame)
    p = view.graphics.mapFromScene(scene)
    qtbot.mouseClick(view.graphics.viewport(), Qt.MouseButton.LeftButton, pos=QPoint(p.x(), p.y()))


def test_trajectory_scan_frames_mean_and_time_series(qtbot, window):
    w = open_trajectory(qtbot, window)
    qtbot.waitUntil(lambda: w.trajectory.state.result is not None, timeout=60000)
    n = META["n_frames"]
    assert w.frame_bar.n_frames == n and w.frame_bar.slider.maximum() == n - 1
    result = w.trajectory.state.result
    assert result.complete and result.frames == list(range(n))
    assert f"{n} of {n} frame(s) computed" in w.frame_bar.status.text()
    assert w.frame_bar.mean.isEnabled()

    # the time series of the clash pair, against the engine frame by frame
    pair = clash_pair(w.snapshot.system)
    with qtbot.waitSignal(w.trajectory.seriesChanged, timeout=5000):
        w.selection.set_pair(pair)
    series = w.time_series.series
    assert list(series["frame"]) == list(range(n))
    for k in (0, n // 2, n - 1):
        rp = engine_frame(w, k).residue_pairs
        row = rp.lookup(*pair)
        assert series["total"][k] == pytest.approx(rp.total[row], rel=1e-5, abs=1e-4)
        assert series["lj"][k] == pytest.approx(rp.values["lj"][row], rel=1e-5, abs=1e-4)
        assert series["min_heavy_distance"][k] == pytest.approx(rp.min_heavy_distance[row], abs=1e-4)
    # the planted clash relaxes: far more repulsive in frame 0 than at the end, and the residues
    # move apart (scenario.json: trajectory_clash_lj_kcal_mol)
    assert series["lj"][0] > 10 * max(series["lj"][-1], 1.0)
    assert series["min_heavy_distance"][-1] > series["min_heavy_distance"][0]
    np.testing.assert_allclose(w.time_series.curve_values("total"), series["total"])
    # symmetric-log axis (default) draws sign(E) log10(1 + |E|/0.1); unticked, the energies
    drawn = lambda: w.time_series.curves["total"].getData()[1]  # noqa: E731
    e = np.asarray(series["total"], float)
    np.testing.assert_allclose(drawn(), np.sign(e) * np.log10(1 + np.abs(e) / 0.1))
    w.time_series.symlog_box.setChecked(False)
    np.testing.assert_allclose(drawn(), e)
    w.time_series.symlog_box.setChecked(True)

    # moving the slider computes that frame in the worker and every view follows it
    with qtbot.waitSignal(w.trajectory.frameShown, timeout=30000):
        w.frame_bar.slider.setValue(n // 2)
    assert w.snapshot.frame.index == n // 2 and f"frame {n // 2}" in w.dataset.title
    expected = engine_frame(w, n // 2).residue_pairs.dense("total")
    np.testing.assert_allclose(w.map.matrix, expected, rtol=1e-9, atol=1e-9)
    assert w.selection.pair == pair                  # the selection survives the frame change
    assert w.time_series.lines[0].value() == n // 2
    assert n // 2 in w.trajectory.cache

    # clicking the time series jumps to the nearest frame
    target = n - 3
    with qtbot.waitSignal(w.trajectory.frameShown, timeout=30000):
        click_plot(qtbot, w.time_series, target)
    assert w.snapshot.frame.index == target == w.frame_bar.frame

    # mean over frames: the map shows the scan's mean matrix; its total is the mean of the totals
    w.frame_bar.mean.setChecked(True)
    assert "mean over" in w.dataset.title
    mean_total = w.dataset.pairs.total.sum()
    assert mean_total == pytest.approx(result.per_frame_totals()["total"].mean(), rel=1e-9)
    row = w.dataset.pairs.lookup(*pair)
    assert w.dataset.pairs.total[row] == pytest.approx(series["total"].mean(), rel=1e-4)
    assert "mean over frames" in w.atoms.caption.text()
    w.frame_bar.this_frame.setChecked(True)
    assert f"frame {target}" in w.dataset.title


def test_stop_scan_keeps_frames_and_play_steps_through_cached_frames(qtbot, window):
    w = open_trajectory(qtbot, window)
    qtbot.waitUntil(lambda: w.frame_bar.scan_progress.value() >= 2, timeout=60000)
    with qtbot.waitSignal(w.trajectory.scanFinished, timeout=30000):
        w.frame_bar.stop_scan.click()
    result = w.trajectory.state.result
    assert not result.complete and 2 <= len(result.records) < META["n_frames"]
    assert "stopped early" in w.frame_bar.status.text()
    assert w.frame_bar.mean.isEnabled()               # the mean of the frames done
    qtbot.waitUntil(lambda: not w.frame_bar.stop_scan.isVisible(), timeout=5000)

    # play advances frame after frame, each on screen before the next is asked for
    shown = []
    w.trajectory.frameShown.connect(shown.append)
    w.frame_bar.play.setChecked(True)
    qtbot.waitUntil(lambda: len(shown) >= 3, timeout=60000)
    w.frame_bar.play.setChecked(False)
    assert shown[:3] == [1, 2, 3]
    assert len(w.trajectory.cache) >= 4               # frames 0-3 cached
    # a cached frame comes back without a worker
    with qtbot.waitSignal(w.trajectory.frameShown, timeout=1000):
        w.frame_bar.set_frame(1)
    assert w.snapshot.frame.index == 1


def test_plain_structure_has_no_frame_bar(opened):
    assert not opened.trajectory.active
    assert not opened.frame_toolbar.isVisible()
    assert opened.time_series.series is None
