"""A corpus of nasty files, generated here: each gives the right values or our one-sentence error.

No other exception may escape (a library traceback is never the user's interface).
"""

from __future__ import annotations

import io
import os
import zipfile

import numpy as np
import pytest

from clusterdesk.errors import FileFormatError, InputError
from clusterdesk.io import read_measurements

_PNG = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x01\x00\x00\x00\x01\x08\x02\x00\x00\x00\x90wS\xde"


def _zip(**members) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        for name, text in members.items():
            archive.writestr(name, text)
    return buffer.getvalue()


class Workbook(tuple):
    """An XLSX fixture to be written in the test: (rows by sheet, merged range or None)."""


def _xlsx(rows_by_sheet, merge=None) -> Workbook:
    return Workbook((rows_by_sheet, merge))


_RANDOM = np.random.default_rng(2024).integers(0, 256, 5000, dtype=np.uint8).tobytes()

# name, file name, content, expected values (list) or the error type and a phrase of its message
CORPUS = [
    ("empty file", "a.csv", b"", (FileFormatError, "is empty")),
    ("only blank lines", "a.csv", b"\n \n\t\n", (FileFormatError, "is empty")),
    ("header only", "a.csv", b"length\n", (FileFormatError, "no data rows")),
    ("header only, trailing blanks", "a.csv", b"a,b,c\n\n\n", (FileFormatError, "no data rows")),
    ("only comments", "a.csv", b"# nothing\n# here\n", (FileFormatError, "only comment lines")),
    ("binary garbage", "a.csv", _RANDOM, (FileFormatError, "binary")),
    ("PNG renamed .csv", "plot.csv", _PNG + _RANDOM[:200], (FileFormatError, "PNG image")),
    ("PDF renamed .txt", "a.txt", b"%PDF-1.7\n" + _RANDOM[:200], (FileFormatError, "PDF document")),
    ("old .xls", "a.xls", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(600), (FileFormatError, ".xls")),
    ("gzip", "a.csv.gz", b"\x1f\x8b\x08\x00" + _RANDOM[:100], (FileFormatError, "gzip")),
    ("zip not xlsx", "a.xlsx", _zip(**{"data.csv": "1\n2\n"}), (FileFormatError, "not an Excel workbook")),
    ("zip named csv", "a.csv", _zip(**{"a.txt": "x"}), (FileFormatError, "not an Excel workbook")),
    ("truncated xlsx", "a.xlsx", _xlsx({"s": [["x"], [1.0]]}), (FileFormatError, "damaged")),
    ("xlsx empty sheet", "a.xlsx", _xlsx({"s": []}), (FileFormatError, "empty")),
    ("xlsx header only", "a.xlsx", _xlsx({"s": [["length"]]}), (FileFormatError, "no data rows")),
    ("xlsx all text", "a.xlsx", _xlsx({"s": [["a"], ["b"], ["c"]]}), (InputError, "no column of numbers")),
    ("xlsx formula and merge", "a.xlsx", _xlsx({"s": [["x", "y"], [1.0, 2.0], ["=A2+1", 3.0], [4.0, 5.0]]}, "A4:B4"), [1.0, 4.0]),
    ("mixed delimiters", "a.csv", b"x,y\n1,2\n3;4\n5,6\n", [1.0, 5.0]),
    ("ragged rows", "a.csv", b"x,y\n1,2\n3\n4,5,6\n", [1.0, 3.0, 4.0]),
    ("one value", "a.csv", b"42", [42.0]),
    ("one value with header", "a.csv", b"x\n42\n", [42.0]),
    ("all text", "a.csv", b"a,b\nx,y\nz,w\n", (InputError, "no column of numbers")),
    ("NaN", "a.csv", b"x\nNaN\n1.5\n", [1.5]),
    ("only NaN", "a.csv", b"x\nNaN\nnan\n", (InputError, "no column of numbers")),
    ("inf", "a.csv", b"x\ninf\n-Infinity\n2.5\n", [2.5]),
    ("1e400 overflows", "a.csv", b"x\n1e400\n1e-400\n3\n", [0.0, 3.0]),
    ("unicode minus", "a.csv", "x\n\u22123.2\n4\n".encode(), [-3.2, 4.0]),
    ("1 234,5", "a.csv", "x\n1 234,5\n2 000\n".encode(), [1234.5, 2000.0]),
    ("semicolon decimal comma", "a.csv", b"a;b\n1,5;2,5\n3,25;4\n", [1.5, 3.25]),
    ("UTF-16 with BOM", "a.csv", "L\u00e4nge\n1,5\n2,5\n".encode("utf-16"), [1.5, 2.5]),
    ("UTF-16 big endian", "a.csv", "x\n1.5\n2.5\n".encode("utf-16-be"), [1.5, 2.5]),
    ("UTF-8 BOM", "a.csv", "\ufeffx\n1.5\n".encode(), [1.5]),
    ("Latin-1", "a.csv", "Gr\u00f6\u00dfe \u00b5m\n1,5\n2\n".encode("latin-1"), [1.5, 2.0]),
    ("broken UTF-16", "a.csv", b"\xff\xfe" + b"x\x00\n\x00\x00\xd8", (FileFormatError, "UTF-16")),
    ("NUL bytes in text", "a.csv", b"x\n1\x00\n2\n" + bytes(40), (FileFormatError, "binary")),
    ("unclosed quote", "a.csv", b'x,y\n"1,2\n3,4\n', None),
    ("very long field", "a.csv", b"x\n" + b"9" * 200_000 + b"\n1\n", [1.0]),
    ("huge quoted field", "a.csv", b'x,y\n"' + b"a" * 200_000 + b'",1\n', (FileFormatError, "cannot be split")),
    ("only separators", "a.csv", b",,,\n;;;\n|||\n", (InputError, "no column of numbers")),
    ("dates only", "a.csv", b"day\n2024-01-02\n2024-01-03\n", (InputError, "no column of numbers")),
    ("units mixed", "a.csv", b"x\n12.5 mm\n13 cm\n", (InputError, "no column of numbers")),
    ("detection limits", "a.csv", b"x\n<0.5\n< 0.5\n1.2\n", [1.2]),
    ("CR only line ends", "a.csv", b"x\r1\r2\r", [1.0, 2.0]),
    ("trailing spaces lines", "a.csv", b"x\n1\n2\n   \n\t\n", [1.0, 2.0]),
]


