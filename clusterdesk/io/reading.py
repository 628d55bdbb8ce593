"""The public entry points: read measurements, list columns, list sheets."""

from __future__ import annotations

import hashlib
import os
import pathlib
import threading
from dataclasses import dataclass, replace

import numpy as np

from ..errors import FileFormatError, InputError
from . import reasons as R
from .cleaning import ReadSummary, RowFates, check_scale_and_range, clean_column, detect_resolution
from .decoding import binary_kind, decode, is_zip
from .fastpath import read_fast_table
from .large_file import read_large_column
from .table import ColumnSummary, choose_column, summarize
from .text_table import read_text_table
from .xlsx import read_xlsx_table, workbook_sheet_names

__all__ = ["SourceFormat", "Measurements", "read_measurements", "list_columns", "sheet_names"]

#: Text files at least this large go to the vectorised reader (parser="auto").
FAST_PATH_BYTES = 1 << 20
_PARSERS = ("auto", "general", "vectorised")
_WORKBOOK_SUFFIXES = (".xlsx", ".xlsm", ".ods")


@dataclass(frozen=True)
class SourceFormat:
    """What was detected while reading a source.

    Attributes
    ----------
    reader : str
        ``"delimited text"``, ``"one value per line"``, ``"xlsx"`` or ``"ods"``.
    encoding : str or None
        Text encoding (None for workbooks), e.g. ``"utf-8"``, ``"utf-8-sig"``,
        ``"utf-16-le"``, ``"windows-1252"``, ``"latin-1"``.
    encoding_fallback : bool
        True when the text was not UTF-8/UTF-16 and a single-byte encoding was assumed.
    delimiter : str or None
        ``"comma"``, ``"semicolon"``, ``"tab"``, ``"pipe"``, ``"spaces"`` or
        ``"none (one column)"``; None for workbooks.
    decimal_mark : str
        Decimal mark of the chosen column (``"."`` or ``","``).
    decimal_mark_basis : str
        ``"detected"``, ``"mixed"``, ``"ambiguous"`` or ``"no decimals"``.
    unit : str or None
        Unit glued to every number of the chosen column, if any.
    header_line : int or None
        1-based line (or sheet row) of the header; None when there is none.
    preamble_lines : tuple of int
        Lines (or sheet rows) of metadata above the table, skipped.
    preamble : tuple of str
        Their text (e.g. ``"Instrument: X"``).
    comment_lines : int
        Lines starting with ``#``, skipped.
    sheet : str or None
        The sheet read (workbooks only).
    parser : str
        ``"general"`` (per cell), ``"vectorised"`` (numpy kernels for large
        plain text files) or ``"vectorised (pandas C parser)"`` (a plain
        one-column file, where pandas 3 is installed).
    notes : tuple of str
        Anything else worth knowing (ignored extra cells, merged cells, ...).
    """

    reader: str
    encoding: str | None
    encoding_fallback: bool
    delimiter: str | None
    decimal_mark: str
    decimal_mark_basis: str
    unit: str | None
    header_line: int | None
    preamble_lines: tuple[int, ...]
    preamble: tuple[str, ...]
    comment_lines: int
    sheet: str | None
    parser: str
    notes: tuple[str, ...]


