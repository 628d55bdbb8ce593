"""Excel workbooks (Office Open XML, ECMA-376) through python-calamine.

python-calamine (Rust) reads cells about eight times faster than openpyxl on
large sheets (measured in ``tests/bench/bench_read.py``), so it is the reader.
A formula cell gives the result the spreadsheet program saved with it; a
formula never calculated (for example written by a script) reads as an empty
cell.  A merged range holds its value in its first cell only.
"""

from __future__ import annotations

import io
import zipfile

from ..errors import FileFormatError, InputError
from .layout import column_names, find_layout, has_no_data
from .table import Table, TableInfo, line_array
from .text_table import LAYOUT_SAMPLE

__all__ = ["workbook_sheet_names", "read_xlsx_table", "column_letter"]



def column_letter(index: int) -> str:
    """Spreadsheet letters of a 0-based column index (0 -> "A", 26 -> "AA")."""
    letters = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def _check_archive(data: bytes, where: str) -> str:
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            names = set(archive.namelist())
            mimetype = archive.read("mimetype") if "mimetype" in names else b""
    except (zipfile.BadZipFile, OSError, ValueError, EOFError, KeyError, NotImplementedError):
        raise FileFormatError(
            f"{where} is a damaged or incomplete ZIP archive, so it cannot be read as an Excel workbook; "
            "open it in a spreadsheet program and save it again as .xlsx."
        ) from None
    if "xl/workbook.xml" in names or "xl/workbook.bin" in names:
        return "xlsx"
    if mimetype.startswith(b"application/vnd.oasis.opendocument.spreadsheet"):
        return "ods"
    raise FileFormatError(
        f"{where} is a ZIP archive but not an Excel workbook (it has no xl/workbook.xml); "
        "unpack it and open the table inside, or save the data as .xlsx or CSV."
    )


def _open(data: bytes, where: str):
    kind = _check_archive(data, where)
    from python_calamine import CalamineWorkbook

    try:
        return kind, CalamineWorkbook.from_filelike(io.BytesIO(data))
    except Exception as exc:  # calamine raises its own types for damaged or protected files
        raise FileFormatError(
            f"{where} could not be read as a workbook ({type(exc).__name__}: {exc}); "
            "if it is password-protected remove the protection, otherwise save it again as .xlsx."
        ) from None


def workbook_sheet_names(data: bytes, where: str) -> list[str]:
    """List the sheet names of a workbook, in workbook order.

    Parameters
    ----------
    data : bytes
        The file's bytes.
    where : str
        The file's name, for messages.

    Returns
    -------
    list of str

    Raises
    ------
    FileFormatError
        If the bytes are not a readable workbook.
    """
    _, workbook = _open(data, where)
    try:
        return list(workbook.sheet_names)
    finally:
        workbook.close()


def _sheet_rows(workbook, name: str, where: str) -> tuple[list[list], list]:
    """The sheet's rows from A1 on, and its merged ranges."""
    try:
        sheet = workbook.get_sheet_by_name(name)
        return sheet.to_python(skip_empty_area=False), sheet.merged_cell_ranges or []
    except Exception as exc:
        raise FileFormatError(
            f"Sheet {name!r} of {where} could not be read ({type(exc).__name__}: {exc}); "
            "save the workbook again as .xlsx or export the sheet as CSV."
        ) from None


def _has_data(rows: list[list]) -> bool:
    return any(cell not in ("", None) for row in rows for cell in row)


