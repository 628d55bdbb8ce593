"""Putting a long file's data on disk while it is still being written.

A gigabyte of table text would wait more than a second for the final flush
to disk (``fsync``), after all the formatting. Here a helper thread asks
the system to put the data written so far on disk every ``SYNC_EVERY``
bytes, while the writing thread goes on formatting (a flush waits on the
disk, not on the processor, and runs without the GIL), so that the final
flush has little left to do. The file is written by the calling thread only.
"""

from __future__ import annotations

import os
import threading

__all__ = ["SyncBehind", "SYNC_EVERY"]

#: Bytes written between requests to put the data on disk.
SYNC_EVERY = 64 << 20

_sync = getattr(os, "fdatasync", os.fsync)


class SyncBehind:
    """Write blocks to an open binary file, syncing the written part on a helper thread.

    Use as a context manager around the writes; on leaving, the helper has
    stopped (its error, if any, is raised). The caller still flushes and
    syncs the file as a whole (:func:`clusterdesk.atomic.atomic_open` does).

    Parameters
    ----------
    handle : binary file object
    every : int, default SYNC_EVERY
        Bytes written between sync requests.
    """

    def __init__(self, handle, every: int = SYNC_EVERY):
        self._handle = handle
        self._fd = handle.fileno()
        self._every = every
        self._unsynced = 0
        self._wanted = threading.Event()
        self._stop = False
        self._error = None
        self._thread = threading.Thread(target=self._run, name="clusterdesk-sync-behind", daemon=True)

    def __enter__(self):
        self._thread.start()
        return self

    def write(self, block) -> None:
        """Write a bytes-like block; every ``every`` bytes, ask the helper to sync what is written."""
        if self._error is not None:
            raise self._error
        self._handle.write(block)
        self._unsynced += memoryview(block).nbytes
        if self._unsynced >= self._every:
            self._handle.flush()  # the helper syncs what has reached the system
            self._unsynced = 0
            self._wanted.set()

    def __exit__(self, kind, error, trace):
        self._stop = True
        self._wanted.set()
        self._thread.join()
        if self._error is not None and kind is None:
            raise self._error
        return False

    def _run(self) -> None:
        while True:
            self._wanted.wait()
            self._wanted.clear()
            if self._stop:
                return
            try:
                _sync(self._fd)
            except Exception as error:  # handed to the writing thread
                self._error = error
                return
