"""Delimited or one-value-per-line text (a file or pasted text) to a :class:`~.table.Table`."""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import FileFormatError
from .delimited import DELIMITER_NAMES, is_comment, iter_records, sniff_delimiter, split_lines
from .layout import Layout, column_names, find_layout, has_no_data
from .numbers import looks_numeric
from .table import Table, TableInfo, line_array

__all__ = ["TextLayout", "detect_text_layout", "read_text_table", "text_notes", "extra_cells"]

LAYOUT_SAMPLE = 400
_DELIMITERS = (",", ";", "\t", "|", " ", None)


@dataclass(frozen=True)
class TextLayout:
    """The structure of a text table, found from its first records.

    Attributes
    ----------
    delimiter : str or None
    layout : Layout
        Positions refer to ``records``.
    records : list of (int, list of str)
        The first records (line number, cells), blank ones included.
    names : list of str
    """

    delimiter: str | None
    layout: Layout
    records: list
    names: list[str]

    @property
    def data_start_line(self) -> int | None:
        """Physical line of the first data row (None when there is no data row in the sample)."""
        if self.layout.data_start < len(self.records):
            return self.records[self.layout.data_start][0]
        return None

    @property
    def header_line(self) -> int | None:
        """Physical line of the header row, or None."""
        return None if self.layout.header is None else self.records[self.layout.header][0]


def _check_delimiter(delimiter) -> str | None:
    if delimiter == "auto":
        return delimiter
    if delimiter in ("", "none"):
        return None
    if delimiter in ("whitespace", "spaces"):
        return " "
    if delimiter not in _DELIMITERS:
        raise FileFormatError(
            f"The delimiter {delimiter!r} is not one ClusterDesk reads; use ',', ';', '\\t', '|', ' ' (runs of spaces), "
            "None (one value per line) or 'auto'."
        )
    return delimiter


def detect_text_layout(lines: list[str], where: str, *, delimiter="auto", header: bool | None = None) -> TextLayout:
    """Find the delimiter, preamble, header and columns of a text table.

    Parameters
    ----------
    lines : list of str
        Physical lines (at least the first few thousand).
    where : str
        The source's name, for messages.
    delimiter : str or None, default "auto"
        ``"auto"`` sniffs it; otherwise one of ``","``, ``";"``, ``"\\t"``,
        ``"|"``, ``" "`` (runs of spaces) or None (one value per line).
    header : bool or None, default None
        See :func:`~.layout.find_layout`.

    Returns
    -------
    TextLayout

    Raises
    ------
    FileFormatError
        Empty text, only comments, or a header without data rows.
    """
    delimiter = _check_delimiter(delimiter)
    if not any(line.strip(" \t\u00a0\ufeff") for line in lines):
        raise FileFormatError(f"{where} is empty; choose a file that holds a column of measurements.")
    if delimiter == "auto":
        delimiter = sniff_delimiter(lines)
    records = []
    for record in iter_records(lines, delimiter, where):
        records.append(record)
        if len(records) >= LAYOUT_SAMPLE:
            break
    while records and not records[-1][1]:
        records.pop()
    if not records:
        raise FileFormatError(f"{where} holds only comment lines (starting with #) and no data rows.")
    layout = find_layout([cells for _, cells in records], header)
    if has_no_data([cells for _, cells in records], layout):
        raise FileFormatError(
            f"{where} has a header line but no data rows below it; add the measurements under the header."
        )
    header_cells = records[layout.header][1] if layout.header is not None else None
    names = column_names(header_cells, layout.n_columns)
    return TextLayout(delimiter, layout, records, names)


def text_notes(found: TextLayout, too_long: int) -> tuple[str, ...]:
    """Notes on a text table: the comma/decimal-comma ambiguity, extra cells ignored.

    Parameters
    ----------
    found : TextLayout
    too_long : int
        Rows with non-empty cells beyond the last column.

    Returns
    -------
    tuple of str
    """
    notes = []
    if found.delimiter == "," and _also_one_number(found):
        notes.append(
            "Every data line also reads as one number with a decimal comma; "
            "if the file holds one column of such numbers, read it with delimiter=None."
        )
    if too_long:
        notes.append(f"{too_long} row(s) have more cells than the table has columns; the extra cells were ignored.")
    return tuple(notes)


def extra_cells(cells: list, n_columns: int) -> bool:
    """Tell whether a record has non-empty cells beyond the table's last column."""
    return len(cells) > n_columns and any(c.strip() for c in cells[n_columns:])


def _also_one_number(found: TextLayout) -> bool:
    rows = [cells for _, cells in found.records[found.layout.data_start :] if cells]
    return bool(rows) and all(len(cells) == 2 and looks_numeric(",".join(cells)) for cells in rows)


def read_text_table(
    text: str,
    where: str,
    *,
    encoding: str | None = None,
    encoding_fallback: bool = False,
    delimiter="auto",
    header: bool | None = None,
) -> Table:
    """Read delimited text (or one value per line) into a table.

    Parameters
    ----------
    text : str
        The whole text.
    where : str
        The source's name, for messages.
    encoding : str or None
        Reported only.
    encoding_fallback : bool, default False
        Reported only.
    delimiter : str or None, default "auto"
        See :func:`detect_text_layout`.
    header : bool or None, default None
        See :func:`~.layout.find_layout`.

    Returns
    -------
    Table

    Raises
    ------
    FileFormatError
        See :func:`detect_text_layout` and :func:`~.delimited.iter_records`.
    """
    lines = split_lines(text)
    found = detect_text_layout(lines, where, delimiter=delimiter, header=header)
    start_line = found.data_start_line
    n_columns = len(found.names)
    numbers: list[int] = []
    rows: list[list[str]] = []
    for number, cells in iter_records(lines, found.delimiter, where):
        if number >= start_line:
            numbers.append(number)
            rows.append(cells)
    while rows and not rows[-1]:
        rows.pop()
        numbers.pop()
    too_long = sum(1 for r in rows if extra_cells(r, n_columns))
    columns = [[r[j] if j < len(r) else None for r in rows] for j in range(n_columns)]
    notes = text_notes(found, too_long)
    preamble_lines = tuple(found.records[i][0] for i in found.layout.preamble)
    comment_lines = sum(1 for line in lines if is_comment(line))
    info = TableInfo(
        reader="delimited text" if found.delimiter is not None else "one value per line",
        encoding=encoding,
        encoding_fallback=encoding_fallback,
        delimiter=DELIMITER_NAMES[found.delimiter],
        header_line=found.header_line,
        preamble_lines=preamble_lines,
        preamble=tuple(lines[n - 1] for n in preamble_lines),
        comment_lines=comment_lines,
        notes=notes,
    )
    return Table(found.names, columns, line_array(numbers, len(numbers)), info)