@pytest.mark.parametrize("name, filename, content, expected", CORPUS, ids=[c[0] for c in CORPUS])
def test_corpus(write, make_xlsx, name, filename, content, expected):
    if isinstance(content, Workbook):
        content = make_xlsx(*content)
    if name == "truncated xlsx":
        content = content[:300]
    path = write(filename, content)
    if isinstance(expected, tuple):
        error, phrase = expected
        with pytest.raises(error) as info:
            read_measurements(path)
        message = str(info.value)
        assert phrase in message
        assert message.endswith(".") or message.endswith(")")
        assert "Traceback" not in message and "\n" not in message
        return
    try:
        m = read_measurements(path)
    except InputError as exc:  # only acceptable where no outcome is prescribed
        assert expected is None, f"{name}: {exc}"
        return
    if expected is not None:
        assert m.values.tolist() == expected
    s = m.summary
    assert s.rows_read == s.rows_kept + sum(s.excluded.values())


def test_error_names_the_file_and_what_to_try(write):
    with pytest.raises(InputError) as info:
        read_measurements(write("tally.csv", "a,b\nx,y\n"), column="length")
    message = str(info.value)
    assert "'tally.csv'" in message and "'a', 'b'" in message


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(InputError, match="There is no file"):
        read_measurements(tmp_path / "missing.csv")
    with pytest.raises(InputError, match="is a folder"):
        read_measurements(tmp_path)
    with pytest.raises(InputError, match="must be a path"):
        read_measurements(12)


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes (POSIX)")
def test_a_named_pipe_is_refused_instead_of_waiting_for_ever(tmp_path):
    pipe = tmp_path / "pipe.csv"
    os.mkfifo(pipe)  # nobody writes to it: reading it would block
    with pytest.raises(InputError, match="not a regular file"):
        read_measurements(pipe)
