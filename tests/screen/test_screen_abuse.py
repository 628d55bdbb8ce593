"""A folder of files that cannot be read screens to completion, with a reason on every such file.

Permission denied and read errors are simulated by replacing the reading of
two files (running as root, chmod 000 does not stop reads), so these runs use
one worker (in this process). A named pipe and a dangling symbolic link are
real. Good files in the same folder must still be fitted.
"""

from __future__ import annotations

import errno
import os
import pathlib
from pathlib import Path

import pytest

from clusterdesk.screen import screen

from screen_helpers import SETTINGS

pytestmark = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes (POSIX)")


@pytest.fixture
def abused_folder(tmp_path):
    """Good, empty, binary, a named pipe, a dangling link, and two files whose reading will fail."""
    folder = tmp_path / "abused"
    folder.mkdir()
    (folder / "good.csv").write_text("depth_m\n" + "\n".join(f"{1 + (i % 7) * 0.5 + (i % 3) * 0.01:.2f}"
                                                            for i in range(60)) + "\n", encoding="utf-8")
    (folder / "empty.csv").write_bytes(b"")
    (folder / "binary.dat").write_bytes(bytes(range(256)) * 8)
    os.mkfifo(folder / "pipe.csv")
    (folder / "dangling.csv").symlink_to(folder / "nowhere.csv")
    for name in ("denied.csv", "failing.tsv", "enormous.csv"):
        (folder / name).write_text("x\n1\n2\n3\n4\n", encoding="utf-8")
    return folder


@pytest.fixture
def failing_reads(monkeypatch, abused_folder):
    """Reading denied.csv raises PermissionError, failing.tsv an I/O error, enormous.csv MemoryError."""
    real = pathlib.Path.read_bytes
    failures = {
        "denied.csv": PermissionError(errno.EACCES, "Permission denied"),
        "failing.tsv": OSError(errno.EIO, "Input/output error"),
        "enormous.csv": MemoryError(),
    }

    def read_bytes(self):
        failure = failures.get(self.name) if self.parent == abused_folder else None
        if failure is not None:
            raise failure
        return real(self)

    monkeypatch.setattr(pathlib.Path, "read_bytes", read_bytes)
    return failures


def test_every_unreadable_file_gets_a_reason_and_the_good_one_is_fitted(abused_folder, failing_reads):
    result = screen([abused_folder], settings=SETTINGS, workers=1)
    assert not result.cancelled
    rows = {Path(r.file).name: r for r in result.rows}
    expected = {"good.csv", "empty.csv", "binary.dat", "pipe.csv", "dangling.csv", "denied.csv", "failing.tsv",
                "enormous.csv"}
    assert set(rows) == expected
    assert rows["good.csv"].status == "ok" and rows["good.csv"].rows_kept == 60
    failed = {name: row.reason for name, row in rows.items() if name != "good.csv"}
    assert all(rows[name].status == "failed" and reason for name, reason in failed.items()), failed
    assert "Permission denied" in failed["denied.csv"] and "could not be opened" in failed["denied.csv"]
    assert "Input/output error" in failed["failing.tsv"]
    assert "too large" in failed["enormous.csv"]
    assert "not a regular file" in failed["pipe.csv"]
    assert "no file" in failed["dangling.csv"].lower()
    assert "empty" in failed["empty.csv"]
    assert "binary" in failed["binary.dat"]
    assert result.counts == {"ok": 1, "failed": 7, "skipped": 0}
