"""Write files atomically: a temporary file in the same folder, then a rename.

An existing file is never left half-written: if anything fails before the
rename (an exception while producing the content, a full disk), the old file
stays as it was and the temporary file is removed.

Replacing a large file makes the rename wait while the system frees the old
file's blocks (most of a second for a gigabyte on a slow disk). On POSIX
systems the old file is therefore held open across the rename and let go on
a helper thread, where that freeing then happens.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import threading
from pathlib import Path

__all__ = ["atomic_open", "write_text_atomic", "write_bytes_atomic", "RELEASE_BEHIND_BYTES"]

#: Replaced files at least this large are let go on a helper thread.
RELEASE_BEHIND_BYTES = 64 << 20


def _hold_replaced(path: Path):
    """An open descriptor of the large file about to be replaced (POSIX), or None."""
    if os.name != "posix":
        return None
    try:
        if os.stat(path).st_size < RELEASE_BEHIND_BYTES:
            return None
        return os.open(path, os.O_RDONLY)
    except OSError:  # no such file, or not readable: nothing to hold
        return None


def _release_behind(fd: int) -> threading.Thread:
    """Close ``fd`` on a helper thread (returned, started): the last close of a replaced file frees its blocks."""
    thread = threading.Thread(target=os.close, args=(fd,), name="clusterdesk-release", daemon=True)
    thread.start()
    return thread


@contextlib.contextmanager
def atomic_open(path, mode: str = "w", *, encoding: str | None = "utf-8", newline: str | None = ""):
    """Open a temporary file beside ``path``; it replaces ``path`` on a clean exit.

    Parameters
    ----------
    path : str or Path
        Final file name.
    mode : {"w", "wb"}, default "w"
    encoding : str or None, default "utf-8"
        Text mode only.
    newline : str or None, default ""
        Text mode only; "" leaves line endings to the writer (the csv module
        writes ``\\r\\n`` by itself when asked).

    Yields
    ------
    file object
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        if "b" in mode:
            handle = os.fdopen(fd, mode)
        else:
            handle = os.fdopen(fd, mode, encoding=encoding, newline=newline)
        with handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        held = _hold_replaced(path)
        try:
            os.replace(tmp, path)
        finally:
            if held is not None:
                _release_behind(held)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def write_text_atomic(path, text: str, *, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` atomically and return the path."""
    with atomic_open(path, "w", encoding=encoding, newline="\n") as handle:
        handle.write(text)
    return Path(path)


def write_bytes_atomic(path, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically and return the path."""
    with atomic_open(path, "wb") as handle:
        handle.write(data)
    return Path(path)
