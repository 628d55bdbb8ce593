"""A vectorised reader for large, plain numeric text files.

Large files from instruments are mostly plain: one number per field, written
with a decimal point, lines ended by ``\\n`` or ``\\r\\n``.  This reader works
on the bytes with numpy, one megabyte at a time on two threads (numpy releases
the GIL), and never makes a Python object per row.  A one-column file that is
plain from end to end goes to pandas' C parser instead where pandas is
installed (:mod:`.pandas_column`); a large one is first offered to
:mod:`.large_file`, which lets pandas read it from its path.

The numpy kernels (:mod:`.fastparse`) convert each field of the form
``[+-]digits[.digits]`` with at most 15 digits exactly: its digits form an
integer ``m < 10**15`` (exact in float64) and the value is ``m / 10**F`` for
a power of ten ``10**F`` that is exact too (``F <= 15``), so one correctly
rounded division gives the same float64 as ``float(text)`` (Clinger 1990,
"How to read floating point numbers accurately", the fast path).

Every other field (text, exponents, spaces, units, decimal commas) and every
irregular line (comments, blank lines, a wrong number of fields) goes through
the per-cell reader of :mod:`.numbers` and :mod:`.delimited`, so the result is
the one :func:`~.text_table.read_text_table` gives.  Where the conventions of
a column would differ (a decimal comma among the odd cells), or the file is
not ASCII-compatible UTF-8, or it uses double quotes or a lone ``\\r``, this
reader declines (returns None) and the caller uses the per-cell reader.
"""

from __future__ import annotations

import codecs
import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from . import reasons as R
from .decoding import decode
from .delimited import DELIMITER_NAMES, SAMPLE_LINES, is_comment, iter_records, split_line, split_lines
from .fastparse import parse_block_fields, split_block
from .numbers import STRIP_CHARS, ParsedColumn, finish_column
from .pandas_column import read_plain_column
from .table import TableInfo, first_values
from .text_table import LAYOUT_SAMPLE, detect_text_layout, extra_cells, text_notes

__all__ = ["FastTable", "read_fast_table", "head_layout", "table_info"]

_CHUNK = 1 << 20  # bytes per block
_HEAD_LINES = 2 * LAYOUT_SAMPLE
_HEAD_BYTES = 1 << 18
_MAX_COLUMNS = 8


class _Column:
    """Accumulates one column's parse over the blocks."""

    def __init__(self, n: int):
        # every block fills its own rows (see _parse_block)
        self.values = np.empty(n)
        self.status = np.empty(n, dtype=np.uint8)
        self.plain_point = 0
        self.plain_ambiguous = 0
        self.n_plain = 0
        self.odd_index: list[int] = []
        self.odd_text: list[str] = []


class FastTable:
    """The :class:`~.table.Table` interface over the bytes of a large text file."""

    def __init__(self, names, lines, parsed, info, body, body_line, delimiter):
        self.names = names
        self.lines = lines
        self.info = info
        self._parsed = parsed
        self._body = body
        self._body_line = body_line
        self._delimiter = delimiter

    @property
    def n_rows(self) -> int:
        return len(self.lines)

    def parsed(self, j: int) -> ParsedColumn:
        return self._parsed[j]

    def first_values(self, j: int) -> tuple[str, ...]:
        return first_values(self, j)

    def release(self) -> None:
        """Drop the file's bytes once the rows are accounted for."""
        self._body = None

    def raw(self, j: int, positions: np.ndarray) -> list[str]:
        """The text of column ``j`` at the given data-row positions."""
        positions = np.asarray(positions, dtype=np.int64)
        out: list[str] = [""] * positions.size
        if positions.size == 0:
            return out
        if isinstance(self.lines, range):  # consecutive lines from lines.start
            wanted = positions + (self.lines.start - self._body_line)
        else:
            wanted = self.lines[positions].astype(np.int64) - self._body_line  # 0-based line in the body
        order = np.argsort(wanted, kind="stable")
        body = self._body
        k = 0
        first_line = 0
        pos = 0
        while k < order.size and pos < len(body):
            stop = min(pos + _CHUNK, len(body))
            if stop < len(body):
                stop = body.find(b"\n", stop) + 1 or len(body)
            block = body.block(pos, stop)
            buf = np.frombuffer(block, dtype=np.uint8)
            ends = np.flatnonzero(buf == 10)
            if not block.endswith(b"\n"):
                ends = np.append(ends, buf.size)
            while k < order.size and wanted[order[k]] < first_line + ends.size:
                line = int(wanted[order[k]]) - first_line
                a = int(ends[line - 1]) + 1 if line else 0
                text = block[a : int(ends[line])].decode("utf-8").rstrip("\r")
                cells = split_line(text, self._delimiter)
                out[order[k]] = cells[j].strip(STRIP_CHARS) if j < len(cells) else ""
                k += 1
            first_line += ends.size
            pos = stop
        return out


