"""The assignment table of every input row as CSV, formatted a block of rows at a time.

The per-row route (:func:`clusterdesk.report.csvfile.write_csv` over the rows of
:func:`clusterdesk.report.tables.assignment_table`) spends about 7 µs a row in
Python; ten million rows took over a minute. Here each column of a block of
rows is turned into text in one pass (``float.__repr__`` mapped over the
block, lookup tables for the component and the reason), the rows are joined
with ``str.join`` and the block is written at once.

When the rows come grouped (each row's cells after the line number are those
of one entry, e.g. of its distinct value:
:meth:`clusterdesk.analysis.Analysis.assignments` with ``groups``), the text
of each entry is made once and the rows are assembled as bytes: a block is
the entries' texts, zero-padded to one width and taken by index with numpy,
behind the digits of the line numbers (right-aligned in zero-padded columns),
then the zero bytes are dropped. Ten million rows cost a few vectorised passes
instead of ten million Python strings.

The text is the same, byte for byte: floats as their shortest round-trip
text (``repr``), NaN as an empty cell, text cells neutralised against
formula injection and quoted by the csv module, UTF-8, the file written
atomically.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from ..atomic import atomic_open
from .csvfile import neutralise
from .sync_behind import SyncBehind

__all__ = ["assignment_header", "write_assignments_csv"]

#: Rows formatted together: about 10 MB of text for three components.
BLOCK_ROWS = 1 << 16
#: Entries whose texts are made once and shared (beyond this, each block formats its own rows).
SHARED_ENTRIES = 1 << 18


def assignment_header(k: int) -> tuple:
    """Column names of the assignment table of a k-component model."""
    return ("line", "value", "status", "component", "max_posterior") + tuple(
        f"posterior_{j + 1}" for j in range(k))


class _TextCells(dict):
    """Words -> their CSV cell (neutralised, quoted by the csv module when needed)."""

    def __missing__(self, words):
        buffer = io.StringIO()
        csv.writer(buffer, lineterminator="\n").writerow([neutralise(str(words)), ""])
        cell = buffer.getvalue()[:-2]  # drop the empty second cell's comma and the newline
        self[words] = cell
        return cell


def _float_cells(values: np.ndarray) -> np.ndarray:
    """Shortest round-trip text of each float, '' for NaN; object array of the same shape."""
    flat = values.ravel()
    cells = np.array(list(map(float.__repr__, flat.tolist())), dtype=object)
    missing = np.isnan(flat)
    if missing.any():
        cells[missing] = ""
    return cells.reshape(values.shape)


def _cells_text(a: dict, index: np.ndarray, component_cells: np.ndarray, text_cells: _TextCells) -> list:
    """Text of the given rows (entries) from the value column on (no line number), one cell at a time per column."""
    kept = a["kept"][index]
    posterior = a["posterior"][index]
    post_cells = _float_cells(posterior)
    component = np.where(kept, a["component"][index], 0)
    top = a["max_posterior"][index]
    sure = np.flatnonzero(kept)
    column = component[sure] - 1
    if np.array_equal(top[sure], posterior[sure, column]):  # the max is one of the posteriors: reuse its text
        top_cells = np.empty(kept.size, dtype=object)
        top_cells[sure] = post_cells[sure, column]
        rest = np.flatnonzero(~kept)
        top_cells[rest] = _float_cells(top[rest])
    else:
        top_cells = _float_cells(top)
    columns = [_float_cells(a["value"][index]).tolist(),
               list(map(text_cells.__getitem__, a["reason"][index].tolist())),
               component_cells[component].tolist(),
               top_cells.tolist()]
    columns += [post_cells[:, j].tolist() for j in range(posterior.shape[1])]
    return list(map(",".join, zip(*columns)))


def _entry_texts(a: dict, entries: np.ndarray, component_cells: np.ndarray, text_cells: _TextCells,
                 chunk: int = BLOCK_ROWS) -> list:
    """UTF-8 text of the given entries from the value on, each ending with a newline."""
    texts = []
    for start in range(0, entries.size, chunk):
        texts += [f"{t}\n".encode() for t in _cells_text(a, entries[start:start + chunk], component_cells, text_cells)]
    return texts


def _digit_table() -> np.ndarray:
    """ASCII digits of numbers below 10,000 in four columns, zero bytes for no digit; shape (20001, 4).

    Rows 0..9999 without leading zeros (row 0 blank), rows 10000..19999 with
    them, row 20000 the number zero ('0').
    """
    numbers = np.arange(10_000)
    columns = (numbers[:, None] // np.array([1000, 100, 10, 1])) % 10 + ord("0")
    bare = np.where(numbers[:, None] >= np.array([1000, 100, 10, 1]), columns, 0)
    zero = np.array([[0, 0, 0, ord("0")]])
    return np.concatenate([bare, columns, zero]).astype(np.uint8)


_DIGITS = _digit_table().view(np.uint32).reshape(-1)  # four ASCII bytes as one number: one gather per group


class _SharedRows:
    """Rows whose text after the line number is one of a few entries' texts, assembled as bytes.

    ``pool`` (entries, width) uint8 holds each entry's text after room for
    the line number (a multiple of four columns, zero bytes) and a comma,
    zero-padded to a width that is a multiple of four. A row is its entry's
    pool row with the line number's digits written right-aligned into that
    room, four at a time (one uint32 from a table), its zero bytes dropped.
    Rows are assembled ``CHUNK`` at a time in buffers that stay in the cache.
    Text holding a zero byte cannot be assembled so (``usable`` is then False).
    """

    CHUNK = 1 << 13

    def __init__(self, texts: list, largest_line: int):
        self.groups = -(-len(str(largest_line)) // 4)  # groups of four digit columns
        room = 4 * self.groups
        longest = max(map(len, texts), default=0)
        padded = b"".join(text.ljust(longest, b"\0") for text in texts)
        self.usable = all(b"\0" not in text for text in texts)
        width = -(-(room + 1 + longest) // 4) * 4
        self.pool = np.zeros((len(texts), width), dtype=np.uint8)
        self.pool[:, room] = ord(",")
        self.pool[:, room + 1:room + 1 + longest] = np.frombuffer(padded, dtype=np.uint8).reshape(len(texts), longest)
        self._cells = np.empty((self.CHUNK, width), dtype=np.uint8)
        self._keep = np.empty(self._cells.size, dtype=bool)

    def blocks(self, lines: np.ndarray, entries: np.ndarray):
        """The UTF-8 bytes of the rows with these line numbers (>= 0) and entries: uint8 arrays, in order."""
        for start in range(0, lines.size, self.CHUNK):
            yield self._chunk(lines[start:start + self.CHUNK], entries[start:start + self.CHUNK])

    def _chunk(self, lines, entries) -> np.ndarray:
        cells = self._cells[:lines.size]
        np.take(self.pool, entries, axis=0, out=cells)
        quads = cells.view(np.uint32)
        smallest = int(lines.min())
        rest = lines
        for group in range(self.groups):  # from the right
            if group == self.groups - 1:
                four = rest  # below 10,000: digits without leading zeros
            else:
                rest, four = np.divmod(rest, 10_000)
                if smallest >= 10_000 ** (group + 1):  # every number goes on: leading zeros kept
                    four += 10_000
                else:
                    four += 10_000 * (rest > 0)
            if group == 0 and smallest == 0:
                four = np.where(lines == 0, 20_000, four)
            quads[:, self.groups - 1 - group] = _DIGITS[four]
        flat = cells.reshape(-1)
        keep = self._keep[:flat.size]
        np.not_equal(flat, 0, out=keep)
        return flat[keep]


def _block_text(a: dict, part: slice, entries: np.ndarray, component_cells: np.ndarray,
                text_cells: _TextCells) -> bytes:
    lines = map(str, a["line"][part].tolist())
    rest = _cells_text(a, entries, component_cells, text_cells)
    return ("\n".join(map(",".join, zip(lines, rest))) + "\n").encode()


def write_assignments_csv(path, a: dict, *, block: int = BLOCK_ROWS) -> Path:
    """Write the assignment of every input row as a UTF-8 CSV, atomically.

    Parameters
    ----------
    path : str or Path
    a : dict
        As returned by :meth:`clusterdesk.analysis.Analysis.assignments`:
        ``line`` (n_rows,), and per entry ``value``, ``kept`` (bool),
        ``reason`` (words), ``component`` (1-based, 0 when excluded),
        ``max_posterior`` and ``posterior`` (entries, k); the entries are the
        rows, or, when ``row_group`` (n_rows,) is given, row ``i`` shows entry
        ``row_group[i]``.
    block : int, default BLOCK_ROWS
        Rows formatted and written together.

    Returns
    -------
    Path
    """
    k = a["posterior"].shape[1]
    n_rows = a["line"].size
    component_cells = np.array([""] + [str(j + 1) for j in range(k)], dtype=object)
    text_cells = _TextCells()
    row_group = a.get("row_group")
    shared = None
    if (row_group is not None and n_rows and a["value"].size <= min(SHARED_ENTRIES, n_rows // 2)
            and a["line"].min() >= 0):
        texts = _entry_texts(a, np.arange(a["value"].size), component_cells, text_cells)
        shared = _SharedRows(texts, int(a["line"].max()))
        del texts
        if not shared.usable:
            shared = None
    header = io.StringIO()
    csv.writer(header, lineterminator="\n").writerow([neutralise(h) for h in assignment_header(k)])
    with atomic_open(path, "wb") as handle, SyncBehind(handle) as blocks:
        blocks.write(header.getvalue().encode())
        for start in range(0, n_rows, block):
            part = slice(start, min(start + block, n_rows))
            entries = np.arange(part.start, part.stop) if row_group is None else row_group[part]
            if shared is not None:
                for piece in shared.blocks(a["line"][part], entries):
                    blocks.write(piece)
            else:
                blocks.write(_block_text(a, part, entries, component_cells, text_cells))
    return Path(path)
