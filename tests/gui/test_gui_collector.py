"""Cyclic garbage is collected on the window's thread, never by a worker (clusterdesk/gui/collector.py).

A fact of Qt practice (no source): a Qt object must be destroyed in the thread
it lives in; Python's collector, left on, runs in whichever thread allocates
past a threshold, which crashed this suite with a segmentation fault.
"""

from __future__ import annotations

import gc
import threading

from clusterdesk.gui.collector import INTERVAL_MS, collect_on_gui_thread


class _Cycle:
    def __init__(self):
        self.me = self


def _collections_by_thread():
    seen: list[int] = []

    def note(phase, info):
        if phase == "start":
            seen.append(threading.get_ident())

    return seen, note


def test_a_worker_making_cyclic_garbage_never_runs_the_collector(qtbot):
    collect_on_gui_thread()  # also started for every window test by tests/gui/conftest.py
    assert not gc.isenabled()
    seen, note = _collections_by_thread()
    gc.callbacks.append(note)
    try:
        def churn():
            for _ in range(20 * gc.get_threshold()[0]):
                _Cycle()

        worker = threading.Thread(target=churn)
        worker.start()
        worker.join()
        worker_id = worker.ident
        assert worker_id not in seen  # Python left alone would have collected here many times
        qtbot.wait(3 * INTERVAL_MS)
        assert threading.get_ident() in seen  # the window's timer collected the cycles
    finally:
        gc.callbacks.remove(note)