def _covers_samples(lines: list[str]) -> bool:
    """Tell whether the head holds the lines the sniffer and the layout look at."""
    sniffed = laid_out = 0
    for line in lines:
        if is_comment(line):
            continue
        laid_out += 1
        sniffed += bool(line.strip())
        if sniffed >= SAMPLE_LINES and laid_out >= LAYOUT_SAMPLE:
            return True
    return False


def _line_numbers(numbers: np.ndarray) -> np.ndarray:
    return numbers.astype(np.int32, copy=False) if numbers.size and numbers[-1] < 2**31 - 1 else numbers


def _only_crlf(data: bytes) -> bool:
    """Tell whether every ``\\r`` of ``data`` starts a ``\\r\\n`` (numpy, a block at a time: no count of the whole file)."""
    buf = np.frombuffer(data, dtype=np.uint8)
    for a in range(0, buf.size, _CHUNK):
        at = np.flatnonzero(buf[a : a + _CHUNK] == 13)
        if at.size:
            at += a + 1
            if at[-1] >= buf.size or not np.all(buf.take(at) == 10):
                return False
    return True


def _head(data: bytes, offset: int) -> bytes:
    """The first lines of the file: at least 4000 lines and 256 KiB, ending at a line break."""
    pos = offset
    for _ in range(_HEAD_LINES):
        pos = data.find(b"\n", pos) + 1
        if pos == 0:
            return data[offset:]
    if pos - offset < _HEAD_BYTES:
        pos = data.find(b"\n", offset + _HEAD_BYTES) + 1
        if pos == 0:
            return data[offset:]
    return data[offset:pos]


def read_fast_table(data: bytes, where: str, *, delimiter="auto", header: bool | None = None) -> FastTable | None:
    """Read a large plain text table with numpy, or decline.

    Parameters
    ----------
    data : bytes
        The whole file.
    where : str
        The file's name, for messages.
    delimiter, header
        As for :func:`~.text_table.read_text_table`.

    Returns
    -------
    FastTable or None
        None when the file is not suited (then the per-cell reader must be used).

    Raises
    ------
    FileFormatError
        As the per-cell reader would (binary data, empty, header only).
    """
    head = head_layout(data, len(data), where, delimiter=delimiter, header=header)
    if head is None:
        return None
    decoded, lines, found, offset = head
    start_line = found.data_start_line
    crlf = b"\r" in data
    if crlf and not _only_crlf(data):
        return None
    # Quotes send the file to the per-cell reader.  In a one-column file they are
    # looked for after pandas: if it read every line of the body as a number,
    # none of them holds one, and only the tail is left to look at.
    one_column = found.delimiter is None
    if not one_column and data.find(b'"', offset) >= 0:
        return None
    trimmed = _trim_tail(data, offset, found.delimiter, where)
    if trimmed is None:
        return None
    end, tail_comments = trimmed
    body = _Span(data, offset, end)
    n_columns = len(found.names)
    plain = None
    if one_column:
        plain = read_plain_column(data, offset, end, lines[start_line - 1 : start_line + 49], crlf=crlf)
        if data.find(b'"', offset if plain is None else end) >= 0:
            return None
    if plain is not None:
        columns = [_Column(0)]
        column = columns[0]
        column.values, column.status = plain.values, plain.status
        column.plain_point, column.plain_ambiguous = plain.plain_point, plain.plain_ambiguous
        n_lines = column.n_plain = plain.values.size
        comment_rows, too_long = [], []
    else:
        bounds, n_lines = _block_bounds(body)
        columns = [_Column(n_lines) for _ in range(n_columns)]
        outcome = _parse_blocks(body, bounds, found.delimiter, columns, start_line, where)
        if outcome is None:
            return None
        comment_rows, too_long = outcome
    numbers = range(start_line, start_line + n_lines)  # made into an array only where rows were dropped, or on first use
    if comment_rows:
        keep = np.ones(n_lines, dtype=bool)
        keep[comment_rows] = False
        numbers = _line_numbers(np.arange(start_line, start_line + n_lines, dtype=np.int64)[keep])
        remap = np.cumsum(keep) - 1
        for c in columns:
            c.values, c.status = c.values[keep], c.status[keep]
            c.odd_index = [int(remap[i]) for i in c.odd_index]
    parsed = []
    for c in columns:
        column = finish_column(c.values, c.status, c.n_plain, c.plain_point, c.plain_ambiguous, c.odd_index, c.odd_text)
        if column.style.decimal_mark == "," and c.plain_point + c.plain_ambiguous:
            return None
        parsed.append(column)
    parser = "vectorised" if plain is None else "vectorised (pandas C parser)"
    info = table_info(decoded, lines, found, len(comment_rows) + tail_comments, parser, len(too_long))
    return FastTable(found.names, numbers, parsed, info, body, start_line, found.delimiter)


