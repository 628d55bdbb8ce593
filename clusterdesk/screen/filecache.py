"""Read each file once per worker process: its sheets, their columns, cleaned values.

A screening run asks for many columns of the same file. Reading a file parses
every column of it (the reader must see them all to find the header and the
layout), so reading it once per column would cost a full read per column. This
module keeps the last few files read in this process, parsed, and cleans one
column at a time from them; the scheduler of :mod:`.runner` sends the columns of
a file to the worker that read it.

The values are the ones :func:`clusterdesk.io.read_measurements` gives for the
same file, sheet and column (default cleaning, linear scale): the steps below
are those of ``read_measurements`` after its table is read, and
tests/screen/test_filecache.py checks that both agree. It uses three helpers of
:mod:`clusterdesk.io.reading` that are not public (``_load``, ``_read_table``):
when clusterdesk.io publishes a way to read a table once and clean several of
its columns, this module should call it instead.
"""

from __future__ import annotations

import hashlib
import os
import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..io.cleaning import censored_rows, clean_column, detect_resolution
from ..io.decoding import is_zip
from ..io.reading import _load, _read_table
from ..io.table import summarize
from ..io.xlsx import workbook_sheet_names

__all__ = ["ColumnInfo", "SheetListing", "FileListing", "ColumnValues", "list_file",
           "column_values", "clear_cache", "CACHE_FILES"]

#: Files kept parsed in each process (the most recently used).
CACHE_FILES = 2


@dataclass(frozen=True)
class ColumnInfo:
    """One column of a sheet, as listed before screening.

    Attributes
    ----------
    position : int
        0-based position of the column.
    name : str
    numeric_count, non_numeric_count, empty_count : int
        Cells that are finite numbers, other non-empty cells, empty cells.
    mostly_numeric : bool
        See :class:`clusterdesk.io.ColumnSummary`.
    row_numbers : bool
        The column is a running row number (1, 2, 3, ...).
    first_values : tuple of str
        Up to five first non-empty cells, as text.
    """

    position: int
    name: str
    numeric_count: int
    non_numeric_count: int
    empty_count: int
    mostly_numeric: bool
    row_numbers: bool
    first_values: tuple = ()


@dataclass(frozen=True)
class SheetListing:
    """The columns of one sheet (``name`` None for a text file), or why it could not be read."""

    name: str | None
    columns: tuple = ()
    error: str = ""


@dataclass(frozen=True)
class FileListing:
    """What a file holds, or why it could not be read.

    Attributes
    ----------
    path : str
        Absolute path.
    sha256 : str
        Hex digest of the bytes read ("" when the file could not be read).
    sheets : tuple of SheetListing
        One per sheet of a workbook, in workbook order; one with ``name`` None
        for a text file.
    error : str
        Why the file could not be read at all ("" when it was).
    """

    path: str
    sha256: str = ""
    sheets: tuple = ()
    error: str = ""


@dataclass(frozen=True)
class ColumnValues:
    """One cleaned column.

    Attributes
    ----------
    values : ndarray of float64, shape (n_kept,)
        Kept values, in file order.
    rows_read, rows_kept : int
    excluded : dict of str to int
        Reason words -> number of rows excluded for it.
    resolution : float or None
        Step of the value grid (e.g. 0.1), None for continuous values.
    notes : tuple of str
        What the reader noted about the file or sheet.
    censored : tuple (limits, sides, counts) of ndarray
        Rows at a detection (side -1) or reporting (+1) limit
        (:func:`clusterdesk.io.cleaning.censored_rows`); empty arrays when none.
    """

    values: np.ndarray
    rows_read: int
    rows_kept: int
    excluded: dict
    resolution: float | None
    notes: tuple = ()
    censored: tuple = (np.empty(0), np.empty(0, dtype=int), np.empty(0))


@dataclass
class _OpenedSheet:
    table: object = None
    summaries: list | None = None
    error: str = ""


@dataclass
class _OpenedFile:
    sha256: str
    sheets: "OrderedDict[str | None, _OpenedSheet]"
    stamp: tuple = ()


def _stamp(path: str) -> tuple:
    """Size and modification time: a changed file gets read again even when cached."""
    try:
        info = os.stat(path)
    except OSError:
        return ()
    return (info.st_size, info.st_mtime_ns)


_CACHE: "OrderedDict[str, _OpenedFile]" = OrderedDict()
_LOCK = threading.Lock()


def clear_cache() -> None:
    """Forget every file read by this process."""
    with _LOCK:
        _CACHE.clear()


