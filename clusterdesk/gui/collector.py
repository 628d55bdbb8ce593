"""Cyclic garbage is collected on the window's thread only.

Python's cycle collector runs in whichever thread happens to allocate when a
generation's threshold is passed.  When that is a worker thread (a scan, a
file being read) and the garbage holds a Qt object (a dialog, a model, a
signal connection caught in a reference cycle), Qt destroys the object from
the wrong thread, and the process dies with a segmentation fault.  This was
seen in the window's tests: a fault "while garbage-collecting" inside the
reader on a worker thread while the window's thread waited for it.

The remedy is the usual one for Qt programs: switch automatic collection off
and collect on a timer in the window's thread, by the same thresholds that
Python would use.  Reference counting frees everything else at once as
always; only cycles wait for the timer.
"""

from __future__ import annotations

import gc

from PySide6.QtCore import QObject, QTimer

__all__ = ["GuiThreadCollector", "collect_on_gui_thread", "stop_collecting_on_gui_thread"]

#: Milliseconds between checks of the collector's counts.
INTERVAL_MS = 500


class GuiThreadCollector(QObject):
    """Collect cyclic garbage from a timer of the thread this object lives in.

    Parameters
    ----------
    interval_ms : int, default INTERVAL_MS
        How often the generation counts are checked.
    """

    def __init__(self, interval_ms: int = INTERVAL_MS):
        super().__init__()
        self._thresholds = gc.get_threshold()
        self._was_enabled = gc.isenabled()
        gc.disable()
        self._timer = QTimer(self)
        self._timer.setInterval(interval_ms)
        self._timer.timeout.connect(self.check)
        self._timer.start()

    def check(self) -> None:
        """Collect the youngest generation past its threshold, and older ones as Python would."""
        counts = gc.get_count()
        generation = -1
        for g in range(3):
            if counts[g] > self._thresholds[g]:
                generation = g
            else:
                break
        if generation >= 0:
            gc.collect(generation)

    def stop(self) -> None:
        """Stop the timer, collect everything now (on this thread) and give Python its own collection back."""
        self._timer.stop()
        gc.collect()
        if self._was_enabled:
            gc.enable()


_ACTIVE: list[GuiThreadCollector] = []


def collect_on_gui_thread() -> GuiThreadCollector:
    """Start collecting on the calling (window's) thread; once per process, later calls return the same collector."""
    if not _ACTIVE:
        _ACTIVE.append(GuiThreadCollector())
    return _ACTIVE[0]


def stop_collecting_on_gui_thread() -> None:
    """Undo :func:`collect_on_gui_thread` (tests use it to leave the interpreter as they found it)."""
    while _ACTIVE:
        _ACTIVE.pop().stop()
