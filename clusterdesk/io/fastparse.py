"""Numpy kernels that read plain numbers out of a block of bytes.

A block is a few megabytes of whole lines.  It is split into lines and
fields (:func:`split_block`); :func:`parse_block_fields` then finds, for each
field of the form ``[+-]digits[.digits]`` with at most 15 digits, the
position of its decimal point, and converts all such fields at once
(:func:`_values`): the digits are summed with power-of-ten weights into an
integer ``m < 10**15`` held exactly in float64 and divided by ``10**F``
(``F <= 15``, exact), a single correctly rounded operation, so the result is
the float64 nearest to the decimal text, exactly as ``float(text)`` gives.

Two ways lead to the fields' shapes.  A block that holds nothing but digits,
points, signs, line breaks and delimiters (checked with ``bytes.translate``)
takes the quick way: the point is looked for at a few positions from the end
of each field, and the count of points found is checked against the block's
count.  Any other block takes the exact way, with running counts of the
character classes.  Fields that are not plain numbers are reported as odd and
read by the per-cell reader.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["BlockFields", "split_block", "parse_block_fields", "MAX_DIGITS"]

MAX_DIGITS = 15
_PAD = 32
_DOT, _SIGN, _OTHER = 1, 2, 3
_POW10 = 10.0 ** np.arange(2 * MAX_DIGITS + 1)


@dataclass
class BlockFields:
    """A block split into lines and fields.

    Attributes
    ----------
    block : bytes
    pad : ndarray of uint8
        The block with 32 bytes of padding on each side (indices stay valid).
    line_start, line_end : ndarray of int64, shape (n_lines,)
        Offsets in ``block`` (end excludes ``\\r\\n``).
    regular : ndarray of bool, shape (n_lines,)
        Lines with the expected number of delimiters.
    bounds : list of (start, end) arrays, one pair per column
        Field offsets for the regular lines.
    """

    block: bytes
    pad: np.ndarray
    line_start: np.ndarray
    line_end: np.ndarray
    regular: np.ndarray
    bounds: list


def split_block(block: bytes, delimiter: str | None, n_columns: int) -> BlockFields:
    """Split a block of whole lines into lines and fields.

    Parameters
    ----------
    block : bytes
        Whole lines (the last may lack its ``\\n``).
    delimiter : str or None
        A one-character delimiter, or None for one field per line.
    n_columns : int

    Returns
    -------
    BlockFields
    """
    pad = np.frombuffer(b"\n" * _PAD + block + b"\n" * _PAD, dtype=np.uint8)
    buf = pad[_PAD : _PAD + len(block)]
    ends = np.flatnonzero(buf == 10)
    if not block.endswith(b"\n"):
        ends = np.append(ends, len(block))
    n = ends.size
    line_start = np.empty(n, dtype=np.int64)
    line_start[:1] = 0
    line_start[1:] = ends[:-1] + 1
    line_end = ends
    if b"\r" in block:
        line_end -= (line_end > line_start) & (pad[_PAD - 1 :][line_end] == 13)
    if delimiter is None:
        return BlockFields(block, pad, line_start, line_end, np.ones(n, dtype=bool), [(line_start, line_end)])
    positions = np.flatnonzero(buf == ord(delimiter))
    per_line = n_columns - 1
    grid = None
    if positions.size == n * per_line and per_line:
        grid = positions.reshape(n, per_line)
        if not (np.all(grid[:, 0] >= line_start) and np.all(grid[:, -1] < line_end)):
            grid = None
    if grid is not None or (per_line == 0 and positions.size == 0):
        regular = np.ones(n, dtype=bool)
        grid = grid if grid is not None else np.empty((n, 0), dtype=np.int64)
    else:
        owner = np.searchsorted(line_end, positions)
        counts = np.bincount(owner, minlength=n)[:n]
        regular = counts == per_line
        grid = positions[regular[np.minimum(owner, n - 1)] & (owner < n)].reshape(-1, per_line)
    starts, stops = line_start[regular], line_end[regular]
    bounds = []
    for j in range(n_columns):
        a = starts if j == 0 else grid[:, j - 1] + 1
        b = stops if j == n_columns - 1 else grid[:, j]
        bounds.append((a, b))
    return BlockFields(block, pad, line_start, line_end, regular, bounds)


class _Shape:
    """Where the digits of each field are.

    ``n_frac`` is an int when every field has that many digits after its
    point, else an array; ``ok`` is None when every field is convertible.
    """

    __slots__ = ("start", "end", "dot", "s", "n_int", "n_frac", "signed", "ok", "n_dot")

    def __init__(self, start, end, dot, signed, n_frac=None, n_dot=None):
        self.start, self.end, self.dot, self.signed = start, end, dot, signed
        self.s = start + signed if signed is not None else start
        self.n_int = dot - self.s
        if n_frac is None:
            n_frac = end - dot
            n_frac -= 1
            np.maximum(n_frac, 0, out=n_frac)
        self.n_frac = n_frac
        self.n_dot = n_dot
        most_int = int(self.n_int.max(initial=0))
        most_frac = n_frac if isinstance(n_frac, int) else int(n_frac.max(initial=0))
        fewest = int(self.n_int.min(initial=1)) + (n_frac if isinstance(n_frac, int) else int(n_frac.min(initial=1)))
        self.ok = None
        if most_int + most_frac > MAX_DIGITS or fewest < 1 or (self.n_int.size and int(self.n_int.min()) < 0):
            digits = self.n_int + n_frac
            ok = (digits >= 1) & (digits <= MAX_DIGITS) & (self.n_int >= 0)
            if most_int + most_frac > MAX_DIGITS:
                longest_frac = most_frac if isinstance(n_frac, int) else int(n_frac[ok].max(initial=0))
                ok &= self.n_int + longest_frac <= MAX_DIGITS
            self.ok = ok

    def select(self, idx: np.ndarray) -> "_Shape":
        """The shape of a subset of the fields."""
        out = _Shape.__new__(_Shape)
        out.start, out.end, out.dot, out.s, out.n_int = (x[idx] for x in (self.start, self.end, self.dot, self.s, self.n_int))
        out.n_frac = self.n_frac if isinstance(self.n_frac, int) else self.n_frac[idx]
        out.signed = None if self.signed is None else self.signed[idx]
        out.ok, out.n_dot = None, None
        return out


def _values(digits: np.ndarray, shape: _Shape) -> np.ndarray:
    """Exact values of plain digit strings (``digits`` = padded block bytes minus 48)."""
    dot, n_int, n_frac = shape.dot, shape.n_int, shape.n_frac
    mantissa = np.zeros(dot.size)
    if dot.size == 0:
        return mantissa
    uniform = isinstance(n_frac, int)
    frac = n_frac if uniform else int(n_frac.max())
    fewest_int = int(n_int.min())
    term = np.empty(dot.size)
    for o in range(1, int(n_int.max()) + 1):
        np.multiply(digits[_PAD - o :].take(dot), _POW10[frac + o - 1], out=term)
        if o > fewest_int:
            np.add(mantissa, term, out=mantissa, where=n_int >= o)
        else:
            mantissa += term
    for o in range(1, frac + 1):
        np.multiply(digits[_PAD + o :].take(dot), _POW10[frac - o], out=term)
        if uniform:
            mantissa += term
        else:
            np.add(mantissa, term, out=mantissa, where=n_frac >= o)
    mantissa /= _POW10[frac]
    return mantissa


def _convert(pad, digits, shape: _Shape):
    """Values of fields known to be plain: (value, n_dot, n_ambiguous)."""
    value = _values(digits, shape)
    buf = pad[_PAD:]
    if shape.signed is not None:
        np.negative(value, out=value, where=buf.take(shape.start) == ord("-"))
    n_dot = shape.n_dot if shape.n_dot is not None else int(np.count_nonzero(shape.dot < shape.end))
    n_int, n_frac = shape.n_int, shape.n_frac
    if isinstance(n_frac, int):
        if n_frac != 3 or n_int.size == 0:
            return value, n_dot, 0
        candidates = None if (int(n_int.max()) <= 3 and int(n_int.min()) >= 1) else (n_int <= 3) & (n_int >= 1)
    else:
        candidates = (n_frac == 3) & (n_int <= 3) & (n_int >= 1)
        if not candidates.any():
            return value, n_dot, 0
    lead = buf.take(shape.s) != ord("0")
    if candidates is not None:
        lead &= candidates
    return value, n_dot, int(np.count_nonzero(lead))


def _quick_dots(pad, start, end, signed, total_dots_left):
    """Find each field's point near its end; returns (shape, n_found)."""
    length = end - start
    if total_dots_left == 0 or end.size == 0:
        return _Shape(start, end, end, signed, 0, 0), 0
    first = int(np.argmax(length > 0))
    text = pad[_PAD + start[first] : _PAD + end[first]].tobytes()
    if b"." in text:
        guess = len(text) - 1 - text.rindex(b".")
        hit = pad[_PAD - 1 - guess :].take(end) == 46
        if int(length.min()) <= guess:
            hit &= length > guess
        n_hit = int(np.count_nonzero(hit))
        if n_hit == end.size:
            return _Shape(start, end, end - (1 + guess), signed, guess, n_hit), n_hit
        if n_hit == total_dots_left:
            dot = end.copy()
            np.subtract(end, 1 + guess, out=dot, where=hit)
            return _Shape(start, end, dot, signed, None, n_hit), n_hit
    found = 0
    dot = end.copy()
    for k in range(min(int(length.max()), MAX_DIGITS + 2)):
        hit = (pad[_PAD - 1 - k :].take(end) == 46) & (length > k) & (dot == end)
        n_hit = int(np.count_nonzero(hit))
        if n_hit:
            np.subtract(end, 1 + k, out=dot, where=hit)
            found += n_hit
            if found == total_dots_left:
                break
    return _Shape(start, end, dot, signed, None, found), found


