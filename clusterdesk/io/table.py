"""A table of columns as read from a source, and the summary of each column.

:class:`Table` is what every reader (delimited text, XLSX, the vectorised
reader for large files) hands to the cleaning step: column names, the line
(or sheet row) of each data row, each column parsed as numbers on demand,
and the raw text of any cell.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from ..errors import InputError
from . import reasons as R
from .numbers import STRIP_CHARS, ParsedColumn, parse_column

__all__ = ["TableInfo", "Table", "first_values", "status_counts", "ColumnSummary", "summarize", "choose_column", "cell_text", "line_array"]

_FIRST_VALUES = 5


def line_array(numbers, count: int | None = None) -> np.ndarray:
    """Line numbers as int32 (int64 for files past two thousand million lines).

    Parameters
    ----------
    numbers : iterable of int
    count : int, optional
        The number of items, when ``numbers`` is an iterator.

    Returns
    -------
    ndarray of int32 or int64, shape (n_rows,)
    """
    array = np.fromiter(numbers, dtype=np.int64, count=-1 if count is None else count)
    if array.size == 0 or array.max() < np.iinfo(np.int32).max:
        return array.astype(np.int32)
    return array


def cell_text(cell) -> str:
    """The text a person would see for a cell (str stripped; ``3.0`` as ``"3"``; dates in ISO form).

    Parameters
    ----------
    cell : str, float, int, bool, date, None

    Returns
    -------
    str
    """
    if cell is None:
        return ""
    if isinstance(cell, str):
        return cell.strip(STRIP_CHARS)
    if isinstance(cell, bool):
        return "TRUE" if cell else "FALSE"
    if isinstance(cell, float):
        if cell.is_integer() and abs(cell) < 1e16:
            return str(int(cell))
        return repr(cell)
    if isinstance(cell, (_dt.date, _dt.time)):
        return cell.isoformat()
    return str(cell)


@dataclass(frozen=True)
class TableInfo:
    """What a reader found out about a source (see :class:`~clusterdesk.io.reading.SourceFormat`)."""

    reader: str
    encoding: str | None = None
    encoding_fallback: bool = False
    delimiter: str | None = None
    header_line: int | None = None
    preamble_lines: tuple[int, ...] = ()
    preamble: tuple[str, ...] = ()
    comment_lines: int = 0
    sheet: str | None = None
    parser: str = "general"
    notes: tuple[str, ...] = ()


@dataclass
class Table:
    """Columns of cells, one entry per data row.

    Attributes
    ----------
    names : list of str
        Column names (from the header, else ``"column 1"``, ...).
    columns : list of lists
        ``columns[j][i]`` is the cell of data row ``i`` in column ``j``
        (str, float, other objects from a spreadsheet, or None when the row
        is shorter).
    lines : ndarray of int, shape (n_rows,)
        1-based physical line (text) or sheet row (XLSX) of each data row.
    info : TableInfo
    """

    names: list[str]
    columns: list[list]
    lines: np.ndarray
    info: TableInfo
    _parsed: dict = field(default_factory=dict, repr=False)

    @property
    def n_rows(self) -> int:
        """Number of data rows."""
        return int(self.lines.size)

    def parsed(self, j: int) -> ParsedColumn:
        """Column ``j`` read as numbers (computed once)."""
        if j not in self._parsed:
            self._parsed[j] = parse_column(self.columns[j])
        return self._parsed[j]

    def raw(self, j: int, positions: np.ndarray) -> list[str]:
        """The text of column ``j`` at the given data-row positions."""
        column = self.columns[j]
        return [cell_text(column[int(p)]) for p in positions]

    def first_values(self, j: int) -> tuple[str, ...]:
        """Up to five first non-empty cells of column ``j``, as text."""
        return first_values(self, j)

    def release(self) -> None:
        """Drop the cells once the rows are accounted for (the parsed columns stay)."""
        self.columns = []


def first_values(table, j: int) -> tuple[str, ...]:
    """Up to five first non-empty cells of column ``j`` of any table, as text."""
    status = table.parsed(j).status
    filled = np.zeros(0, dtype=np.int64)
    step = 4096
    for a in range(0, status.size, step):
        found = np.flatnonzero(status[a : a + step] != R.EMPTY)
        if found.size:
            filled = np.concatenate((filled, found[: _FIRST_VALUES - filled.size] + a))
            if filled.size == _FIRST_VALUES:
                break
        step = min(step * 4, 1 << 20)
    return tuple(table.raw(j, filled))


@dataclass(frozen=True)
class ColumnSummary:
    """One column at a glance, so that a front end can offer a choice.

    Attributes
    ----------
    name : str
    index : int
        0-based position among the columns.
    numeric_count : int
        Cells that are finite numbers.
    non_numeric_count : int
        Non-empty cells that are not finite numbers (text, ``NaN``, ``inf``,
        detection limits).
    empty_count : int
    limit_count : int
        Cells written as a detection or reporting limit (``<0.5``, ``>100``).
    first_values : tuple of str
        Up to five first non-empty cells, as text.
    decimal_mark : str
    decimal_mark_basis : str
        See :class:`~clusterdesk.io.numbers.NumberStyle`.
    thousands_separator : str or None
    unit : str or None
    mostly_numeric : bool
        The column has finite numbers, and at least half of its non-empty
        cells are numbers (finite or not, or written as limits).
    row_numbers : bool
        The column is a running row number (1, 2, 3, ... or 0, 1, 2, ...).
    """

    name: str
    index: int
    numeric_count: int
    non_numeric_count: int
    empty_count: int
    limit_count: int
    first_values: tuple[str, ...]
    decimal_mark: str
    decimal_mark_basis: str
    thousands_separator: str | None
    unit: str | None
    mostly_numeric: bool
    row_numbers: bool


def _is_row_number(parsed: ParsedColumn, numeric: int) -> bool:
    values = parsed.values
    if values.size < 3 or numeric != values.size or values[0] not in (0.0, 1.0):
        return False
    if values[-1] != values[0] + values.size - 1:
        return False
    block = 1 << 20
    for a in range(0, values.size - 1, block):
        if not np.all(np.diff(values[a : a + block + 1]) == 1.0):
            return False
    return True


def status_counts(status: np.ndarray) -> np.ndarray:
    """Number of cells with each reason code, shape (len(REASON_WORDS),) (no int64 copy of the codes)."""
    if status.size < 100_000:
        return np.bincount(status, minlength=len(R.REASON_WORDS))
    counts = np.zeros(len(R.REASON_WORDS), dtype=np.int64)
    left = int(np.count_nonzero(status))  # rows not kept (KEPT is 0): one pass, no temporary
    counts[R.KEPT] = status.size - left
    for code in range(1, len(R.REASON_WORDS)):
        if not left:
            break
        counts[code] = np.count_nonzero(status == code)
        left -= counts[code]
    return counts


def summarize(table: Table) -> list[ColumnSummary]:
    """Summarise every column of a table.

    Parameters
    ----------
    table : Table

    Returns
    -------
    list of ColumnSummary, one per column
    """
    out = []
    for j, name in enumerate(table.names):
        parsed = table.parsed(j)
        counts = status_counts(parsed.status)
        numeric = int(counts[R.KEPT])
        empty = int(counts[R.EMPTY])
        limits = int(counts[R.BELOW_LIMIT] + counts[R.ABOVE_LIMIT])
        non_numeric = int(parsed.status.size - numeric - empty)
        style = parsed.style
        out.append(
            ColumnSummary(
                name=name,
                index=j,
                numeric_count=numeric,
                non_numeric_count=non_numeric,
                empty_count=empty,
                limit_count=limits,
                first_values=table.first_values(j),
                decimal_mark=style.decimal_mark,
                decimal_mark_basis=style.decimal_mark_basis,
                thousands_separator=style.thousands_separator,
                unit=style.unit,
                mostly_numeric=numeric > 0 and numeric + limits + int(counts[R.NOT_FINITE]) >= 0.5 * (numeric + non_numeric),
                row_numbers=_is_row_number(parsed, numeric),
            )
        )
    return out


def _names_list(summaries: Sequence[ColumnSummary]) -> str:
    return ", ".join(repr(s.name) for s in summaries)


def choose_column(summaries: Sequence[ColumnSummary], spec, where: str, role: str = "value",
                  passing_over: int | None = None) -> ColumnSummary:
    """Pick a column by name, by 0-based index, or (``spec=None``) by default.

    The default is the first mostly-numeric column, passing over a running
    row number (1, 2, 3, ...) when another mostly-numeric column exists.

    Parameters
    ----------
    summaries : sequence of ColumnSummary
    spec : str, int or None
        A column name (exact, else ignoring case and surrounding spaces) or a
        0-based index.
    where : str
        The source's name, for messages.
    role : str, default "value"
        ``"value"`` or ``"count"``, for messages.
    passing_over : int, optional
        Position of a column the default may not pick (the count column of a
        value/count table, so that a tally whose classes are 1, 2, 3, ... takes
        its class column even though it looks like a row number).

    Returns
    -------
    ColumnSummary

    Raises
    ------
    InputError
        Unknown name, index out of range, or (default) no numeric column.
    """
    if spec is None:
        numeric = [s for s in summaries if s.mostly_numeric and s.index != passing_over]
        if not numeric:
            shown = "; ".join(f"{s.name!r} (first values: {', '.join(s.first_values) or 'none'})" for s in summaries[:6])
            raise InputError(
                f"{where} has no column of numbers (columns: {shown}); "
                "check the file, or choose a column by name if its numbers use an unusual notation."
            )
        not_counters = [s for s in numeric if not s.row_numbers]
        return (not_counters or numeric)[0]
    if isinstance(spec, bool) or not isinstance(spec, (int, np.integer, str)):
        raise InputError(f"The {role} column must be given by name (str) or 0-based position (int), not {spec!r}.")
    if isinstance(spec, str):
        for s in summaries:
            if s.name == spec:
                return s
        folded = spec.strip().casefold()
        matches = [s for s in summaries if s.name.strip().casefold() == folded]
        if len(matches) == 1:
            return matches[0]
        raise InputError(f"{where} has no column named {spec!r}; the columns are {_names_list(summaries)}.")
    index = int(spec)
    if not 0 <= index < len(summaries):
        raise InputError(
            f"{where} has {len(summaries)} column(s), so there is no {role} column at position {index} "
            f"(positions count from 0); the columns are {_names_list(summaries)}."
        )
    return summaries[index]