@dataclass(frozen=True)
class Measurements:
    """One column of measurements, cleaned, with every row accounted for.

    Attributes
    ----------
    values : ndarray of float64, shape (n_kept,)
        Kept values on the original scale, in file order (read-only).
    fit_values : ndarray of float64, shape (n_kept,)
        The same on the analysis scale (``values`` itself for ``"linear"``).
    counts : ndarray of float64, shape (n_kept,), or None
        Count of each kept value, when a count column is used.
    scale : str
        ``"linear"``, ``"ln"`` or ``"log10"``.
    low, high : float or None
        The range limits applied (inclusive, original scale).
    rows : RowFates
        The fate of every data row.
    summary : ReadSummary
    format : SourceFormat
    column : ColumnSummary
        The value column.
    count_column : ColumnSummary or None
    columns : tuple of ColumnSummary
        Every column of the source.
    resolution : float or None
        Step of the value grid (e.g. 0.1 or 1) on the original scale; None
        for continuous data.
    source : str
        The path as given, or ``"<text>"`` for pasted text.
    sha256 : str
        Hex digest of the file's bytes (or of the text's UTF-8 encoding).
    """

    values: np.ndarray
    fit_values: np.ndarray
    counts: np.ndarray | None
    scale: str
    low: float | None
    high: float | None
    rows: RowFates
    summary: ReadSummary
    format: SourceFormat
    column: ColumnSummary
    count_column: ColumnSummary | None
    columns: tuple[ColumnSummary, ...]
    resolution: float | None
    source: str
    sha256: str

    @property
    def n(self) -> int:
        """Number of kept values."""
        return int(self.values.size)

    @staticmethod
    def reason_words(code: int) -> str:
        """Words for a row-fate code (see :mod:`clusterdesk.io.reasons`)."""
        return R.reason_words(code)


@dataclass
class _Source:
    data: bytes | None
    text: str | None
    where: str
    label: str
    suffix: str


def _load(source, text) -> _Source:
    if text is not None:
        if source is not None:
            raise InputError("Give either a source (path) or text=..., not both.")
        if not isinstance(text, str):
            raise InputError(f"text= must be a str, not {type(text).__name__}.")
        return _Source(None, text, "The pasted text", "<text>", "")
    if isinstance(source, str) and ("\n" in source or "\r" in source):
        return _Source(None, source, "The pasted text", "<text>", "")
    if not isinstance(source, (str, os.PathLike)):
        raise InputError(
            f"The source must be a path (str or pathlib.Path) or text containing a line break, not {type(source).__name__}."
        )
    path = pathlib.Path(source)
    where = repr(path.name or str(path))
    if not path.exists():
        # A string that reads as data (a number, or fields) was probably meant as text to read.
        looks_like_data = any(ch in str(source) for ch in ",;\t ") or _is_number(str(source))
        hint = " (text to read goes in text=..., not in the file argument)" if looks_like_data else ""
        raise InputError(f"There is no file at {str(path)!r}; check the folder and the file name{hint}.")
    if path.is_dir():
        raise InputError(f"{str(path)!r} is a folder, not a file; choose a CSV, text or XLSX file inside it.")
    if not path.is_file():  # a pipe, socket or device: reading it could wait for ever
        raise InputError(f"{where} is not a regular file (a pipe, socket or device); "
                         "copy its contents into a file and open that.")
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{where} could not be opened ({exc.strerror or exc}); check that it is readable.") from None
    return _Source(data, None, where, str(source), path.suffix.lower())


class _Digest(threading.Thread):
    """SHA-256 of the source, computed on a second thread (hashlib releases the GIL) while the table is parsed."""

    def __init__(self, src: _Source):
        super().__init__(daemon=True)
        self._payload = src.data if src.data is not None else src.text.encode("utf-8", "surrogatepass")
        self.hexdigest = ""
        self.start()

    def run(self) -> None:
        self.hexdigest = hashlib.sha256(self._payload).hexdigest()
        self._payload = None

    def result(self) -> str:
        self.join()
        return self.hexdigest


@dataclass(frozen=True)
class _Known:
    """A digest already computed (the :class:`_Digest` interface)."""

    hexdigest: str

    def result(self) -> str:
        return self.hexdigest


def _read_large(source, text, *, sheet, delimiter, header, parser):
    """A large one-column file read by pandas from its path (see :mod:`.large_file`): (source, table, digest) or None."""
    if text is not None or sheet is not None or parser == "general" or not isinstance(source, (str, os.PathLike)):
        return None
    if isinstance(source, str) and ("\n" in source or "\r" in source):
        return None
    path = pathlib.Path(source)
    if path.suffix.lower() in _WORKBOOK_SUFFIXES:
        return None
    where = repr(path.name or str(path))
    found = read_large_column(path, where, delimiter=delimiter, header=header)
    if found is None:
        return None
    table, sha256 = found
    return _Source(None, None, where, str(source), path.suffix.lower()), table, _Known(sha256)


