"""Delimited text: delimiter sniffing, quoting, comments, preamble, header, line numbers.

Quoting follows RFC 4180 (section 2: fields in double quotes may hold commas,
line breaks and doubled double quotes); Python's ``csv`` module and
``pandas.read_csv`` serve as independent references for the quoted cases.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest

from clusterdesk.errors import FileFormatError
from clusterdesk.io import list_columns, read_measurements
from clusterdesk.io.delimited import iter_records, sniff_delimiter, split_lines

TABLE = [[12.5, 3.0], [13.25, 2.0], [-1.5, 7.0], [14.0, 1.0]]


@pytest.mark.parametrize(
    "delimiter, word", [(",", "comma"), (";", "semicolon"), ("\t", "tab"), ("|", "pipe"), ("   ", "spaces")]
)
def test_each_delimiter_is_sniffed(delimiter, word):
    text = "length" + delimiter + "count\n" + "".join(delimiter.join(f"{v:g}" for v in row) + "\n" for row in TABLE)
    m = read_measurements(text=text)
    assert m.format.delimiter == word
    assert [c.name for c in m.columns] == ["length", "count"]
    assert m.values.tolist() == [row[0] for row in TABLE]


def test_one_column_file_is_one_column():
    # csv.Sniffer raises "Could not determine delimiter" on such a file; we do not use it.
    m = read_measurements(text="diameter\n1.5\n2.25\n3\n")
    assert m.format.reader == "one value per line"
    assert m.format.delimiter == "none (one column)"
    assert m.values.tolist() == [1.5, 2.25, 3.0]


def test_one_column_with_decimal_comma_and_header_is_not_split_on_the_comma():
    m = read_measurements(text="length_mm\n12,5\n13,0\n11,75\n")
    assert m.format.delimiter == "none (one column)"
    assert m.values.tolist() == [12.5, 13.0, 11.75]
    assert m.format.decimal_mark == ","


def test_headerless_integer_pairs_read_as_two_columns_with_a_note():
    m = read_measurements(text="12,5\n13,0\n11,7\n")
    assert len(m.columns) == 2 and m.values.tolist() == [12.0, 13.0, 11.0]
    assert any("delimiter=None" in note for note in m.format.notes)
    one = read_measurements(text="12,5\n13,0\n11,7\n", delimiter=None)
    assert one.values.tolist() == [12.5, 13.0, 11.7]


def test_semicolon_with_decimal_comma():
    m = read_measurements(text="L\u00e4nge;Anzahl\n12,5;3\n13,25;2\n", counts="Anzahl")
    assert m.format.delimiter == "semicolon" and m.format.decimal_mark == ","
    assert m.values.tolist() == [12.5, 13.25] and m.counts.tolist() == [3.0, 2.0]


def test_tab_with_decimal_comma_is_not_split_on_the_comma():
    m = read_measurements(text="1,5\t2,5\n3,5\t4\n")
    assert m.format.delimiter == "tab"
    assert [c.numeric_count for c in m.columns] == [2, 2]


def test_space_grouped_numbers_in_one_column():
    m = read_measurements(text="1 234,5\n2 000,25\n3 100\n")
    assert m.format.delimiter == "none (one column)"
    assert m.values.tolist() == [1234.5, 2000.25, 3100.0]


def test_rfc4180_quoting_matches_the_csv_module_and_pandas():
    text = 'name,value,note\n"a, b",1.5,"say ""hi"""\nc,2.5,"two\nlines"\n"d",3.5,\n'
    m = read_measurements(text=text, column="value")
    reference = list(__import__("csv").reader(io.StringIO(text)))
    assert m.values.tolist() == [float(r[1]) for r in reference[1:]]
    frame = pd.read_csv(io.StringIO(text))
    assert m.values.tolist() == frame["value"].tolist()
    # the record with a line break inside quotes starts on line 3, the next on line 5
    assert m.rows.line.tolist() == [2, 3, 5]
    assert m.columns[0].first_values == ("a, b", "c", "d")


def test_quoted_numbers_with_thousands_separators():
    m = read_measurements(text='id,amount\nx,"1,234.5"\ny,"2,000"\nz,3.5\n', column="amount")
    assert m.values.tolist() == [1234.5, 2000.0, 3.5]
    assert m.column.thousands_separator == ","


def test_comment_lines_blank_lines_and_trailing_blank_lines():
    text = "# exported by a gauge\nlength\n1.5\n# a note\n2.5\n\n3.5\n\n\n   \n"
    m = read_measurements(text=text)
    assert m.format.comment_lines == 2
    assert m.rows.line.tolist() == [3, 5, 6, 7]
    assert m.values.tolist() == [1.5, 2.5, 3.5]
    assert m.summary.excluded == {"empty": 1}


def test_preamble_of_metadata_lines_is_skipped_and_reported():
    text = "Instrument: X\nOperator; J. Doe\nDate: 2024-01-02\n\nlength,count\n12.5,3\n13.0,2\n"
    m = read_measurements(text=text)
    assert m.format.preamble_lines == (1, 2, 3)
    assert m.format.preamble == ("Instrument: X", "Operator; J. Doe", "Date: 2024-01-02")
    assert m.format.header_line == 5
    assert m.rows.line.tolist() == [6, 7]
    assert m.values.tolist() == [12.5, 13.0]


