"""Writing a long file on helper threads while the caller goes on formatting it.

A gigabyte of table text takes about a second to copy into the file and
would wait more than a second for the final flush to disk (``fsync``), after
all the formatting. Here the caller hands each formatted block to a writer
thread (a bounded queue keeps at most ``QUEUE_BLOCKS`` blocks in waiting), and
a second helper asks the system to put the data written so far on disk every
``SYNC_EVERY`` bytes. Writing and flushing wait on memory and the disk, not on
the processor, and run without the GIL, so they overlap the formatting; the
final flush has little left to do.
"""

from __future__ import annotations

import os
import queue
import threading

__all__ = ["SyncBehind", "SYNC_EVERY", "QUEUE_BLOCKS"]

#: Bytes written between requests to put the data on disk.
SYNC_EVERY = 64 << 20
#: Blocks that may wait for the writer thread (the caller waits beyond that).
QUEUE_BLOCKS = 8

_sync = getattr(os, "fdatasync", os.fsync)
_DONE = object()


class SyncBehind:
    """Write blocks to an open binary file on a writer thread, syncing the written part on another.

    Use as a context manager around the writes; on leaving, every block has
    been written and the helpers have stopped (the first error of either, if
    any, is raised; a block handed over after an error is raised by
    :meth:`write`). The caller still flushes and syncs the file as a whole
    (:func:`clusterdesk.atomic.atomic_open` does). Blocks are written in the
    order given; a block must not be changed after it is handed over.

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
        self._blocks = queue.Queue(maxsize=QUEUE_BLOCKS)
        self._wanted = threading.Event()
        self._stop = False
        self._error = None
        self._writer = threading.Thread(target=self._write_all, name="clusterdesk-writer", daemon=True)
        self._syncer = threading.Thread(target=self._sync_all, name="clusterdesk-sync-behind", daemon=True)

    def __enter__(self):
        self._syncer.start()
        self._writer.start()
        return self

    def write(self, block) -> None:
        """Hand a bytes-like block to the writer thread (waits while ``QUEUE_BLOCKS`` are waiting)."""
        if self._error is not None:
            raise self._error
        self._blocks.put(block)

    def __exit__(self, kind, error, trace):
        self._blocks.put(_DONE)
        self._writer.join()
        self._stop = True
        self._wanted.set()
        self._syncer.join()
        if self._error is not None and kind is None:
            raise self._error
        return False

    def _write_all(self) -> None:
        unsynced = 0
        while True:
            block = self._blocks.get()
            if block is _DONE:
                return
            if self._error is not None:
                continue  # drain: the caller sees the error at its next write or on leaving
            try:
                self._handle.write(block)
                unsynced += memoryview(block).nbytes
                if unsynced >= self._every:
                    self._handle.flush()  # the sync helper puts what reached the system on disk
                    unsynced = 0
                    self._wanted.set()
            except Exception as error:
                self._error = error

    def _sync_all(self) -> None:
        while True:
            self._wanted.wait()
            self._wanted.clear()
            if self._stop:
                return
            try:
                _sync(self._fd)
            except Exception as error:  # handed to the writing thread
                self._error = error