def _read_table(src: _Source, *, sheet, delimiter, header, parser):
    if parser not in _PARSERS:
        raise InputError(f"The parser {parser!r} is not known; use one of {', '.join(repr(p) for p in _PARSERS)}.")
    if src.text is not None:
        if sheet is not None:
            raise InputError("A sheet can only be chosen for a workbook (.xlsx), not for text.")
        return read_text_table(src.text, src.where, encoding=None, delimiter=delimiter, header=header)
    data = src.data
    if not data or data.isspace():
        raise FileFormatError(f"{src.where} is empty; choose a file that holds a column of measurements.")
    if is_zip(data):
        return read_xlsx_table(data, src.where, sheet=sheet, header=header)
    if sheet is not None:
        raise InputError(f"{src.where} is not a workbook, so no sheet can be chosen; leave sheet=None.")
    kind = binary_kind(data)
    if kind is None and src.suffix in _WORKBOOK_SUFFIXES:
        notes = (f"{src.where} is named like a workbook but holds text; it was read as text.",)
    else:
        notes = ()
    table = None
    if parser == "vectorised" or (parser == "auto" and len(data) >= FAST_PATH_BYTES):
        table = read_fast_table(data, src.where, delimiter=delimiter, header=header)
    if table is None:
        decoded = decode(data, src.where)
        table = read_text_table(
            decoded.text,
            src.where,
            encoding=decoded.encoding,
            encoding_fallback=decoded.fallback,
            delimiter=delimiter,
            header=header,
        )
    if notes:
        table.info = replace(table.info, notes=table.info.notes + notes)
    return table


def list_columns(source=None, *, text=None, sheet=None, delimiter="auto", header=None) -> list[ColumnSummary]:
    """Summarise the columns of a source without choosing one.

    Parameters
    ----------
    source : str or pathlib.Path, optional
        A path, or text containing a line break.
    text : str, optional
        Text to read instead of a file (e.g. pasted from a spreadsheet).
    sheet : str or int, optional
        Sheet name or 0-based position (workbooks only).
    delimiter : str or None, default "auto"
        ``"auto"``, ``","``, ``";"``, ``"\\t"``, ``"|"``, ``" "`` (runs of
        spaces) or None (one value per line).
    header : bool or None, default None
        None detects the header row.

    Returns
    -------
    list of ColumnSummary

    Raises
    ------
    InputError, FileFormatError
        When the source cannot be read.
    """
    src = _load(source, text)
    table = _read_table(src, sheet=sheet, delimiter=delimiter, header=header, parser="auto")
    return summarize(table)


def sheet_names(source) -> list[str]:
    """List the sheets of a workbook, in workbook order.

    Parameters
    ----------
    source : str or pathlib.Path
        Path to an ``.xlsx`` (or ``.ods``) file.

    Returns
    -------
    list of str

    Raises
    ------
    FileFormatError
        If the file is not a workbook.
    """
    src = _load(source, None)
    if src.data is None or not is_zip(src.data):
        raise FileFormatError(f"{src.where} is not a workbook (.xlsx), so it has no sheets.")
    return workbook_sheet_names(src.data, src.where)


