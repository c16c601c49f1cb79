"""A side job's result carries its job id and is dropped when the screen has moved on.

The case of issue 20: the group interaction of compare mode (two structures) arrives after
"Back to single structure"; it must not be shown under the single-structure mode.  The earlier
job is held back with an event, so the order of the two results is fixed, not timed.
"""
import threading
from pathlib import Path

import pytest

from app.state.document import LoadSpec

ROOT = Path(__file__).resolve().parents[2]
FIXED = ROOT / "samples" / "scenario" / "complex_fixed.pdb"


def test_a_stale_group_interaction_is_dropped(qtbot, opened, monkeypatch):
    import app.gui.main_window as mw
    from energy.decomposition.atom_pairs import selection_interaction
    w = opened
    with qtbot.waitSignal(w.computeFinished, timeout=60000):
        w.open_spec(LoadSpec(str(FIXED)), compare=True)
    assert w.dataset.is_difference

    release, finished = threading.Event(), threading.Event()
    original = mw._group_energy

    def held_in_compare_mode(snapshots, a, b):
        if len(snapshots) == 2:               # the compare-mode job: wait until released
            release.wait(60)
            try:
                return original(snapshots, a, b)
            finally:
                finished.set()
        return original(snapshots, a, b)

    monkeypatch.setattr(mw, "_group_energy", held_in_compare_mode)
    emitted = []
    w.groupsComputed.connect(emitted.append)
    w.roster.set_groups_text("segid A", "segid B")
    w.compute_groups("segid A", "segid B")           # job 1: both structures, held back
    stale_id = w._groups_job[0]
    with qtbot.waitSignal(w.groupsComputed, timeout=30000):
        w.leave_compare()                              # job 2: the single structure, runs now
    assert not w.dataset.is_difference and w._groups_job[0] != stale_id
    assert len(emitted) == 1 and len(emitted[0]) == 1
    release.set()
    qtbot.waitUntil(finished.is_set, timeout=60000)
    qtbot.wait(300)                                    # let job 1's queued result reach the window
    assert len(emitted) == 1                           # job 1's result was dropped
    assert len(w._group_results) == 1
    assert "first" not in w.roster.result.text() and "change" not in w.bars.values["groups"][1]
    # what is shown is the single structure's own group interaction (the engine called directly)
    snap = w.snapshot
    ref = selection_interaction(snap.system, snap.frame, snap.result.settings, "segid A", "segid B")
    assert w._group_results[0]["total"] == pytest.approx(ref["total"])


def test_every_side_worker_has_its_own_job_id():
    from app.gui.jobs import CallWorker
    ids = {CallWorker(print).job_id for _ in range(5)}
    assert len(ids) == 5