def parse_block_fields(fields: BlockFields, delimiter: str | None):
    """Convert the plain-number fields of every column of a block.

    A regular line with any field that is not a plain number is left whole
    to the per-cell reader (so that its cells are read the same way).

    Parameters
    ----------
    fields : BlockFields
    delimiter : str or None

    Returns
    -------
    odd : ndarray of bool, shape (n_regular_lines,)
        Regular lines for the per-cell reader.
    columns : list of tuples, one per column
        ``(idx, value, n_dot, n_ambiguous)``: ``idx`` are the regular lines
        converted (None: all of them, in order), ``value`` their float64
        values; ``n_dot`` counts those with a point and ``n_ambiguous`` those
        like ``1.234``.
    """
    shapes = _quick_shapes(fields, delimiter)
    if shapes is None:
        shapes = _exact_shapes(fields)
    n = fields.bounds[0][0].size
    odd = np.zeros(n, dtype=bool)
    any_empty = False
    for shape, plain in shapes:
        length = shape.end - shape.start
        nonempty = length > 0
        if shape.ok is not None:
            odd |= nonempty & ~shape.ok
        if plain is not None:
            odd |= nonempty & ~plain
        any_empty = any_empty or not nonempty.all()
    digits = fields.pad - np.uint8(48)
    out = []
    any_odd = bool(odd.any())
    for shape, plain in shapes:
        idx = None
        if any_odd or any_empty or shape.ok is not None or plain is not None:
            use = (shape.end > shape.start) & ~odd
            for extra in (shape.ok, plain):
                if extra is not None:
                    use &= extra
            if not use.all():
                idx = np.flatnonzero(use)
                shape = shape.select(idx)
        value, n_dot, n_ambiguous = _convert(fields.pad, digits, shape)
        out.append((idx, value, n_dot, n_ambiguous))
    return odd, out


