"""Excel workbooks (Office Open XML, ECMA-376), read with python-calamine.

Fixtures are written with openpyxl in each test; openpyxl's own reading of the
same file is the independent reference for the values.
"""

from __future__ import annotations

import datetime
import io
import zipfile

import numpy as np
import openpyxl
import pytest

from clusterdesk.errors import FileFormatError, InputError
from clusterdesk.io import list_columns, read_measurements, sheet_names


@pytest.fixture
def workbook(make_xlsx):
    """Write {sheet name: list of rows} with openpyxl to a path; returns the path."""

    def _write(path, sheets):
        path.write_bytes(make_xlsx(sheets))
        return path

    return _write


def test_values_match_openpyxl(tmp_path, workbook):
    rng = np.random.default_rng(11)
    values = rng.normal(30, 4, 200).round(2).tolist()
    path = workbook(tmp_path / "lengths.xlsx", {"catch": [["length_cm", "station"]] + [[v, "A"] for v in values]})
    book = openpyxl.load_workbook(path, read_only=True)  # read-only books keep the file open until closed
    try:
        reference = [row[0] for row in book.active.iter_rows(min_row=2, values_only=True)]
    finally:
        book.close()
    m = read_measurements(path)
    assert m.values.tolist() == reference == values
    assert m.format.reader == "xlsx" and m.format.sheet == "catch" and m.format.encoding is None
    assert m.format.header_line == 1
    assert m.rows.line.tolist() == list(range(2, 202))  # sheet row numbers


def test_sheet_choice_by_name_and_position(tmp_path, workbook):
    path = workbook(tmp_path / "two.xlsx", {"first": [["a"], [1.0], [2.0]], "second": [["b"], [10.0], [20.0], [30.0]]})
    assert sheet_names(path) == ["first", "second"]
    assert read_measurements(path).values.tolist() == [1.0, 2.0]
    assert read_measurements(path, sheet="second").values.tolist() == [10.0, 20.0, 30.0]
    assert read_measurements(path, sheet=1).format.sheet == "second"
    assert read_measurements(path, sheet="SECOND").format.sheet == "second"
    with pytest.raises(InputError, match="no sheet named 'third'.*'first', 'second'"):
        read_measurements(path, sheet="third")
    with pytest.raises(InputError, match="position 5"):
        read_measurements(path, sheet=5)
    assert [c.name for c in list_columns(path, sheet="second")] == ["b"]


def test_empty_sheet_is_a_clear_error_and_skipped_by_default(tmp_path, workbook):
    path = workbook(tmp_path / "e.xlsx", {"blank": [], "data": [["x"], [1.5], [2.5]]})
    with pytest.raises(FileFormatError, match="Sheet 'blank' of 'e.xlsx' is empty.*sheets with data: 'data'"):
        read_measurements(path, sheet="blank")
    m = read_measurements(path)
    assert m.format.sheet == "data" and any("no data" in note for note in m.format.notes)
    only_blank = workbook(tmp_path / "only.xlsx", {"blank": []})
    with pytest.raises(FileFormatError, match="Every sheet"):
        read_measurements(only_blank)


def test_preamble_rows_and_sheet_row_numbers(tmp_path, workbook):
    rows = [["Instrument: X"], ["Operator", "J. Doe"], [], ["length", "count"], [12.5, 3], [13.0, 2], [None, 1], [14.5, 4]]
    path = workbook(tmp_path / "p.xlsx", {"s": rows})
    m = read_measurements(path, counts="count")
    assert m.format.preamble_lines == (1, 2) and m.format.header_line == 4
    assert m.values.tolist() == [12.5, 13.0, 14.5] and m.counts.tolist() == [3.0, 2.0, 4.0]
    assert m.rows.line.tolist() == [5, 6, 7, 8]
    assert m.summary.excluded == {"empty": 1}


def test_formulas_without_saved_results_read_as_empty(tmp_path, workbook):
    # openpyxl writes formulas without a cached result; a spreadsheet program
    # saves one.  Without a result the cell is empty: we do not evaluate formulas.
    path = workbook(tmp_path / "f.xlsx", {"s": [["x"], [1.5], ["=A2*2"], [2.5]]})
    m = read_measurements(path)
    assert m.values.tolist() == [1.5, 2.5]
    assert m.summary.excluded == {"empty": 1}
    assert m.rows.line[~m.rows.kept].tolist() == [3]


def test_formula_with_saved_result_is_read(tmp_path, workbook):
    # Build a sheet whose formula cell carries a cached value <v>, as Excel saves it (ECMA-376 Part 1, 18.3.1.40).
    path = workbook(tmp_path / "cached.xlsx", {"s": [["x"], [1.5], [2.0]]})
    buffer = io.BytesIO()
    with zipfile.ZipFile(path) as source, zipfile.ZipFile(buffer, "w") as target:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                data = data.replace(b'<c r="A3" t="n"><v>2</v></c>', b'<c r="A3"><f>A2*2</f><v>3</v></c>')
                assert b"<f>A2*2</f>" in data
            target.writestr(item, data)
    path.write_bytes(buffer.getvalue())
    assert read_measurements(path).values.tolist() == [1.5, 3.0]


def test_merged_cells_hold_their_value_in_the_first_cell(tmp_path):
    path = tmp_path / "m.xlsx"
    book = openpyxl.Workbook()
    sheet = book.active
    for row in (["x", "y"], [1.0, 2.0], [3.0, None], [5.0, 6.0]):
        sheet.append(row)
    sheet.merge_cells("A3:B3")
    book.save(path)
    m = read_measurements(path, column="y")
    assert m.values.tolist() == [2.0, 6.0] and m.summary.excluded == {"empty": 1}
    assert any("merged" in note for note in m.format.notes)


def test_dates_booleans_and_text_numbers(tmp_path, workbook):
    rows = [["x"], [1.5], [datetime.date(2024, 1, 2)], [True], ["2.5"], ["  3.5 "]]
    m = read_measurements(workbook(tmp_path / "d.xlsx", {"s": rows}))
    assert m.values.tolist() == [1.5, 2.5, 3.5]
    assert m.summary.excluded == {"not a number": 2}
    assert m.rows.raw(1) == "2024-01-02" and m.rows.raw(2) == "TRUE"


def test_no_header_names_columns_by_letter(tmp_path, workbook):
    m = read_measurements(workbook(tmp_path / "n.xlsx", {"s": [[1.0, 2.0], [3.0, 4.0]]}), column="column B")
    assert m.values.tolist() == [2.0, 4.0]


def test_zip_that_is_not_a_workbook(write):
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        archive.writestr("readme.txt", "hello")
    path = write("notes.xlsx", buffer.getvalue())
    with pytest.raises(FileFormatError, match="ZIP archive but not an Excel workbook"):
        read_measurements(path)
    with pytest.raises(FileFormatError):
        sheet_names(path)


def test_damaged_workbook(write, tmp_path, workbook):
    good = workbook(tmp_path / "g.xlsx", {"s": [["x"], [1.0]]}).read_bytes()
    path = write("cut.xlsx", good[: len(good) // 2])
    with pytest.raises(FileFormatError, match="damaged|could not be read"):
        read_measurements(path)


def test_sheet_names_of_a_text_file(write):
    with pytest.raises(FileFormatError, match="not a workbook"):
        sheet_names(write("a.csv", "x\n1\n"))
    with pytest.raises(InputError, match="no sheet can be chosen"):
        read_measurements(write("b.csv", "x\n1\n"), sheet="s")
