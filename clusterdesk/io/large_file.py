"""A large one-column file of plain numbers, read by pandas from the file itself.

pandas 3.1 reads a file given by its path on several threads (it maps the
file and parses pieces of it at once, for files of 5 MB and more); bytes
given in memory it reads on one.  So for a large file whose first lines are
one plain number each, the file is not read into memory first:

* its first two megabytes give the layout (:func:`~.fastpath.head_layout`,
  as the per-cell reader finds it) and the first values' text (when those
  hold only cells like ``51.257``, the whole file is read after pandas, for
  :mod:`.point_check`);
* its last lines must be numbers too (no trailing blank or comment lines);
* pandas reads the body from the path, while a second thread reads the file
  in pieces for its SHA-256 and looks for ``\\r`` (such files take the
  in-memory route, which checks line ends exactly);
* the result is kept only if the file still has the stamp it had before
  (device, inode, size, modification time) and the digest saw every byte,
  so that values and digest come from the same file.  A file modified so
  recently that a rewrite within the same tick of the file system's clock,
  to the same size, would leave the stamp as it was (the "racy" case that
  git's index also guards against) is not read this way: within two seconds
  for time stamps in whole seconds (FAT keeps even seconds), within a tenth
  of a second for finer ones (stamped from the kernel's clock, which moves
  in steps of a few milliseconds).

Anything else returns None, and the caller reads the file into memory as
usual (:func:`~.fastpath.read_fast_table`), so both routes give the same
result (tests/io/test_io_large_file.py).  The text of a row beyond the
first two megabytes (an excluded row) is read from the file when asked for.
"""

from __future__ import annotations

import hashlib
import os
import threading
import time
from dataclasses import dataclass

from ..errors import InputError
from .decoding import binary_kind, is_zip
from .delimited import is_comment, iter_records
from .fastpath import FastTable, head_layout, table_info
from .numbers import finish_column
from .pandas_column import head_points, pandas_usable, read_values, status_of
from .point_check import point_evidence

__all__ = ["LARGE_FILE_BYTES", "RECENT_SECONDS", "RECENT_SECONDS_FINE", "FileStamp", "read_large_column"]

#: Files of this size or more may take this route.
LARGE_FILE_BYTES = 8 << 20
_HEAD_BYTES = 2 << 20  # more than the fast path's head and its first block
_TAIL_BYTES = 1 << 16
_PIECE = 1 << 20  # bytes per read of the digest thread
#: Files modified less than this many seconds ago take the in-memory route: time stamps in
#: whole seconds, and finer ones.
RECENT_SECONDS = 2.0
RECENT_SECONDS_FINE = 0.1


@dataclass(frozen=True)
class FileStamp:
    """A file and its ``(st_dev, st_ino, st_size, st_mtime_ns)`` at one moment."""

    path: str
    stamp: tuple

    @classmethod
    def of(cls, path) -> FileStamp:
        """The stamp now (raises OSError as ``os.stat`` does)."""
        st = os.stat(path)
        return cls(str(path), (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns))

    @property
    def size(self) -> int:
        return self.stamp[2]

    def recent(self) -> bool:
        """Tell whether the file was modified so recently that a rewrite could keep this stamp."""
        modified = self.stamp[3]
        window = RECENT_SECONDS if modified % 10**9 == 0 else RECENT_SECONDS_FINE
        return time.time_ns() - modified < window * 1e9

    def unchanged(self) -> bool:
        """Tell whether the file still has this stamp."""
        try:
            return FileStamp.of(self.path) == self
        except OSError:
            return False


class _StreamDigest(threading.Thread):
    """SHA-256 of a file read in pieces on a second thread (file reads and hashlib release the GIL)."""

    def __init__(self, path: str):
        super().__init__(daemon=True)
        self._path = path
        self.hexdigest = ""
        self.n_bytes = -1
        self.has_cr = True
        self.start()

    def run(self) -> None:
        digest = hashlib.sha256()
        buffer = bytearray(_PIECE)  # one buffer for every piece: no new memory to map each time
        view = memoryview(buffer)
        n = 0
        has_cr = False
        try:
            with open(self._path, "rb", buffering=0) as handle:
                while got := handle.readinto(buffer):
                    digest.update(view[:got])
                    has_cr = has_cr or buffer.find(b"\r", 0, got) >= 0
                    n += got
        except OSError:
            return
        self.hexdigest, self.n_bytes, self.has_cr = digest.hexdigest(), n, has_cr


