"""The collector pause used by the loading worker (app/gui/collector.py): nested and concurrent
uses keep collection off until the last one leaves, and the earlier state comes back (the
behaviour of :func:`gc.disable`/:func:`gc.enable` is Python's documented API)."""
import gc
import threading

from app.gui.collector import collections_paused


def test_pause_nests_and_restores_the_earlier_state():
    assert gc.isenabled()
    with collections_paused():
        assert not gc.isenabled()
        with collections_paused():
            assert not gc.isenabled()
        assert not gc.isenabled()       # the outer pause is still running
    assert gc.isenabled()


def test_pause_in_two_threads_ends_with_the_last_one():
    inside, release = threading.Event(), threading.Event()

    def worker():
        with collections_paused():
            inside.set()
            release.wait(10)

    thread = threading.Thread(target=worker)
    thread.start()
    inside.wait(10)
    with collections_paused():
        pass
    assert not gc.isenabled()           # the worker's pause outlives this one
    release.set()
    thread.join(10)
    assert gc.isenabled()


def test_pause_leaves_a_disabled_collector_disabled():
    gc.disable()
    try:
        with collections_paused():
            pass
        assert not gc.isenabled()
    finally:
        gc.enable()


def test_pause_ends_when_the_body_raises():
    try:
        with collections_paused():
            raise ValueError("load failed")
    except ValueError:
        pass
    assert gc.isenabled()
