"""Where a table starts: metadata lines above it, the header row, the first data row.

Instruments and spreadsheets often write a few lines of metadata
("Instrument: X", "Operator; J. Doe", a blank line) above the header.  The
data start at the first row that holds a number and is followed by rows that
mostly hold numbers too; the header is the last non-blank row above it when
that row holds no number; everything above is the preamble.

A measurement is never taken for metadata: rows of bare numbers (every
filled cell a plain number or a missing-value mark, as many cells as the
data rows) above that start, with only a stray word or two among them, are
data, and the stray words become rows that are not numbers.  So a short
column such as ``diameter, 3.2, 3.4, 7.9, bad, 8.1`` keeps its first three
values instead of reading ``bad`` as a second header.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Sequence

from .numbers import clean_text, looks_numeric, plain_number_text

__all__ = ["Layout", "find_layout", "column_names", "has_no_data"]

_LOOKAHEAD = 10
#: Cells that stand for a missing value; a row of them still counts as data.
MISSING_MARKERS = frozenset({"na", "n/a", "n.a.", "nan", "null", "none", "-", "--", "?", "#n/a", "missing", "nd", "n.d."})


@dataclass(frozen=True)
class Layout:
    """Where the parts of a table are, as positions in the list of rows.

    Attributes
    ----------
    data_start : int
        Position of the first data row (``len(rows)`` when there is none).
    header : int or None
        Position of the header row, or None.
    preamble : tuple of int
        Positions of the non-blank rows above the header (or above the data).
    n_columns : int
        Number of columns: the most common width of data rows, or the header
        width if wider.
    """

    data_start: int
    header: int | None
    preamble: tuple[int, ...]
    n_columns: int


def _width(row: Sequence) -> int:
    n = len(row)
    while n and _blank(row[n - 1]):
        n -= 1
    return n


def _data_like(cell) -> bool:
    if isinstance(cell, str) and cell.strip(" \t\u00a0\ufeff").lower() in MISSING_MARKERS:
        return True
    return looks_numeric(cell)


def _bare_number(cell) -> bool:
    """A cell that is a plain number (point or comma decimal, no unit or word) or a missing-value mark."""
    if not isinstance(cell, str):
        return looks_numeric(cell)  # numbers from a workbook; False for None and booleans
    text = clean_text(cell)
    return plain_number_text(text) or text.lower() in MISSING_MARKERS


def _earlier_data_start(rows, widths, texty, start: int) -> int:
    """The first row of bare numbers above ``start`` when the rows between are data with a stray word or two.

    Rows of bare numbers with the data's width are measurements, not
    metadata; they are taken as data when the text rows among them are at
    most one, or at most a fifth as many as the rows of numbers.
    """
    later = [w for w in widths[start:] if w > 0]
    if not later:
        return start
    data_width = Counter(later).most_common(1)[0][0]
    bare = [widths[i] == data_width and all(_blank(c) or _bare_number(c) for c in rows[i])
            and any(not _blank(c) for c in rows[i]) for i in range(start)]
    first = next((i for i in range(start) if bare[i]), None)
    if first is None:
        return start
    n_bare = sum(bare[first:start])
    n_text = sum(texty[first:start])
    n_other = sum(1 for i in range(first, start) if widths[i] > 0 and not bare[i] and not texty[i])
    if n_other == 0 and (n_text <= 1 or n_text <= 0.2 * n_bare):
        return first
    return start


def _has_letter(cell) -> bool:
    return isinstance(cell, str) and any(ch.isalpha() for ch in cell)


def _blank(cell) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip(" \t\u00a0\ufeff"))


def find_layout(rows: Sequence[Sequence], header: bool | None = None) -> Layout:
    """Find the preamble, header and data rows of a table.

    Parameters
    ----------
    rows : sequence of sequences of cells
        The first rows of the table (a sample is enough); cells are str,
        numbers or None.
    header : bool or None, default None
        None detects the header; True takes the row above the data (or the
        first data row, if nothing is above it) as the header; False reads
        the detected header row as data.

    Returns
    -------
    Layout
    """
    numeric = [any(_data_like(c) for c in row) for row in rows]
    widths = [_width(row) for row in rows]
    # A row with letters and no number is text (a header or metadata); any
    # other row (numbers, or marks such as "3;4") may be a data row.
    texty = [not numeric[i] and any(_has_letter(c) for c in row) for i, row in enumerate(rows)]
    filled = [i for i, w in enumerate(widths) if w > 0]
    start = len(rows)
    for k, i in enumerate(filled):
        if not numeric[i]:
            continue
        window = [not texty[j] for j in filled[k + 1 : k + 1 + _LOOKAHEAD]]
        if not window or (window[0] and sum(window) >= 0.8 * len(window)):
            start = i
            break
    else:
        # No run of numeric rows: the first numeric row; else a text table
        # whose first row names the columns.
        first = next((i for i, v in enumerate(numeric) if v), None)
        if first is not None:
            start = first
        else:
            start = filled[1] if len(filled) > 1 and texty[filled[0]] else (filled[0] if filled else 0)
    start = _earlier_data_start(rows, widths, texty, start)
    head = start - 1
    while head >= 0 and widths[head] == 0:
        head -= 1
    header_row = head if head >= 0 and texty[head] else None
    if header is True and header_row is None:
        header_row, start = start, start + 1
    elif header is False and header_row is not None:
        start, header_row = header_row, None
    top = header_row if header_row is not None else start
    preamble = tuple(i for i in range(top) if widths[i] > 0)
    data_widths = Counter(w for w in widths[start:] if w > 0)
    n_columns = max(data_widths.items(), key=lambda kv: (kv[1], kv[0]))[0] if data_widths else 1
    if header_row is not None:
        n_columns = max(n_columns, widths[header_row])
    return Layout(start, header_row, preamble, max(n_columns, 1))


def has_no_data(rows: Sequence[Sequence], layout: Layout) -> bool:
    """Tell whether a table is a header alone: no data row, or one single row of text and no number."""
    filled = [row for row in rows if _width(row)]
    if layout.data_start >= len(rows):
        return True
    return len(filled) == 1 and not any(_data_like(c) for c in filled[0])


def column_names(header_cells: Sequence | None, n_columns: int) -> list[str]:
    """Name the columns from a header row ("column 3" where a name is missing; repeats get " (2)").

    Parameters
    ----------
    header_cells : sequence of cells or None
    n_columns : int

    Returns
    -------
    list of str, length n_columns
    """
    names: list[str] = []
    seen: Counter = Counter()
    for j in range(n_columns):
        cell = header_cells[j] if header_cells is not None and j < len(header_cells) else None
        name = "" if cell is None else str(cell).strip(" \t\u00a0\ufeff\"")
        if not name:
            name = f"column {j + 1}"
        seen[name] += 1
        if seen[name] > 1:
            name = f"{name} ({seen[name]})"
        names.append(name)
    return names
