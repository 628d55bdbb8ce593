"""Is some point in a column surely a decimal point?  Decided from the whole column.

A cell like ``51.257`` reads as fifty-one point two five seven, or, with the
point as a thousands separator, as fifty-one thousand two hundred and
fifty-seven.  The per-cell reader (:func:`~.numbers.parse_column`) lets the
column's unambiguous cells decide: one cell such as ``0.5``, ``51.25``,
``1051.257``, ``051.257`` or ``5.1e3`` makes the point a decimal point
("detected"); a column whose points all sit in cells like ``51.257`` still
reads the point as the decimal mark, but says the choice was "ambiguous".

:func:`point_evidence` gives the same answer for a one-column file that
pandas has already read (every line a number), without a Python object per
line.  It predicts where each line would end if it were written like
``51.257`` (sign, one to three integer digits without a leading zero, the
point and three digits): that text is fixed by the value.  It then checks,
a block of lines at a time, that the line break, the point and the three
digits are where predicted.  A line break where predicted, with a point four
bytes before it and digits between, can only be the end of that very line
(a shorter line would leave fewer characters than its value needs), so a
line that passes is exactly of that form.  The first line that fails is read
as text and judged like the per-cell reader does; reading resumes after it.
"""

from __future__ import annotations

import numpy as np

from . import numbers as N
from .numbers import STRIP_CHARS, point_kind

__all__ = ["point_evidence"]

_LINES = 1 << 16  # most lines per vectorised step
_LINES_AFTER_ODD = 1 << 10  # lines in the step after a line read as text (then doubled)
_MOST_EXAMINED = 256  # lines read as text before giving up (the numpy kernels then count exactly)


def _like_three_decimals(buf: np.ndarray, values: np.ndarray, pos: int, end: int, eol: int):
    """Predicted line ends for ``values`` from byte ``pos``, and which lines have the predicted form.

    Returns ``(ends, ok)``: ``ends[i]`` is the offset of line i's break
    (``\\n``, or the ``\\r`` of ``\\r\\n``) if every line before it has the
    form; ``ok`` is True up to the first line that does not.
    """
    size = np.abs(values)
    ok = size >= 1.0  # one to three integer digits, the first not 0
    ok &= size < 1000.0
    length = np.add(size >= 10.0, size >= 100.0, dtype=np.int64)  # "d.ddd" is 5 bytes, "dd.ddd" 6, "ddd.ddd" 7
    length += values < 0
    length += 5 + eol
    ends = np.cumsum(length)
    ends += pos - eol
    ok &= ends < end
    if buf.size < 5:  # too short for any such line: every line is read as text
        ok[:] = False
        return ends, ok
    dot = ends - 4
    np.maximum(dot, 0, out=dot)
    np.minimum(dot, buf.size - 5, out=dot)
    ok &= buf[4:].take(dot) == (13 if eol == 2 else 10)
    ok &= buf.take(dot) == ord(".")
    for k in (1, 2, 3):
        digit = buf[k:].take(dot)
        digit -= ord("0")  # uint8: anything but 0-9 becomes 10 or more
        ok &= digit < 10
    return ends, ok


def point_evidence(data: bytes, start: int, end: int, values: np.ndarray, crlf: bool) -> str | None:
    """Judge the points of a one-column body that pandas read, as the per-cell reader would.

    Parameters
    ----------
    data : bytes
        The whole file.
    start, end : int
        Byte span of the data lines (``end`` after the last line's break, if any).
    values : ndarray of float64, shape (n_lines,)
        The number on each line, in order.
    crlf : bool
        True when the lines end with ``\\r\\n`` (every ``\\r`` is followed by ``\\n``).

    Returns
    -------
    str or None
        ``"point"`` (some cell's point is surely a decimal point),
        ``"ambiguous"`` (every point sits in a cell like ``51.257``, and
        there is one), ``"none"`` (no cell has a point), or None when too
        many lines had to be read as text (the caller then counts exactly).
    """
    buf = np.frombuffer(data, dtype=np.uint8)
    eol = 2 if crlf else 1
    pos, i, n = start, 0, values.size
    examined = 0
    ambiguous = False
    size = _LINES
    while i < n:
        block = values[i : i + size]
        ends, ok = _like_three_decimals(buf, block, pos, end, eol)
        if ok.all():
            ambiguous = True
            pos = int(ends[-1]) + eol
            i += block.size
            size = min(2 * size, _LINES)
            continue
        size = _LINES_AFTER_ODD
        first = int(np.argmin(ok))
        if first:
            ambiguous = True
            pos = int(ends[first - 1]) + eol
        examined += 1
        if examined > _MOST_EXAMINED:
            return None
        stop = data.find(b"\n", pos, end)
        stop = end if stop < 0 else stop
        kind = point_kind(data[pos:stop].decode("utf-8", "replace").strip(STRIP_CHARS))
        if kind == N.POINT:
            return "point"
        ambiguous = ambiguous or kind == N.AMBIGUOUS_POINT
        pos = stop + 1
        i += first + 1
    if pos < end:
        return None  # pandas' lines and the line breaks disagree: let the exact count decide
    return "ambiguous" if ambiguous else "none"