def test_numeric_preamble_line_above_a_header_is_not_data():
    m = read_measurements(text="120 samples\nlength\n12.5\n13.5\n14.5\n")
    assert m.format.header_line == 2 and m.format.preamble_lines == (1,)
    assert m.values.tolist() == [12.5, 13.5, 14.5]


@pytest.mark.parametrize("text", [
    "diameter\n3.2\n3.4\n\n7.9\nbad\n8.1",  # pasted from a spreadsheet: a blank and a word among values
    "diameter\n3.2\n3.4\n7.9\nbad\n8.1\n",
    "3.2\n3.4\n\n7.9\nbad\n8.1\n",
])
def test_a_stray_word_among_few_values_is_not_taken_for_a_header(text):
    # Every input row is kept or excluded with its reason: the word is "not a
    # number", the blank row "empty", and no value above the word is lost.
    m = read_measurements(text=text)
    assert m.values.tolist() == [3.2, 3.4, 7.9, 8.1]
    assert m.summary.excluded.get("not a number") == 1
    assert len(m.rows.line) == m.summary.rows_read == len(text.strip("\n").split("\n")) - (text[0] == "d")
    assert m.format.preamble_lines == ()


def test_stray_words_in_two_columns_keep_the_rows_above_them():
    text = "length;count\n12,5;3\n13,0;2\nn/a;1\nbroken;x\n14,5;4\n"
    m = read_measurements(text=text, counts="count")
    assert m.format.header_line == 1 and m.values.tolist() == [12.5, 13.0, 14.5]
    assert m.rows.line.tolist() == [2, 3, 4, 5, 6]


def test_metadata_with_words_above_a_header_stays_preamble():
    # A bare number above words and a header is metadata only when words come
    # between it and the data; it is reported in the preamble, not dropped silently.
    m = read_measurements(text="17\nOperator: Doe\nlength\n12.5\n13\n")
    assert m.format.preamble_lines == (1, 2) and m.format.preamble[0] == "17"
    assert m.format.header_line == 3 and m.values.tolist() == [12.5, 13.0]


def test_no_header_and_forced_header():
    assert read_measurements(text="1.5\n2.5\n").format.header_line is None
    years = read_measurements(text="2019,2020\n1.5,2.5\n3.5,4.5\n", header=True)
    assert [c.name for c in years.columns] == ["2019", "2020"] and years.values.tolist() == [1.5, 3.5]
    as_data = read_measurements(text="length\n1.5\n2.5\n", header=False)
    assert as_data.summary.excluded == {"not a number": 1} and as_data.rows.line.tolist() == [1, 2, 3]


def test_ragged_rows_short_cells_are_empty_long_cells_noted():
    m = read_measurements(text="a,b\n1,2\n3\n4,5,6\n7,8\n", column="b")
    assert m.values.tolist() == [2.0, 5.0, 8.0]
    assert m.summary.excluded == {"empty": 1}
    assert any("more cells" in note for note in m.format.notes)


def test_line_endings_crlf_and_lone_cr():
    for text in ("x\r\n1\r\n2\r\n", "x\r1\r2\r"):
        m = read_measurements(text=text)
        assert m.values.tolist() == [1.0, 2.0] and m.rows.line.tolist() == [2, 3]


def test_split_lines_and_records_keep_physical_line_numbers():
    lines = split_lines('a,b\n"x\ny",1\n# c\n\n2,3')
    assert lines == ["a,b", '"x', 'y",1', "# c", "", "2,3"]
    records = list(iter_records(lines, ",", "test"))
    assert records == [(1, ["a", "b"]), (2, ["x\ny", "1"]), (5, []), (6, ["2", "3"])]


def test_sniffer_on_mixed_delimiters_keeps_the_majority():
    assert sniff_delimiter(["1,2", "3,4", "5;6", "7,8"]) == ","
    m = read_measurements(text="1,2\n3,4\n5;6\n7,8\n")
    assert m.summary.rows_read == 4 and m.summary.excluded == {"not a number": 1}


def test_unclosed_quote_is_our_error_or_values():
    text = 'a,b\n1,"2\n' + "3,4\n" * 10
    try:
        m = read_measurements(text=text)
    except FileFormatError as exc:
        assert "line" in str(exc)
    else:
        assert m.summary.rows_read == m.summary.rows_kept + sum(m.summary.excluded.values())


def test_whitespace_table_matches_numpy_loadtxt(tmp_path):
    rng = np.random.default_rng(7)
    data = rng.normal(0, 100, (50, 3)).round(4)
    path = tmp_path / "w.txt"
    np.savetxt(path, data, fmt="%10.4f")  # runs of spaces, no header
    reference = np.loadtxt(path)
    for j in range(3):
        assert read_measurements(path, column=j).values.tolist() == reference[:, j].tolist()


def test_list_columns_offers_a_choice():
    columns = list_columns(text="id,species,length\n1,cod,12.5\n2,cod,13.5\n3,hake,NA\n")
    assert [c.name for c in columns] == ["id", "species", "length"]
    assert [c.mostly_numeric for c in columns] == [True, False, True]
    assert columns[0].row_numbers and not columns[2].row_numbers
    assert (columns[2].numeric_count, columns[2].non_numeric_count) == (2, 1)
    assert columns[1].first_values == ("cod", "cod", "hake")
    # the default passes over the running row number
    assert read_measurements(text="id,species,length\n1,cod,12.5\n2,cod,13.5\n3,hake,NA\n").column.name == "length"