def head_layout(data: bytes, size: int, where: str, *, delimiter="auto", header: bool | None = None):
    """The layout of a text file from its first bytes, as the per-cell reader finds it, or None.

    Parameters
    ----------
    data : bytes
        The file, or its first bytes (then a layout is given only if they
        hold every line the per-cell reader samples, ending at a line break).
    size : int
        The file's size in bytes.
    where, delimiter, header
        As for :func:`read_fast_table`.

    Returns
    -------
    (decoded, lines, found, offset) or None
        The decoded head, its lines, the :class:`~.text_table.TextLayout`,
        and the byte offset of the first data row.  None when the file does
        not suit the vectorised reader (not UTF-8, runs of spaces, too many
        columns, a head that does not hold the samples).
    """
    bom = 3 if data.startswith(codecs.BOM_UTF8) else 0
    head_bytes = _head(data, bom)
    if len(data) < size and len(head_bytes) + bom == len(data):
        return None  # the bytes given end before the head does
    decoded = decode(data[:bom] + head_bytes, where)
    if decoded.encoding not in ("utf-8", "utf-8-sig") or not decoded.text.strip():
        return None
    lines = split_lines(decoded.text)
    if len(head_bytes) + bom < size and not _covers_samples(lines):
        return None  # the head must hold every line the per-cell reader samples
    found = detect_text_layout(lines, where, delimiter=delimiter, header=header)
    if found.delimiter == " " or len(found.names) > _MAX_COLUMNS:
        return None
    offset = bom
    for _ in range(found.data_start_line - 1):
        offset = data.index(b"\n", offset) + 1
    return decoded, lines, found, offset


def table_info(decoded, lines: list[str], found, more_comments: int, parser: str, too_long: int) -> TableInfo:
    """What was read, for a table whose layout :func:`head_layout` found.

    ``more_comments`` counts the comment lines below the first data row.
    """
    start_line = found.data_start_line
    return TableInfo(
        reader="delimited text" if found.delimiter is not None else "one value per line",
        encoding=decoded.encoding,
        encoding_fallback=False,
        delimiter=DELIMITER_NAMES[found.delimiter],
        header_line=found.header_line,
        preamble_lines=tuple(found.records[i][0] for i in found.layout.preamble),
        preamble=tuple(lines[found.records[i][0] - 1] for i in found.layout.preamble),
        comment_lines=sum(1 for line in lines[: start_line - 1] if is_comment(line)) + more_comments,
        parser=parser,
        notes=text_notes(found, too_long),
    )


class _Span:
    """A part of a bytes object, without copying it."""

    def __init__(self, data: bytes, start: int, end: int):
        self.data, self.start, self.end = data, start, end

    def __len__(self) -> int:
        return self.end - self.start

    def block(self, a: int, b: int) -> bytes:
        """Bytes [a, b) of the span (a copy of that block only)."""
        return self.data[self.start + a : self.start + b]

    def find(self, sub: bytes, a: int) -> int:
        k = self.data.find(sub, self.start + a, self.end)
        return -1 if k < 0 else k - self.start

    def rfind(self, sub: bytes, a: int, b: int) -> int:
        k = self.data.rfind(sub, self.start + a, self.start + b)
        return -1 if k < 0 else k - self.start


def _trim_tail(data: bytes, start: int, delimiter, where: str) -> tuple[int, int] | None:
    """Find where the table ends: trailing blank and comment lines are dropped, as the per-cell reader does.

    Returns the end offset and the number of comment lines dropped, or None
    if the tail is not valid UTF-8.
    """
    end = len(data)
    comments = 0
    while end > start:
        last = end - 1 if data[end - 1 : end] == b"\n" else end
        cut = max(data.rfind(b"\n", start, last), start - 1)
        try:
            text = data[cut + 1 : last].decode("utf-8").rstrip("\r")
        except UnicodeDecodeError:
            return None
        if is_comment(text):
            comments += 1
        else:
            records = list(iter_records([text], delimiter, where))
            if records[0][1]:
                return end, comments
        end = cut + 1
    return start, comments