def _quick_shapes(fields: BlockFields, delimiter):
    block, pad = fields.block, fields.pad
    allowed = b"0123456789\n" + (delimiter.encode("ascii") if delimiter else b"")
    rest = block.translate(None, allowed)
    if rest.translate(None, b".\r+-"):
        return None
    total_dots = rest.count(b".")
    n_signs = len(rest) - total_dots - rest.count(b"\r")
    results = []
    dots_left = total_dots
    signs_seen = 0
    for start, end in fields.bounds:
        signed = None
        if n_signs:
            first = pad[_PAD:].take(start)
            signed = ((first == 45) | (first == 43)) & (end > start)
            signs_seen += int(np.count_nonzero(signed))
        shape, found = _quick_dots(pad, start, end, signed, dots_left)
        dots_left -= found
        results.append((shape, None))
    if dots_left or signs_seen != n_signs:
        return None
    return results


def _exact_shapes(fields: BlockFields):
    table = np.full(256, _OTHER, dtype=np.uint8)
    table[48:58] = 0
    table[ord(".")] = _DOT
    table[ord("+")] = table[ord("-")] = _SIGN
    table[[10, 13]] = 0
    pad = fields.pad
    cls = table[pad[_PAD : _PAD + len(fields.block)]]
    running = []
    for c in (_OTHER, _DOT, _SIGN):
        counts = np.zeros(cls.size + 1, dtype=np.int32)
        np.cumsum(cls == c, dtype=np.int32, out=counts[1:])
        running.append(counts)
    n_other, n_dot, n_sign = running
    dot_positions = np.flatnonzero(cls == _DOT)
    results = []
    for start, end in fields.bounds:
        dots = n_dot[end] - n_dot[start]
        signs = n_sign[end] - n_sign[start]
        first = pad[_PAD:].take(start)
        signed = (signs == 1) & ((first == 45) | (first == 43)) & (end > start)
        plain = (n_other[end] == n_other[start]) & (dots <= 1) & (signs == signed)
        dot = end.copy()
        one = plain & (dots == 1)
        dot[one] = dot_positions[n_dot[start[one]]]
        results.append((_Shape(start, end, dot, signed), plain))
    return results
