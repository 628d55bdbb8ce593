"""One plain column of numbers through pandas' C parser, where pandas is installed.

Where pandas 3 or later is installed its C tokenizer, whose float converter
is backed by the fast_float library (correctly rounded, so every value
equals Python's ``float`` of the same text), reads a large one-column file
about twice as fast as the numpy kernels of :mod:`.fastparse` (measured in
``tests/bench/bench_read.py``).  It reads each line as one field (no
delimiter, no quoting) and accepts exactly what ``float`` accepts, after
stripping spaces, except ``nan``: plain numbers, exponents, ``inf``; it
raises on anything else (text, blank lines, decimal commas, comments,
quotes), and then the numpy kernels take over, so that no cell is read
differently from the per-cell reader.

The file is read in one call: reading it in blocks of rows into one array
would hold less memory, but pandas then gives its buffers back and takes
them again for every block, and the page faults cost more than the copy
that joins its blocks (measured).  Whether the column's ``"."`` is surely a decimal point is decided as the per-cell reader
decides it: from a cell like ``12.75`` among the first lines, or else, when
those lines hold only cells like ``51.257``, from the whole column
(:mod:`.point_check`).
"""

from __future__ import annotations

import csv
import io
import os
import re
from dataclasses import dataclass

import numpy as np

from . import reasons as R
from .point_check import point_evidence

__all__ = ["OnDisk", "PlainColumn", "read_plain_column", "pandas_usable"]

#: Set to False to keep pandas out (tests use it to exercise the numpy kernels).
ENABLED = True
_SEPARATOR = "\x1f"  # a control character never found in a table: each line is one field
#: Bodies with only cells like 51.257 in their first lines go to pandas from this size on;
#: below it the numpy kernels, which count such cells as they convert, are as fast as pandas
#: plus the whole-column check (measured: 1 MB about even, 7 MB 20 % faster with pandas).
WHOLE_COLUMN_CHECK_BYTES = 1 << 20
#: Bodies from this size on are read by pandas from the file itself (on several threads in
#: pandas 3.1, which does so for files of 5 MB and more), when the file is unchanged.
ON_DISK_BYTES = 8 << 20
_POINT = re.compile(r"[+-]?(?:[0-9]*\.[0-9]*)")
_AMBIGUOUS = re.compile(r"[+-]?[1-9][0-9]{0,2}\.[0-9]{3}")


def pandas_usable() -> bool:
    """Tell whether pandas (3.0 or later, with the correctly rounded converter) can be imported."""
    if not ENABLED:
        return False
    try:
        import pandas
    except ImportError:
        return False
    return int(pandas.__version__.split(".")[0]) >= 3


@dataclass(frozen=True)
class PlainColumn:
    """A one-column body read by pandas.

    Attributes
    ----------
    values : ndarray of float64, shape (n_lines,)
    status : ndarray of uint8, shape (n_lines,)
        KEPT, or NOT_FINITE for ``inf`` cells.
    plain_point, plain_ambiguous : int
        1 when some cell's point is surely a decimal point (resp. when the
        points all sit in cells like ``1.234``), else 0: all that the
        column's conventions depend on (:func:`~.numbers.finish_column`).
    """

    values: np.ndarray
    status: np.ndarray
    plain_point: int
    plain_ambiguous: int


@dataclass(frozen=True)
class OnDisk:
    """The file that a bytes object was read from, as it was just before reading.

    pandas 3.1 reads a large file given by its path on several threads (it
    maps the file and parses pieces at once); given bytes in memory it reads
    on one.  The file is then read a second time, so the values are kept
    only if the file is still the one whose bytes were read and hashed
    (same device, inode, size and modification time, :meth:`unchanged`).

    Attributes
    ----------
    path : str
    stamp : tuple of int
        ``(st_dev, st_ino, st_size, st_mtime_ns)`` before the bytes were read.
    """

    path: str
    stamp: tuple

    @staticmethod
    def stamp_of(path) -> tuple:
        """The stamp of a file now (raises OSError as ``os.stat`` does)."""
        st = os.stat(path)
        return (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns)

    def unchanged(self, n_bytes: int) -> bool:
        """Tell whether the file still has the stamp, and ``n_bytes`` bytes (what was read)."""
        try:
            now = self.stamp_of(self.path)
        except OSError:
            return False
        return now == self.stamp and now[2] == n_bytes


