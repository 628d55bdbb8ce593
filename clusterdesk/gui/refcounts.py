"""A guard against reference-count bugs of PySide6 6.12 on Python 3.11.

On that pairing, ``SignalInstance.emit()`` and ``SignalInstance.disconnect()``
return ``True`` (or ``False``) without taking a reference to it, so every
signal emitted from Python (pyqtgraph emits many: mouse moves, range changes)
drops one reference from the interpreter's ``True``. After a few thousand
emits the count reaches zero and the interpreter aborts with "Fatal Python
error: bool_dealloc". Python 3.12 and later make ``True`` and ``False``
immortal, so the bug is harmless there.

The same pairing loses a reference to ``None`` each time Qt calls a
Python-implemented virtual method that returns ``None``, such as a table
model's ``data()`` for a role it does not provide (every repaint of a table
calls it hundreds of times). A window left open long enough, or driven
through a few hundred actions, then aborts with "Fatal Python error:
none_dealloc" (found by tests/gui/test_gui_monkey.py).

:func:`guard_bool_singletons` measures whether the running PySide6 has each
bug and, only then, gives ``True`` and ``False`` (and ``None``) a very large
reference count, which is what later Pythons do. These objects are never
freed in any case, so this changes nothing else.
"""

from __future__ import annotations

import ctypes
import sys

__all__ = ["signal_emit_drops_references", "model_data_drops_none_references", "guard_bool_singletons"]

_HEADROOM = 1 << 40  # about 10**12 emits
_guarded = False


def signal_emit_drops_references(trials: int = 16) -> bool:
    """Whether emitting a Python-side signal loses references to ``True``/``False``."""
    from PySide6.QtCore import QObject, Signal

    class _Probe(QObject):
        ping = Signal()

    probe = _Probe()
    before = sys.getrefcount(True) + sys.getrefcount(False)
    for _ in range(trials):
        probe.ping.emit()
    after = sys.getrefcount(True) + sys.getrefcount(False)
    return before - after >= trials // 2


def model_data_drops_none_references(trials: int = 16) -> bool:
    """Whether Qt calling a Python ``data()`` that returns ``None`` loses references to ``None``."""
    from PySide6.QtCore import QAbstractListModel, QModelIndex, Qt

    class _Probe(QAbstractListModel):
        def rowCount(self, parent=QModelIndex()):  # noqa: N802 (Qt name)
            return 1

        def data(self, index, role=Qt.ItemDataRole.DisplayRole):
            return None

    probe = _Probe()
    index = probe.index(0, 0)
    before = sys.getrefcount(None)
    for _ in range(trials):
        index.data(Qt.ItemDataRole.ToolTipRole)
    return before - sys.getrefcount(None) >= trials // 2


def guard_bool_singletons() -> bool:
    """Apply the guards when needed (once per process): ``True`` and ``False``, and ``None``.

    Returns
    -------
    bool
        True when a guard is (now or already) in place, False when this
        Python and PySide6 need none.
    """
    global _guarded
    if _guarded:
        return True
    if sys.implementation.name != "cpython" or sys.version_info >= (3, 12):
        return False  # True, False and None are immortal there
    singletons = ((True, False) if signal_emit_drops_references() else ()) + (
        (None,) if model_data_drops_none_references() else ())
    if not singletons:
        return False
    for singleton in singletons:
        count = ctypes.c_ssize_t.from_address(id(singleton))  # ob_refcnt is a PyObject's first field
        count.value += _HEADROOM
    _guarded = True
    return True