def _pick_sheet(workbook, sheet, where: str) -> tuple[str, list[list], list, list[str]]:
    names = list(workbook.sheet_names)
    notes: list[str] = []
    if not names:
        raise FileFormatError(f"{where} holds no sheets; save a workbook with the measurements on a sheet.")
    listed = ", ".join(repr(n) for n in names)
    if sheet is None:
        visible = [m.name for m in workbook.sheets_metadata if str(m.visible).endswith("Visible")] or names
        for name in visible + [n for n in names if n not in visible]:
            rows, merged = _sheet_rows(workbook, name, where)
            if _has_data(rows):
                if name != names[0]:
                    notes.append(f"Sheet {names[0]!r} has no data; sheet {name!r} was read instead.")
                return name, rows, merged, notes
        raise FileFormatError(f"Every sheet of {where} is empty (sheets: {listed}); put the measurements on a sheet.")
    if isinstance(sheet, bool) or not isinstance(sheet, (int, str)):
        raise InputError(f"The sheet must be given by name (str) or 0-based position (int), not {sheet!r}.")
    if isinstance(sheet, int):
        if not 0 <= sheet < len(names):
            raise InputError(
                f"{where} has {len(names)} sheet(s), so there is no sheet at position {sheet} "
                f"(positions count from 0); the sheets are {listed}."
            )
        name = names[sheet]
    else:
        matches = [n for n in names if n == sheet] or [n for n in names if n.strip().casefold() == sheet.strip().casefold()]
        if len(matches) != 1:
            raise InputError(f"{where} has no sheet named {sheet!r}; the sheets are {listed}.")
        name = matches[0]
    rows, merged = _sheet_rows(workbook, name, where)
    if not _has_data(rows):
        others = [n for n in names if n != name and _has_data(_sheet_rows(workbook, n, where)[0])]
        hint = f"sheets with data: {', '.join(repr(n) for n in others)}" if others else "no sheet holds data"
        raise FileFormatError(f"Sheet {name!r} of {where} is empty ({hint}).")
    return name, rows, merged, notes


def read_xlsx_table(data: bytes, where: str, *, sheet: str | int | None = None, header: bool | None = None) -> Table:
    """Read one sheet of a workbook into a table.

    Parameters
    ----------
    data : bytes
        The file's bytes.
    where : str
        The file's name, for messages.
    sheet : str, int or None, default None
        Sheet name or 0-based position; None takes the first sheet with data.
    header : bool or None, default None
        See :func:`~.layout.find_layout`.

    Returns
    -------
    Table
        ``lines`` holds 1-based sheet row numbers.

    Raises
    ------
    FileFormatError
        Not a workbook, damaged, empty sheet, or a header without data.
    InputError
        Unknown sheet.
    """
    kind, workbook = _open(data, where)
    try:
        name, rows, merged, notes = _pick_sheet(workbook, sheet, where)
    finally:
        workbook.close()
    end = len(rows)
    while end and not any(cell not in ("", None) for cell in rows[end - 1]):
        end -= 1
    sample = rows[: min(end, LAYOUT_SAMPLE)]
    layout = find_layout(sample, header)
    if layout.data_start >= end or has_no_data(sample, layout):
        raise FileFormatError(f"Sheet {name!r} of {where} has a header row but no data rows below it.")
    header_cells = rows[layout.header] if layout.header is not None else None
    names = column_names(header_cells, layout.n_columns)
    if header_cells is None:
        names = [f"column {column_letter(j)}" for j in range(layout.n_columns)]
    data_rows = rows[layout.data_start : end]
    try:  # calamine's rows are all as wide as the sheet
        columns = [[r[j] for r in data_rows] for j in range(layout.n_columns)]
    except IndexError:
        columns = [[r[j] if j < len(r) else None for r in data_rows] for j in range(layout.n_columns)]
    if merged:
        notes.append(f"The sheet has {len(merged)} merged cell range(s); each holds its value in its first cell only.")
    info = TableInfo(
        reader=kind,
        header_line=None if layout.header is None else layout.header + 1,
        preamble_lines=tuple(i + 1 for i in layout.preamble),
        preamble=tuple(" ".join(str(c) for c in rows[i] if c not in ("", None)) for i in layout.preamble),
        sheet=name,
        notes=tuple(notes),
    )
    lines = line_array(range(layout.data_start + 1, end + 1), end - layout.data_start)
    return Table(names, columns, lines, info)