def read_measurements(
    source=None,
    *,
    text: str | None = None,
    column: str | int | None = None,
    counts: str | int | None = None,
    sheet: str | int | None = None,
    low: float | None = None,
    high: float | None = None,
    scale: str = "linear",
    delimiter="auto",
    header: bool | None = None,
    parser: str = "auto",
) -> Measurements:
    """Read one column of measurements from a file or pasted text, and clean it.

    Parameters
    ----------
    source : str or pathlib.Path, optional
        A path to a CSV/TSV/text/XLSX file, or text containing a line break.
    text : str, optional
        Text to read instead of a file (e.g. pasted from a spreadsheet).
    column : str or int, optional
        Value column by name or 0-based position; default: the first
        mostly-numeric column (a running row number 1, 2, 3, ... is passed over).
    counts : str or int, optional
        Count column (value/count tables); default: none, each row counts once.
    sheet : str or int, optional
        Sheet name or 0-based position (workbooks only); default: the first
        sheet with data.
    low, high : float, optional
        Inclusive range limits on the original scale; rows outside are excluded.
    scale : {"linear", "ln", "log10"}, default "linear"
        Analysis scale; under a log scale, values <= 0 are excluded.
    delimiter : str or None, default "auto"
        ``"auto"`` detects among ``,`` ``;`` tab ``|`` and runs of spaces (or
        one value per line); or give one of ``","``, ``";"``, ``"\\t"``,
        ``"|"``, ``" "``, None.
    header : bool or None, default None
        None detects the header row; True/False forces it.
    parser : {"auto", "general", "vectorised"}, default "auto"
        ``"auto"`` uses the vectorised reader for text files of 1 MiB or
        more when they suit it; both give identical results.

    Returns
    -------
    Measurements

    Raises
    ------
    FileFormatError
        The file cannot be read as a table (empty, header only, binary, not
        a workbook, empty sheet, ...).
    InputError
        Unknown column or sheet, bad settings, or no value kept.
    """
    low, high = check_scale_and_range(scale, low, high)
    large = _read_large(source, text, sheet=sheet, delimiter=delimiter, header=header, parser=parser)
    if large is not None:
        src, table, digest = large
    else:
        src = _load(source, text)
        digest = _Digest(src)
        table = _read_table(src, sheet=sheet, delimiter=delimiter, header=header, parser=parser)
    summaries = summarize(table)
    count_column = None if counts is None else choose_column(summaries, counts, src.where, "count")
    chosen = choose_column(summaries, column, src.where, "value",
                           passing_over=None if count_column is None else count_column.index)
    if count_column is not None:
        if count_column.index == chosen.index:
            raise InputError(
                f"The count column and the value column are the same ({chosen.name!r}); choose two different columns."
            )
    parsed = table.parsed(chosen.index)
    if chosen.numeric_count == 0:
        raise InputError(
            f"Column {chosen.name!r} of {src.where} holds no numbers (first values: "
            f"{', '.join(chosen.first_values) or 'none'}); choose another column: "
            f"{', '.join(repr(s.name) for s in summaries if s.mostly_numeric) or 'none has numbers'}."
        )
    sha256 = digest.result()

    def release() -> None:
        table.release()
        src.data = None

    result = clean_column(
        parsed,
        table.lines,
        lambda positions: table.raw(chosen.index, positions),
        counts=None if count_column is None else table.parsed(count_column.index),
        low=low,
        high=high,
        scale=scale,
        release=release,
    )
    if result.summary.rows_kept == 0:
        raise InputError(
            f"No value of column {chosen.name!r} of {src.where} was kept ({result.summary}); "
            "widen the range, check the count column, or choose another scale."
        )
    info = table.info
    style = parsed.style
    fmt = SourceFormat(
        reader=info.reader,
        encoding=info.encoding,
        encoding_fallback=info.encoding_fallback,
        delimiter=info.delimiter,
        decimal_mark=style.decimal_mark,
        decimal_mark_basis=style.decimal_mark_basis,
        unit=style.unit,
        header_line=info.header_line,
        preamble_lines=info.preamble_lines,
        preamble=info.preamble,
        comment_lines=info.comment_lines,
        sheet=info.sheet,
        parser=info.parser,
        notes=info.notes,
    )
    return Measurements(
        values=result.values,
        fit_values=result.fit_values,
        counts=result.counts,
        scale=scale,
        low=low,
        high=high,
        rows=result.rows,
        summary=result.summary,
        format=fmt,
        column=chosen,
        count_column=count_column,
        columns=tuple(summaries),
        resolution=detect_resolution(result.values),
        source=src.label,
        sha256=sha256,
    )


def _is_number(text: str) -> bool:
    try:
        float(text.replace(",", "."))
    except ValueError:
        return False
    return True
