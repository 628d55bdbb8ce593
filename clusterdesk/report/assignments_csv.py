"""The assignment table of every input row as CSV, formatted a block of rows at a time.

The per-row route (:func:`clusterdesk.report.csvfile.write_csv` over the rows of
:func:`clusterdesk.report.tables.assignment_table`) spends about 7 µs a row in
Python; ten million rows took over a minute. Here each column of a block of
rows is turned into text in one pass (``float.__repr__`` mapped over the
block, lookup tables for the component and the reason), the rows are joined
with ``str.join`` and the block is written at once. When every kept row's
cells follow from its value (checked), the text of each distinct value is
made once and shared by its copies. The text is the same,
byte for byte: floats as their shortest round-trip text (``repr``), NaN as an
empty cell, text cells neutralised against formula injection and quoted by
the csv module, the file written atomically.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from ..atomic import atomic_open
from .csvfile import neutralise

__all__ = ["assignment_header", "write_assignments_csv"]

#: Rows formatted together: about 10 MB of text for three components.
BLOCK_ROWS = 1 << 16


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
    """Text of the given rows from the value column on (no line number), one cell at a time per column."""
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


def _shared_texts(a: dict, component_cells: np.ndarray, text_cells: _TextCells):
    """Row text (from the value on) of each distinct kept value, when every kept row's cells follow from its value.

    Recorded values repeat (ten million readings to 0.001 hold some 50,000
    distinct values), and the posterior of an exact value or of its rounding
    interval is the same for every copy, so each distinct row text is made
    once. Distinct means the same bits (so -0.0 and 0.0 stay apart). Whether
    each kept row's posteriors, component and largest posterior are those of
    the first row with its value is checked bit for bit; if not (intervals
    given end by end), None, and every row is formatted by itself.

    Returns
    -------
    (texts, which) or None
        texts : object ndarray (n_distinct,); which : ndarray (n_rows,) of the
        index into ``texts`` for kept rows, -1 for excluded rows.
    """
    kept = np.flatnonzero(a["kept"])
    if kept.size < 2:
        return None
    keys = np.ascontiguousarray(a["value"][kept]).view(np.int64)
    distinct, first, inverse = np.unique(keys, return_index=True, return_inverse=True)
    if distinct.size > kept.size // 4:  # few repeats: nothing to share
        return None
    del distinct
    first_rows = kept[first]
    if not _rows_follow_their_value(a, kept, first_rows, inverse):
        return None
    which = np.full(a["kept"].size, -1, dtype=np.int64)
    which[kept] = inverse
    texts = np.array(_cells_text(a, first_rows, component_cells, text_cells), dtype=object)
    return texts, which


def _same_bits(column: np.ndarray, rows: np.ndarray, source: np.ndarray) -> bool:
    """Whether ``column[rows]`` and ``column[source]`` hold the same floats, bit for bit (NaN and -0.0 too)."""
    return np.array_equal(np.ascontiguousarray(column[rows]).view(np.int64),
                          np.ascontiguousarray(column[source]).view(np.int64))


def _rows_follow_their_value(a: dict, kept, first_rows, inverse, chunk: int = 1 << 20) -> bool:
    """Whether every kept row has the posteriors, component, largest posterior and reason of its value's first row."""
    for start in range(0, kept.size, chunk):
        rows = kept[start:start + chunk]
        source = first_rows[inverse[start:start + chunk]]
        if not (_same_bits(a["posterior"], rows, source) and _same_bits(a["max_posterior"], rows, source)
                and np.array_equal(a["component"][rows], a["component"][source])
                and bool(np.all(a["reason"][rows] == a["reason"][source]))):
            return False
    return True


def _block_text(a: dict, part: slice, component_cells: np.ndarray, text_cells: _TextCells, shared) -> str:
    lines = list(map(str, a["line"][part].tolist()))
    if shared is None:
        rest = _cells_text(a, np.arange(part.start, min(part.stop, a["line"].size)), component_cells, text_cells)
    else:
        texts, which = shared
        which = which[part]
        cells = np.empty(which.size, dtype=object)
        known = which >= 0
        cells[known] = texts[which[known]]
        others = np.flatnonzero(~known)
        if others.size:
            cells[others] = _cells_text(a, others + part.start, component_cells, text_cells)
        rest = cells.tolist()
    return "\n".join(map(",".join, zip(lines, rest))) + "\n"


def write_assignments_csv(path, a: dict, *, block: int = BLOCK_ROWS) -> Path:
    """Write the assignment of every input row as a UTF-8 CSV, atomically.

    Parameters
    ----------
    path : str or Path
    a : dict
        As returned by :meth:`clusterdesk.analysis.Analysis.assignments`:
        ``line`` (n_rows,), ``value`` (n_rows,), ``kept`` (n_rows,) bool,
        ``reason`` (n_rows,) words, ``component`` (n_rows,) 1-based (0 when
        excluded), ``max_posterior`` (n_rows,) and ``posterior`` (n_rows, k).
    block : int, default BLOCK_ROWS
        Rows formatted and written together.

    Returns
    -------
    Path
    """
    k = a["posterior"].shape[1]
    component_cells = np.array([""] + [str(j + 1) for j in range(k)], dtype=object)
    text_cells = _TextCells()
    shared = _shared_texts(a, component_cells, text_cells)
    with atomic_open(path, "w", encoding="utf-8", newline="") as handle:
        csv.writer(handle, lineterminator="\n").writerow([neutralise(h) for h in assignment_header(k)])
        for start in range(0, a["line"].size, block):
            handle.write(_block_text(a, slice(start, start + block), component_cells, text_cells, shared))
    return Path(path)
