"""Property tests: random tables read back to the same numbers; random input never escapes our errors.

The reference for each value is Python's ``float`` of the decimal text that
was written (with a decimal point).  Hypothesis runs derandomized (a fixed
seed) with a modest number of examples so that the suite stays fast.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clusterdesk.errors import InputError
from clusterdesk.io import read_measurements

SETTINGS = settings(derandomize=True, max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def tables(draw):
    n_columns = draw(st.integers(1, 4))
    n_rows = draw(st.integers(1, 25))
    decimals = draw(st.lists(st.integers(0, 5), min_size=n_columns, max_size=n_columns))
    cells = [
        [draw(st.integers(-(10**9), 10**9)) for _ in range(n_columns)]
        for _ in range(n_rows)
    ]
    texts = [[f"{i / 10**d:.{d}f}" for i, d in zip(row, decimals)] for row in cells]
    return {
        "texts": texts,
        "delimiter": draw(st.sampled_from([",", ";", "\t", "|", " ", "  "])),
        "mark": draw(st.sampled_from([".", ","])),
        "encoding": draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "cp1252"])),
        "newline": draw(st.sampled_from(["\n", "\r\n"])),
        "header": draw(st.booleans()),
        "preamble": draw(st.booleans()),
    }


def render(table) -> bytes:
    delimiter, mark = table["delimiter"], table["mark"]
    n_columns = len(table["texts"][0])
    # Two spellings are ambiguous without a header line, so they get one: a
    # single decimal-comma column ("12,5": one number or two integers?), and
    # metadata lines above a table (a header-less "12,5" under "Operator: J. Doe").
    header = table["header"] or (mark == "," and n_columns == 1) or table["preamble"]
    lines = []
    if table["preamble"]:
        lines += ["Instrument: gauge 7", "Operator: J. Doe", ""]
    if header:
        lines.append(delimiter.join(f"L\u00e4nge_{j}" for j in range(n_columns)))
    for row in table["texts"]:
        cells = [t.replace(".", ",") if mark == "," else t for t in row]
        if mark == "," and delimiter == ",":
            cells = [f'"{c}"' for c in cells]  # RFC 4180: a field holding the delimiter is quoted
        lines.append(delimiter.join(cells))
    return (table["newline"].join(lines) + table["newline"]).encode(table["encoding"])


def expected_columns(table) -> list[list[float]]:
    texts = table["texts"]
    return [[float(row[j]) for row in texts] for j in range(len(texts[0]))]


@SETTINGS
@given(tables())
def test_random_tables_read_back_to_the_same_numbers(table):
    content = render(table)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "table.csv"
        path.write_bytes(content)
        for j, expected in enumerate(expected_columns(table)):
            m = read_measurements(path, column=j)
            assert m.values.tolist() == expected
            assert m.summary.rows_read == len(expected) == m.summary.rows_kept
            # Windows-1252 is reported as a fallback when the bytes are not valid UTF-8 (the header's "\u00e4")
            assert m.format.encoding_fallback == (table["encoding"] == "cp1252" and not content.isascii())


@SETTINGS
@given(tables())
def test_pasted_text_reads_as_the_file(table):
    text = render(table).decode(table["encoding"]).lstrip("\ufeff")
    expected = expected_columns(table)
    m = read_measurements(text=text)
    assert m.values.tolist() == expected[0]
    assert m.source == "<text>"


@settings(SETTINGS, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(table=tables())
def test_vectorised_reader_equals_the_general_reader(assert_same_reads, table):
    content = render(table)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "table.csv"
        path.write_bytes(content)
        assert_same_reads(read_measurements(path, parser="general"), read_measurements(path, parser="vectorised"))


@settings(derandomize=True, max_examples=150, deadline=None)
@given(st.binary(max_size=3000))
def test_random_bytes_raise_only_our_errors(data):
    with tempfile.TemporaryDirectory() as folder:
        for name in ("x.csv", "x.xlsx"):
            path = Path(folder) / name
            path.write_bytes(data)
            try:
                m = read_measurements(path)
            except InputError:
                continue
            s = m.summary
            assert s.rows_read == s.rows_kept + sum(s.excluded.values())


@settings(derandomize=True, max_examples=150, deadline=None)
@given(st.text(alphabet=st.characters(codec="utf-8"), max_size=400))
def test_random_text_raises_only_our_errors(text):
    try:
        m = read_measurements(text=text)
    except InputError:
        return
    s = m.summary
    assert s.rows_read == s.rows_kept + sum(s.excluded.values()) == len(m.rows)
    assert m.values.size == s.rows_kept


@settings(derandomize=True, max_examples=100, deadline=None)
@given(st.lists(st.sampled_from(["1.5", "-2", "", "NA", "<0.5", "1e3", "nan", "12,5", " 7 ", "#c", "x,y", "3;4"]), max_size=30))
def test_every_row_accounted_for(lines):
    text = "value\n" + "\n".join(lines) + "\n"
    try:
        m = read_measurements(text=text, low=-1, high=100)
    except InputError:
        return
    s = m.summary
    assert s.rows_read == s.rows_kept + sum(s.excluded.values()) == len(m.rows)
    assert m.rows.kept.sum() == s.rows_kept
    assert (m.rows.position[m.rows.kept] == range(s.rows_kept)).all()
    assert (m.values == m.rows.value[m.rows.kept]).all()


@SETTINGS
@given(
    values=st.lists(st.integers(-99999, 99999), min_size=2, max_size=40),
    words=st.lists(st.tuples(st.integers(1, 40), st.sampled_from(["bad", "n/a", "error", "--", "?"])), max_size=3),
    header=st.booleans(),
    blank_at=st.lists(st.integers(1, 40), max_size=2),
)
def test_every_value_line_is_kept_whatever_words_and_blanks_lie_among_them(values, words, header, blank_at):
    # Rows in = rows out (every line accounted for), and no measurement is taken
    # for metadata: a column of values with a few stray words and blank lines.
    cells = [f"{v / 100:.2f}" for v in values]
    words = words[: max(1, len(values) // 5)]  # stray words: one, or at most a fifth of the values
    for position, word in sorted(words, reverse=True):
        cells.insert(min(position, len(cells)), word)
    for position in sorted(blank_at, reverse=True):
        cells.insert(min(position, len(cells)), "")
    while cells[-1] == "":
        cells.pop()  # blank lines at the end of a file are not rows
    lines = (["reading"] if header else []) + cells
    m = read_measurements(text="\n".join(lines) + "\n")
    assert sorted(m.values.tolist()) == sorted(v / 100 for v in values)
    assert m.summary.rows_read == len(cells)
    assert m.format.preamble_lines == ()
