"""The public API of clusterdesk.io: sources, column choice, reports, checksums."""

from __future__ import annotations

import hashlib
import pathlib
import sys
import subprocess

import pytest

import clusterdesk.io as cio
from clusterdesk.errors import FileFormatError, InputError
from clusterdesk.io import list_columns, read_measurements

TEXT = "species;length;count\ncod;12,5;3\ncod;13,0;2\nhake;NA;1\n"


def test_sources_path_str_path_and_text(write):
    path = write("tally.csv", TEXT)
    from_path = read_measurements(path)
    from_str = read_measurements(str(path))
    from_text = read_measurements(text=TEXT)
    from_newline_str = read_measurements(TEXT)
    for m in (from_path, from_str, from_text, from_newline_str):
        assert m.values.tolist() == [12.5, 13.0]
    assert from_path.source == from_str.source == str(path)
    assert from_text.source == from_newline_str.source == "<text>"
    # the checksum of the file's bytes, and of the text's UTF-8 (hashlib as reference)
    assert from_path.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert from_text.sha256 == hashlib.sha256(TEXT.encode("utf-8")).hexdigest()


def test_text_and_source_together_is_an_error(write):
    with pytest.raises(InputError, match="not both"):
        read_measurements(write("a.csv", "x\n1\n"), text="x\n1\n")
    with pytest.raises(InputError, match="must be a str"):
        read_measurements(text=b"x\n1\n")
    with pytest.raises(InputError, match="only be chosen for a workbook"):
        read_measurements(text="x\n1\n", sheet=0)


def test_column_by_name_index_and_case():
    assert read_measurements(text=TEXT, column="length").column.index == 1
    assert read_measurements(text=TEXT, column=" LENGTH ").column.name == "length"
    assert read_measurements(text=TEXT, column=2).values.tolist() == [3.0, 2.0, 1.0]
    with pytest.raises(InputError, match="no column named 'size'; the columns are 'species', 'length', 'count'"):
        read_measurements(text=TEXT, column="size")
    with pytest.raises(InputError, match="holds no numbers"):
        read_measurements(text=TEXT, column="species")
    with pytest.raises(InputError, match="by name"):
        read_measurements(text=TEXT, column=1.5)


def test_counts_column_and_summary():
    m = read_measurements(text=TEXT, column="length", counts="count")
    assert m.counts.tolist() == [3.0, 2.0]
    assert m.count_column.name == "count"
    assert m.summary.total_count == 5.0
    assert m.summary.excluded == {"not a number": 1}


def test_a_tally_with_classes_1_2_3_takes_its_class_column_by_default():
    # Classes numbered 1, 2, 3, ... look like a running row number, which the
    # default passes over; with a count column given, the other column is the values.
    m = read_measurements(text="score,n\n1,4\n2,9\n3,12\n4,7\n5,2\n", counts="n")
    assert m.column.name == "score" and m.count_column.name == "n"
    assert list(m.values) == [1, 2, 3, 4, 5] and list(m.counts) == [4, 9, 12, 7, 2]
    with pytest.raises(InputError, match="the same"):
        read_measurements(text="score,n\n1,4\n2,9\n", column="n", counts="n")


def test_format_report():
    m = read_measurements(text="Gauge: 7\n\nd;n\n1,5;2\n2,25;1\n")
    f = m.format
    assert (f.reader, f.delimiter, f.decimal_mark, f.decimal_mark_basis) == ("delimited text", "semicolon", ",", "detected")
    assert (f.header_line, f.preamble_lines, f.preamble, f.sheet, f.parser) == (3, (1,), ("Gauge: 7",), None, "general")
    assert f.encoding is None and f.encoding_fallback is False


def test_encoding_report(write):
    latin = read_measurements(write("l.csv", "Gr\u00f6\u00dfe\n1,5\n2,5\n".encode("latin-1")))
    assert latin.format.encoding == "windows-1252" and latin.format.encoding_fallback
    assert latin.column.name == "Gr\u00f6\u00dfe"
    utf16 = read_measurements(write("u.csv", "Gr\u00f6\u00dfe\n1,5\n".encode("utf-16")))
    assert utf16.format.encoding == "utf-16-le" and not utf16.format.encoding_fallback
    bom = read_measurements(write("b.csv", "\ufeffx\n1\n".encode("utf-8")))
    assert bom.format.encoding == "utf-8-sig" and bom.column.name == "x"


def test_list_columns_without_choosing(write):
    columns = list_columns(write("t.csv", TEXT))
    assert [(c.name, c.index, c.numeric_count, c.non_numeric_count) for c in columns] == [
        ("species", 0, 0, 3),
        ("length", 1, 2, 1),
        ("count", 2, 3, 0),
    ]
    assert columns[1].first_values == ("12,5", "13,0", "NA") and columns[1].decimal_mark == ","


def test_measurements_helpers():
    m = read_measurements(text="x\n1\n2\nabc\n")
    assert m.n == 2
    assert m.reason_words(2) == "not a number"
    assert cio.reason_words(0) == "kept"
    assert set(cio.__all__) >= {"read_measurements", "list_columns", "sheet_names", "Measurements", "SourceFormat", "RowFates"}


def test_table_pasted_from_a_spreadsheet():
    pasted = "L\u00e4nge\tGewicht\r\n12,5\t1,2\r\n13,75\t1,4\r\n"  # what a spreadsheet puts on the clipboard
    m = read_measurements(text=pasted, column="Gewicht")
    assert m.values.tolist() == [1.2, 1.4] and m.format.delimiter == "tab"


def test_single_line_str_is_a_path():
    with pytest.raises(InputError, match="no file at '12.5'.*text="):
        read_measurements("12.5")
    with pytest.raises(InputError, match=r"no file at 'nofile.csv'; check the folder and the file name\.$"):
        read_measurements("nofile.csv")  # a file name gets no hint about text


def test_import_loads_no_qt():
    code = "import sys, clusterdesk.io; print(any(m.split('.')[0] in ('PySide6', 'pyqtgraph', 'shiboken6') for m in sys.modules))"
    root = pathlib.Path(__file__).resolve().parents[2]
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=root, check=True)
    assert result.stdout.strip() == "False"


def test_unreadable_file_is_input_error(write, monkeypatch):
    path = write("locked.csv", "x\n1\n")

    def refuse(self):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(pathlib.Path, "read_bytes", refuse)  # root reads any file, so refuse it here
    with pytest.raises(InputError, match="could not be opened \\(Permission denied\\)"):
        read_measurements(path)


def test_errors_are_value_errors():
    assert issubclass(FileFormatError, InputError) and issubclass(InputError, ValueError)
