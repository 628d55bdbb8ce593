"""One plain column of numbers through pandas' C parser, where pandas is installed.

pandas is not a dependency of ClusterDesk.  Where pandas 3 or later is
installed its C tokenizer, whose float converter is backed by the fast_float
library (correctly rounded, so every value equals Python's ``float`` of the
same text), reads a large one-column file about twice as fast as the numpy
kernels of :mod:`.fastparse` (measured in ``tests/bench/bench_read.py``).  It
reads each line as one field (no delimiter, no quoting) and accepts exactly
what ``float`` accepts, after stripping spaces, except ``nan``: plain
numbers, exponents, ``inf``; it raises on anything else (text, blank lines,
decimal commas, comments), and then the numpy kernels take over, so that no
cell is read differently from the per-cell reader.
"""

from __future__ import annotations

import csv
import io
import re

import numpy as np

from . import reasons as R

__all__ = ["read_plain_column", "pandas_usable"]

#: Set to False to keep pandas out (tests use it to exercise the numpy kernels).
ENABLED = True
_SEPARATOR = "\x1f"  # a control character never found in a table: each line is one field
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


def read_plain_column(data: bytes, start: int, end: int, first_lines: list[str]):
    """Read lines [start, end) of ``data`` as one column of plain numbers with pandas.

    Parameters
    ----------
    data : bytes
        The whole file.
    start, end : int
        Byte span of the data rows (no header, no trailing blank lines).
    first_lines : list of str
        The first data lines as text; one of them must hold a point that is
        surely a decimal point (not ``1.234``), which is what the per-cell
        reader reports as a detected decimal point.

    Returns
    -------
    (values, status, n_point) or None
        ``values`` float64 and ``status`` uint8, one per line of the span;
        ``n_point`` is 1 (a decimal point was seen).  None when pandas is
        not usable here.
    """
    if end <= start or not pandas_usable() or data.find(_SEPARATOR.encode(), start, end) >= 0:
        return None
    if not any(_POINT.fullmatch(t) and not _AMBIGUOUS.fullmatch(t) for t in (line.strip() for line in first_lines)):
        return None  # no cell seen with a point that is surely a decimal point: the numpy kernels count them
    import pandas as pd

    try:
        frame = pd.read_csv(
            io.BufferedReader(_SpanReader(data, start, end)),
            header=None,
            names=["value"],
            sep=_SEPARATOR,
            dtype=np.float64,
            engine="c",
            na_filter=False,
            skip_blank_lines=False,
            quoting=csv.QUOTE_NONE,
        )
    except (ValueError, TypeError, OverflowError, pd.errors.ParserError):
        return None  # a cell pandas does not read as a number: the numpy kernels will say which
    values = frame["value"].to_numpy(dtype=np.float64, copy=False)
    del frame
    n_lines = values.size
    n_point = 1
    status = np.full(n_lines, R.KEPT, dtype=np.uint8)
    finite = np.isfinite(values)
    if not finite.all():
        status[~finite] = R.NOT_FINITE
    return values, status, n_point
