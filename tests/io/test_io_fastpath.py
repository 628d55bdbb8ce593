"""The vectorised reader for large plain files gives what the per-cell reader gives.

Both of its engines are checked: the numpy kernels, and pandas' C parser for
plain one-column files.  References: ``numpy.loadtxt`` and ``pandas.read_csv``
on the same bytes, Python's ``float`` (correctly rounded), and the per-cell
reader (``parser="general"``) of ClusterDesk itself.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clusterdesk.io import pandas_column, read_measurements
from clusterdesk.io.reading import FAST_PATH_BYTES


@pytest.fixture(params=["pandas", "numpy"])
def engine(request, monkeypatch):
    """Run a test with pandas' C parser allowed, then with the numpy kernels only."""
    monkeypatch.setattr(pandas_column, "ENABLED", request.param == "pandas")
    return request.param

_RNG = np.random.default_rng(31)
_VALUES = _RNG.normal(50, 10, 3000).round(3)
_BASE = "\n".join(f"{v:.3f}" for v in _VALUES)
_TWO = "\n".join(f"{i},{v:.3f}" for i, v in enumerate(_VALUES))

CASES = {
    "plain with header": "length\n" + _BASE + "\n",
    "no header, no final newline": _BASE,
    "CRLF": ("length\n" + _BASE + "\n").replace("\n", "\r\n"),
    "NA and trailing blank lines": "length\n" + _BASE.replace("\n", "\nNA\n", 3) + "\n\n\n",
    "blank lines inside": "length\n" + _BASE.replace("\n", "\n\n", 2),
    "comment lines inside and after": "length\n" + _BASE.replace("\n", "\n# c\n", 2) + "\n# end\n\n",
    "negative": "v\n" + "\n".join(f"{v:.2f}" for v in _RNG.normal(0, 5, 2000)),
    "signs and bare points": "v\n+1.5\n-2\n+3.25\n4.\n.5\n-.5\n",
    "exponents": "v\n1e3\n2.5E-2\n3\n",
    "ambiguous thousands": "v\n1.234\n2.345\n",
    "decimal comma cells": "v;w\n1,5;2\n3;4\n",
    "units": "v\n12.5 mm\n13mm\n",
    "unit and plain": "v\n12.5 mm\n13\n",
    "limits": "v\n<0.5\n1.5\n>10\n2\n",
    "non-finite": "v\nnan\ninf\n1e400\n2.5\n",
    "two columns": "i,v\n" + _TWO + "\n",
    "text column": "sp,len\n" + "\n".join(f"fish{i},{v:.3f}" for i, v in enumerate(_VALUES[:200])) + "\n",
    "ragged": "a,b\n1,2\n3\n4,5,6\n7,8\n,9\n10,\n",
    "preamble": "Instrument: X\nOperator; J. Doe\n\nlength,count\n12.5,3\n13.0,2\n",
    "more than fifteen digits": "v\n1.23456789012345678\n12345678901234567\n0.1\n9007199254740993\n",
    "tabs": "a\tb\n1.5\t2\n3\t4.25\n",
    "whitespace-only lines": "v\n1\n   \n2\n  3  \n",
    "non-ASCII body": "v\n1.5\n\u22122.5\n3\u00a0\n",
    "UTF-8 BOM": "\ufeffv\n1.5\n2.5\n",
    "leading zeros and negative zero": "v\n007.5\n0.000\n-0.0\n00\n",
    "two points": "v\n1.2.3\n5\n",
    "trailing tabs": "a\tb\n1\t2\n3\t\n4\t5\n\t\t\n",
    "row numbers": "i,v\n1,2.5\n2,3.5\n3,4.5\n",
}


@pytest.mark.parametrize("name", list(CASES))
def test_vectorised_equals_general(write, assert_same_reads, engine, name):
    path = write("case.csv", CASES[name])
    general = read_measurements(path, parser="general")
    vectorised = read_measurements(path, parser="vectorised")
    assert general.format.parser == "general"
    assert_same_reads(general, vectorised)


