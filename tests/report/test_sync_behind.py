"""Writing with the data put on disk by a helper thread: every byte in order, the helper's errors raised."""

from __future__ import annotations

import threading

import numpy as np
import pytest

from clusterdesk.report import sync_behind
from clusterdesk.report.sync_behind import SyncBehind


def test_every_block_is_written_in_order(tmp_path, rng):
    blocks = [rng.integers(0, 256, size, dtype=np.uint8) for size in rng.integers(0, 5_000, 60)]
    path = tmp_path / "blocks.bin"
    with open(path, "wb") as handle, SyncBehind(handle, every=10_000) as out:  # a sync every few blocks
        for block in blocks:
            out.write(block)
        out.write(b"tail")
    assert path.read_bytes() == b"".join(b.tobytes() for b in blocks) + b"tail"


def test_a_failed_sync_is_raised_in_the_writing_thread(tmp_path, monkeypatch):
    tried = threading.Event()

    def failing_sync(fd):
        tried.set()
        raise OSError(28, "No space left on device (simulated)")

    monkeypatch.setattr(sync_behind, "_sync", failing_sync)
    with open(tmp_path / "full.bin", "wb") as handle:
        with pytest.raises(OSError, match="simulated"):
            with SyncBehind(handle, every=1) as out:
                out.write(b"abc")
                assert tried.wait(10.0)


class _FailingFile:
    """A binary file whose writes fail once ``limit`` bytes are written (a full disk)."""

    def __init__(self, path, limit):
        self._inner = open(path, "wb")
        self._limit = limit
        self.written = 0

    def fileno(self):
        return self._inner.fileno()

    def write(self, block):
        size = memoryview(block).nbytes
        if self.written + size > self._limit:
            raise OSError(28, "No space left on device (simulated write)")
        self.written += size
        return self._inner.write(block)

    def flush(self):
        self._inner.flush()

    def close(self):
        self._inner.close()


def test_a_failed_write_is_raised_in_the_calling_thread(tmp_path):
    # Blocks are written on a helper thread: its error must reach the caller,
    # at a later write or on leaving, never be lost.
    handle = _FailingFile(tmp_path / "full.bin", limit=10_000)
    try:
        with pytest.raises(OSError, match="simulated write"):
            with SyncBehind(handle) as out:
                for _ in range(50):
                    out.write(b"x" * 1_000)
        assert handle.written == 10_000  # everything up to the failure, in order
    finally:
        handle.close()