def _one_sentence(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__


def _open(path: str) -> _OpenedFile:
    """Read and parse every sheet of a file; raises InputError when the file cannot be read."""
    stamp = _stamp(path)
    src = _load(path, None)
    sha256 = hashlib.sha256(src.data).hexdigest()
    names = workbook_sheet_names(src.data, src.where) if src.data and is_zip(src.data) else [None]
    if not names:
        raise InputError(f"{src.where} holds no sheets; save a workbook with the measurements on a sheet.")
    sheets: OrderedDict = OrderedDict()
    for name in names:
        try:
            table = _read_table(src, sheet=name, delimiter="auto", header=None, parser="auto")
            sheets[name] = _OpenedSheet(table=table, summaries=summarize(table))
        except InputError as exc:
            if name is None:  # a text file: the file itself cannot be read
                raise
            sheets[name] = _OpenedSheet(error=_one_sentence(exc))
    src.data = None
    return _OpenedFile(sha256=sha256, sheets=sheets, stamp=stamp)


def _cached(path: str, sha256: str | None) -> _OpenedFile:
    """The parsed file: from the cache when its bytes are those expected, else read now (None: always)."""
    with _LOCK:
        opened = _CACHE.get(path)
        if (opened is not None and sha256 is not None and opened.sha256 == sha256
                and opened.stamp == _stamp(path)):
            _CACHE.move_to_end(path)
            return opened
    opened = _open(path)
    with _LOCK:
        _CACHE[path] = opened
        _CACHE.move_to_end(path)
        while len(_CACHE) > CACHE_FILES:
            _CACHE.popitem(last=False)
    return opened


def _column_info(summary) -> ColumnInfo:
    return ColumnInfo(position=summary.index, name=summary.name, numeric_count=summary.numeric_count,
                      non_numeric_count=summary.non_numeric_count, empty_count=summary.empty_count,
                      mostly_numeric=summary.mostly_numeric, row_numbers=summary.row_numbers,
                      first_values=tuple(summary.first_values))


def list_file(path: str) -> FileListing:
    """List the sheets and columns of a file (never raises: a failure is in ``.error``).

    Parameters
    ----------
    path : str
        Absolute path of a CSV, TSV, text or workbook file.

    Returns
    -------
    FileListing
    """
    try:
        opened = _cached(path, None)
    except InputError as exc:
        return FileListing(path=path, error=_one_sentence(exc))
    except MemoryError:
        return FileListing(path=path, error="The file is too large to read in the memory available; "
                                            "split it into smaller files.")
    except Exception as exc:  # a reader's own failure must not stop the batch
        return FileListing(path=path, error=f"The file could not be read ({type(exc).__name__}: "
                                            f"{_one_sentence(exc)}).")
    sheets = tuple(SheetListing(name=name, error=s.error,
                                columns=tuple(_column_info(c) for c in (s.summaries or ())))
                   for name, s in opened.sheets.items())
    return FileListing(path=path, sha256=opened.sha256, sheets=sheets)


def column_values(path: str, sha256: str, sheet: str | None, position: int) -> ColumnValues:
    """Clean one column of a file, as :func:`clusterdesk.io.read_measurements` would.

    Parameters
    ----------
    path : str
        Absolute path.
    sha256 : str
        Digest of the bytes the column was listed from.
    sheet : str or None
        Sheet name (workbooks) or None (text files).
    position : int
        0-based column position.

    Returns
    -------
    ColumnValues

    Raises
    ------
    InputError
        The file changed since it was listed, the sheet cannot be read, the
        column holds no numbers, or no value was kept.
    """
    opened = _cached(path, sha256)
    if opened.sha256 != sha256:
        raise InputError("The file changed after its columns were listed; screen it again.")
    if sheet not in opened.sheets:
        raise InputError(f"The file has no sheet {sheet!r} any more; screen it again.")
    part = opened.sheets[sheet]
    if part.error:
        raise InputError(part.error)
    summary = part.summaries[position]
    table = part.table
    if summary.numeric_count == 0:
        shown = ", ".join(summary.first_values) or "none"
        raise InputError(f"Column {summary.name!r} holds no numbers (first values: {shown}); "
                         "choose columns of measurements.")
    result = clean_column(table.parsed(position), table.lines,
                          lambda positions: table.raw(position, positions))
    if result.summary.rows_kept == 0:
        raise InputError(f"No value of column {summary.name!r} was kept ({result.summary}).")
    return ColumnValues(values=result.values, rows_read=result.summary.rows_read,
                        rows_kept=result.summary.rows_kept, excluded=dict(result.summary.excluded),
                        resolution=detect_resolution(result.values), notes=tuple(table.info.notes),
                        censored=censored_rows(result.rows))