@pytest.mark.parametrize("kwargs", [{"low": 45, "high": 55}, {"scale": "ln"}, {"column": "v", "counts": "i"}])
def test_vectorised_equals_general_with_settings(write, assert_same_reads, engine, kwargs):
    path = write("two.csv", "i,v\n" + _TWO + "\n")
    assert_same_reads(read_measurements(path, parser="general", **kwargs), read_measurements(path, parser="vectorised", **kwargs))


def test_vectorised_is_used_where_it_fits(write, engine):
    expected = "vectorised (pandas C parser)" if engine == "pandas" else "vectorised"
    assert read_measurements(write("a.csv", CASES["negative"]), parser="vectorised").format.parser == expected
    # "51.257" could be a thousands separator: the numpy kernels count such cells exactly
    assert read_measurements(write("d.csv", CASES["plain with header"]), parser="vectorised").format.parser == "vectorised"
    assert read_measurements(write("c.csv", CASES["two columns"]), parser="vectorised").format.parser == "vectorised"
    # declines: quotes, a decimal comma among plain points, Latin-1, runs of spaces
    for text in ('v\n"1.5"\n2\n', "v\n1.5\n\"2,5\"\n", "v\n1.5\n2.5\n".encode("utf-16"), "a  b\n1  2\n"):
        assert read_measurements(write("b.csv", text), parser="vectorised").format.parser == "general"


def test_large_file_auto_matches_loadtxt_pandas_and_general(tmp_path, assert_same_reads, engine):
    rng = np.random.default_rng(8)
    values = rng.normal(120, 30, 160_000)
    text = "diameter_um\n" + "\n".join(f"{v:.4f}" for v in values) + "\n"
    path = tmp_path / "big.csv"
    path.write_text(text)
    assert path.stat().st_size >= FAST_PATH_BYTES
    auto = read_measurements(path)
    assert auto.format.parser.startswith("vectorised")
    reference = np.loadtxt(path, skiprows=1)
    assert np.array_equal(auto.values, reference)
    assert np.array_equal(auto.values, pd.read_csv(path)["diameter_um"].to_numpy())
    assert auto.resolution == 0.0001
    assert_same_reads(auto, read_measurements(path, parser="general"))


def test_large_file_with_odd_rows_and_blocks(tmp_path, assert_same_reads, engine):
    # odd rows spread over several blocks, a comment, CRLF line ends
    rng = np.random.default_rng(9)
    lines = [f"{v:.2f}" for v in rng.uniform(-100, 100, 150_000)]
    for k in range(0, len(lines), 9973):
        lines[k] = rng.choice(["NA", "", "<0.5", "1e3", " 12.5 ", "# note", "abc", "\u22124.5"])
    text = "value\r\n" + "\r\n".join(lines) + "\r\n"
    path = tmp_path / "odd.csv"
    path.write_bytes(text.encode("utf-8"))
    vectorised = read_measurements(path, parser="vectorised")
    assert vectorised.format.parser == "vectorised"
    assert_same_reads(read_measurements(path, parser="general"), vectorised)
    # Reference: Python's float on each line (U+2212 read as a minus sign), comment lines dropped.
    expected = []
    for line in lines:
        try:
            expected.append(float(line.replace("\u2212", "-")))
        except ValueError:
            pass
    assert vectorised.values.tolist() == expected
    assert vectorised.summary.rows_read == len(lines) - lines.count("# note")


@settings(derandomize=True, max_examples=40, deadline=None)
@given(st.lists(st.floats(allow_nan=False, width=64), min_size=2, max_size=300))
def test_pandas_engine_reads_any_float_text_as_python_float(tmp_path_factory, values):
    # repr() of a float is the shortest text that rounds back to it; 17-digit
    # mantissas and exponents exercise the correctly rounded converter.
    if not pandas_column.pandas_usable():
        pytest.skip("pandas 3 is not installed")
    texts = ["0.5"] + [repr(v) for v in values]
    path = tmp_path_factory.mktemp("floats") / "f.csv"
    path.write_text("value\n" + "\n".join(texts) + "\n")
    m = read_measurements(path, parser="vectorised")
    assert m.format.parser == "vectorised (pandas C parser)"
    assert m.rows.value.tolist() == [float(t) for t in texts]
    general = read_measurements(path, parser="general")
    assert general.rows.reason.tolist() == m.rows.reason.tolist()