class _SpanReader(io.RawIOBase):
    """A read-only file over bytes [start, end) of a bytes object, without copying them."""

    def __init__(self, data: bytes, start: int, end: int):
        self._view = memoryview(data)[start:end]
        self._pos = 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        n = min(len(buffer), len(self._view) - self._pos)
        buffer[:n] = self._view[self._pos : self._pos + n]
        self._pos += n
        return n


def _read_values(source, skip_lines: int = 0) -> np.ndarray | None:
    """The number on each line of a file (path or file object), or None when pandas does not read them all as numbers."""
    import pandas as pd

    try:
        frame = pd.read_csv(
            source,
            header=None,
            names=["value"],
            skiprows=skip_lines,
            sep=_SEPARATOR,
            dtype=np.float64,
            engine="c",
            na_filter=False,
            skip_blank_lines=False,
            quoting=csv.QUOTE_NONE,
        )
    except (ValueError, TypeError, OverflowError, OSError, pd.errors.ParserError):
        return None  # a cell pandas does not read as a number: the numpy kernels will say which
    if not isinstance(frame.index, pd.RangeIndex):
        return None  # every line held the separator, and pandas took the first field as the index
    return frame["value"].to_numpy(dtype=np.float64, copy=False)


def _read_body(data: bytes, start: int, end: int, on_disk: OnDisk | None, skip_lines: int) -> np.ndarray | None:
    """The number on each line of [start, end): from the file on disk when it is large and unchanged, else from the bytes."""
    if on_disk is not None and end == len(data) and end - start >= ON_DISK_BYTES:
        values = _read_values(on_disk.path, skip_lines)
        if on_disk.unchanged(len(data)):
            return values
    if end == len(data):  # a BytesIO shares the bytes (no copy) and reads them in C
        source = io.BytesIO(data)
        source.seek(start)
    else:
        source = io.BufferedReader(_SpanReader(data, start, end))
    return _read_values(source)


def _status(values: np.ndarray) -> np.ndarray:
    """KEPT for finite values, NOT_FINITE otherwise (all zeros, not even written, when every value is finite)."""
    status = np.zeros(values.size, dtype=np.uint8)
    if not np.isfinite(np.add.reduce(values)):  # a finite sum means no inf or nan anywhere
        status[~np.isfinite(values)] = R.NOT_FINITE
    return status


def read_plain_column(
    data: bytes,
    start: int,
    end: int,
    first_lines: list[str],
    *,
    crlf: bool = False,
    on_disk: OnDisk | None = None,
    skip_lines: int = 0,
) -> PlainColumn | None:
    """Read lines [start, end) of ``data`` as one column of plain numbers with pandas.

    Parameters
    ----------
    data : bytes
        The whole file.
    start, end : int
        Byte span of the data rows (no header, no trailing blank lines).
    first_lines : list of str
        The first data lines as text (non-empty list).  One of them must hold
        a point that is surely a decimal point (``12.75``); or, in a body of
        :data:`WHOLE_COLUMN_CHECK_BYTES` or more, they may hold only cells
        like ``51.257``, and the whole column then decides.
    crlf : bool, default False
        True when the lines end with ``\\r\\n`` (every ``\\r`` is followed by ``\\n``).
    on_disk : OnDisk, optional
        The file ``data`` was read from; a body of :data:`ON_DISK_BYTES` or
        more that ends the file is then read by pandas from the file (on
        several threads), and kept if the file is unchanged.
    skip_lines : int, default 0
        Physical lines of the file before ``start`` (header, preamble).

    Returns
    -------
    PlainColumn or None
        None when pandas is not usable here, or a cell is not a plain
        number, or the column's points could not be judged cheaply (the
        numpy kernels then read the file).
    """
    if end <= start or not first_lines or not pandas_usable():
        return None
    head = [line.strip() for line in first_lines]
    surely = any(_POINT.fullmatch(t) and not _AMBIGUOUS.fullmatch(t) for t in head)
    if not surely and (end - start < WHOLE_COLUMN_CHECK_BYTES or not any(_AMBIGUOUS.fullmatch(t) for t in head)):
        return None  # no cell with a point seen, or a small body: the numpy kernels count them
    values = _read_body(data, start, end, on_disk, skip_lines)
    if values is None:
        return None
    evidence = "point" if surely else point_evidence(data, start, end, values, crlf)
    if evidence is None:
        return None
    return PlainColumn(values, _status(values), int(evidence == "point"), int(evidence == "ambiguous"))
