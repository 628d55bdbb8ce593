"""A guard against a reference-count bug of PySide6 6.12 on Python 3.11.

On that pairing, ``SignalInstance.emit()`` and ``SignalInstance.disconnect()``
return ``True`` (or ``False``) without taking a reference to it, so every
signal emitted from Python (pyqtgraph emits many: mouse moves, range changes)
drops one reference from the interpreter's ``True``. After a few thousand
emits the count reaches zero and the interpreter aborts with "Fatal Python
error: bool_dealloc". Python 3.12 and later make ``True`` and ``False``
immortal, so the bug is harmless there.

:func:`guard_bool_singletons` measures whether the running PySide6 has the
bug and, only then, gives ``True`` and ``False`` a very large reference
count, which is what later Pythons do. The two objects are never freed in
any case, so this changes nothing else.
"""

from __future__ import annotations

import ctypes
import sys

__all__ = ["signal_emit_drops_references", "guard_bool_singletons"]

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


def guard_bool_singletons() -> bool:
    """Apply the guard when needed (once per process).

    Returns
    -------
    bool
        True when the guard is (now or already) in place, False when this
        Python and PySide6 do not need it.
    """
    global _guarded
    if _guarded:
        return True
    if sys.implementation.name != "cpython" or sys.version_info >= (3, 12):
        return False  # True and False are immortal there
    if not signal_emit_drops_references():
        return False
    for singleton in (True, False):
        count = ctypes.c_ssize_t.from_address(id(singleton))  # ob_refcnt is a PyObject's first field
        count.value += _HEADROOM
    _guarded = True
    return True