class _FileBody:
    """A file's body as :class:`~.fastpath.FastTable` reads it: the head from memory, the rest from the file on first need."""

    def __init__(self, head: bytes, start: int, stamp: FileStamp, where: str):
        self._data, self.start, self.end = head, start, stamp.size
        self._whole = len(head) == stamp.size
        self._stamp, self._where = stamp, where

    def __len__(self) -> int:
        return self.end - self.start

    def _covering(self, stop: int) -> bytes:
        if stop > len(self._data) and not self._whole:
            with open(self._stamp.path, "rb") as handle:
                data = handle.read()
            if len(data) != self._stamp.size or not self._stamp.unchanged():
                raise InputError(f"{self._where} changed while it was being read; read it again.")
            self._data, self._whole = data, True
        return self._data

    def whole(self) -> bytes:
        """The file's bytes (read now if need be; InputError if the file changed)."""
        return self._covering(self.end)

    def block(self, a: int, b: int) -> bytes:
        return self._covering(self.start + b)[self.start + a : self.start + b]

    def find(self, sub: bytes, a: int) -> int:
        k = self._data.find(sub, self.start + a, self.end)
        if k < 0 and not self._whole:
            k = self._covering(self.end).find(sub, self.start + a, self.end)
        return -1 if k < 0 else k - self.start


def _ends_with_a_number(stamp: FileStamp, where: str) -> bool:
    """Tell whether the file's last line is a value (no blank or comment lines to trim)."""
    with open(stamp.path, "rb") as handle:
        handle.seek(max(0, stamp.size - _TAIL_BYTES))
        tail = handle.read()
    last = tail[:-1] if tail.endswith(b"\n") else tail
    try:
        text = last[last.rfind(b"\n") + 1 :].decode("utf-8").rstrip("\r")
    except UnicodeDecodeError:
        return False
    return not is_comment(text) and bool(next(iter_records([text], None, where))[1])


def read_large_column(path, where: str, *, delimiter="auto", header: bool | None = None):
    """Read a large one-column file of plain numbers with pandas from the path, or decline.

    Parameters
    ----------
    path : str or pathlib.Path
    where : str
        The file's name, for messages.
    delimiter, header
        As for :func:`~.text_table.read_text_table`.

    Returns
    -------
    (FastTable, str) or None
        The table and the file's SHA-256 (hex); None when the file does not
        suit this route (then read it into memory as usual).
    """
    if delimiter not in ("auto", None) or not pandas_usable():
        return None
    try:
        stamp = FileStamp.of(path)
        if stamp.size < LARGE_FILE_BYTES or stamp.recent():
            return None
        with open(path, "rb") as handle:
            head = handle.read(_HEAD_BYTES)
        if is_zip(head) or binary_kind(head) is not None or head.isspace():
            return None
        found_head = head_layout(head, stamp.size, where, delimiter=delimiter, header=header)
        # pandas would refuse more columns or trailing lines, but only after reading the whole file
        if found_head is None or found_head[2].delimiter is not None or not _ends_with_a_number(stamp, where):
            return None
    except (OSError, InputError):  # the in-memory route says what is wrong with the file
        return None
    decoded, lines, found, offset = found_head
    start_line = found.data_start_line
    surely, ambiguous = head_points(lines[start_line - 1 : start_line + 49])
    if not surely and not ambiguous:
        return None  # no cell with a point among the first: the numpy kernels count them
    digest = _StreamDigest(stamp.path)
    values = read_values(stamp.path, skip_lines=start_line - 1)
    digest.join()
    if values is None or digest.has_cr or digest.n_bytes != stamp.size or not stamp.unchanged():
        return None
    body = _FileBody(head, offset, stamp, where)
    evidence = "point"
    if not surely:  # only cells like 51.257 among the first: the whole column decides (the file is read now)
        try:
            evidence = point_evidence(body.whole(), offset, stamp.size, values, False)
        except InputError:
            return None
        if evidence is None:
            return None
    status = status_of(values)
    parsed = finish_column(values, status, values.size, int(evidence == "point"), int(evidence == "ambiguous"), [], [])
    info = table_info(decoded, lines, found, 0, "vectorised (pandas C parser)", 0)
    table = FastTable(found.names, range(start_line, start_line + values.size), [parsed], info, body, start_line, None)
    return table, digest.hexdigest