def _block_bounds(body: _Span) -> tuple[list[tuple[int, int, int]], int]:
    """Blocks of whole lines, (start, stop, first line index) for each, and the number of lines."""
    out = []
    pos = line = 0
    while pos < len(body):
        stop = min(pos + _CHUNK, len(body))
        if stop < len(body):
            stop = body.rfind(b"\n", pos, stop) + 1 or body.find(b"\n", stop) + 1 or len(body)
        out.append((pos, stop, line))
        line += body.data.count(b"\n", body.start + pos, body.start + stop)
        pos = stop
    if len(body) and body.data[body.end - 1 : body.end] != b"\n":
        line += 1
    return out, line


def _parse_blocks(body: _Span, bounds, delimiter, columns, start_line: int, where: str):
    """Parse every block (on two threads: numpy releases the GIL); returns (comment rows, long rows) or None."""

    def work(bound):
        a, b, line_base = bound
        block = body.block(a, b)
        if not block.isascii():
            try:
                block.decode("utf-8")
            except UnicodeDecodeError:
                return None
        return _parse_block(block, delimiter, columns, line_base, start_line, where)

    if len(bounds) > 4 and (os.cpu_count() or 1) > 1:
        with ThreadPoolExecutor(max_workers=2) as pool:
            results = list(pool.map(work, bounds))
    else:
        results = [work(bound) for bound in bounds]
    if any(r is None for r in results):
        return None
    comment_rows, too_long = [], []
    for result in results:
        comment_rows += result.comment_rows
        too_long += result.too_long
        for column, (n_plain, n_point, n_ambiguous, odd_index, odd_text) in zip(columns, result.columns):
            column.n_plain += n_plain
            column.plain_point += n_point
            column.plain_ambiguous += n_ambiguous
            column.odd_index += odd_index
            column.odd_text += odd_text
    return comment_rows, too_long


class _BlockResult:
    """What one block contributed besides the values written in place."""

    __slots__ = ("comment_rows", "too_long", "columns")

    def __init__(self, n_columns: int):
        self.comment_rows: list[int] = []
        self.too_long: list[int] = []
        self.columns = [[0, 0, 0, [], []] for _ in range(n_columns)]


def _parse_block(block, delimiter, columns, line_base, start_line, where) -> _BlockResult:
    """Parse one block of whole lines, writing values and status in place."""
    out = _BlockResult(len(columns))
    fields = split_block(block, delimiter, len(columns))
    n_lines = int(fields.line_start.size)
    regular_rows = np.flatnonzero(fields.regular) if not fields.regular.all() else None
    odd_regular, results = parse_block_fields(fields, delimiter)
    odd_line = ~fields.regular
    if regular_rows is None:
        odd_line |= odd_regular
    else:
        odd_line[regular_rows[odd_regular]] = True
    rows_here = slice(line_base, line_base + n_lines)
    for column, tally, (idx, value, n_dot, n_ambiguous) in zip(columns, out.columns, results):
        if regular_rows is None and idx is None:
            column.values[rows_here] = value
            column.status[rows_here] = R.KEPT
        else:
            column.values[rows_here] = np.nan
            column.status[rows_here] = R.EMPTY
            rows = np.arange(n_lines) if regular_rows is None else regular_rows
            target = line_base + (rows if idx is None else rows[idx])
            column.values[target] = value
            column.status[target] = R.KEPT
        tally[0] += int(value.size)
        tally[1] += n_dot - n_ambiguous
        tally[2] += n_ambiguous
    for i in np.flatnonzero(odd_line):
        i = int(i)
        text = block[fields.line_start[i] : fields.line_end[i]].decode("utf-8")
        row = line_base + i
        if is_comment(text):
            out.comment_rows.append(row)
            continue
        records = list(iter_records([text], delimiter, where, [start_line + row]))
        cells = records[0][1] if records else []
        if extra_cells(cells, len(columns)):
            out.too_long.append(row)
        for j, tally in enumerate(out.columns):
            cell = cells[j].strip(STRIP_CHARS) if j < len(cells) else ""
            if cell:
                tally[3].append(row)
                tally[4].append(cell)
    return out
