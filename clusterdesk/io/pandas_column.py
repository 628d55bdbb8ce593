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

The body is read in one call.  Reading it in blocks of rows into one array
would hold less memory, but pandas then frees and takes back its buffers
for every block, and those page faults cost more than the copy that joins
its blocks (measured on 10**7 rows).  Whether the column's ``"."`` is surely
a decimal point is decided as the per-cell reader decides it: from a cell
like ``12.75`` among the first lines or, when those lines hold only cells
like ``51.257``, from the whole column (:mod:`.point_check`).
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass

import numpy as np

from . import reasons as R
from .point_check import point_evidence

__all__ = ["PlainColumn", "read_plain_column", "read_values", "status_of", "head_points", "pandas_usable"]

#: Set to False to keep pandas out (tests use it to exercise the numpy kernels).
ENABLED = True
_SEPARATOR = "\x1f"  # a control character never found in a table: each line is one field
#: Bodies with only cells like 51.257 in their first lines go to pandas from this size on;
#: below it the numpy kernels, which count such cells as they convert, are as fast as pandas
#: plus the whole-column check (measured: 1 MB about even, 7 MB 20 % faster with pandas).
WHOLE_COLUMN_CHECK_BYTES = 1 << 20
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


def read_values(source, skip_lines: int = 0) -> np.ndarray | None:
    """The number on each line of a file, or None when pandas does not read them all as numbers.

    Parameters
    ----------
    source : str or file object
        A path (pandas 3.1 reads large files from a path on several threads)
        or a binary file object.
    skip_lines : int, default 0
        Physical lines to skip first (header, preamble).

    Returns
    -------
    ndarray of float64, shape (n_lines,), or None
    """
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


def _in_memory(data: bytes, start: int, end: int):
    """A binary file object over bytes [start, end), without copying them."""
    if end == len(data):  # a BytesIO shares the bytes and reads them in C
        source = io.BytesIO(data)
        source.seek(start)
        return source
    return io.BufferedReader(_SpanReader(data, start, end))


def status_of(values: np.ndarray) -> np.ndarray:
    """KEPT for finite values, NOT_FINITE otherwise (all zeros, not even written, when every value is finite).

    Parameters
    ----------
    values : ndarray of float64, shape (n,)

    Returns
    -------
    ndarray of uint8, shape (n,)
    """
    status = np.zeros(values.size, dtype=np.uint8)
    with np.errstate(over="ignore", invalid="ignore"):  # inf - inf, or a sum too large: then look at each value
        total = np.add.reduce(values)
    if not np.isfinite(total):  # a finite sum means no inf or nan anywhere
        status[~np.isfinite(values)] = R.NOT_FINITE
    return status


def head_points(first_lines: list[str]) -> tuple[bool, bool]:
    """What the points of the first lines say about the decimal mark.

    Parameters
    ----------
    first_lines : list of str
        The first data lines of a one-column file.

    Returns
    -------
    (bool, bool)
        Whether a cell's point is surely a decimal point (``12.75``), and
        whether a cell is like ``1.234`` (the point could group thousands).
    """
    cells = [line.strip() for line in first_lines]
    surely = any(_POINT.fullmatch(t) and not _AMBIGUOUS.fullmatch(t) for t in cells)
    return surely, any(_AMBIGUOUS.fullmatch(t) for t in cells)


def read_plain_column(data: bytes, start: int, end: int, first_lines: list[str], *, crlf: bool = False) -> PlainColumn | None:
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

    Returns
    -------
    PlainColumn or None
        None when pandas is not usable here, or a cell is not a plain
        number, or the column's points could not be judged cheaply (the
        numpy kernels then read the file).
    """
    if end <= start or not first_lines or not pandas_usable():
        return None
    surely, ambiguous = head_points(first_lines)
    if not surely and (not ambiguous or end - start < WHOLE_COLUMN_CHECK_BYTES):
        return None  # no cell with a point seen, or a small body: the numpy kernels count them
    values = read_values(_in_memory(data, start, end))
    if values is None:
        return None
    evidence = "point" if surely else point_evidence(data, start, end, values, crlf)
    if evidence is None:
        return None
    return PlainColumn(values, status_of(values), int(evidence == "point"), int(evidence == "ambiguous"))
