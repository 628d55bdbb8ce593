"""Cells like 51.257 on the pandas route: the whole column decides, as the per-cell reader decides.

Reference: the per-cell reader of ClusterDesk (``parse_column`` and
``read_measurements(parser="general")``), whose rule is the one stated in
:mod:`clusterdesk.io.numbers`: a column's cells whose point can only be a
decimal point (``0.5``, ``51.25``, ``051.257``, ``5.1e1``) make the point a
decimal point ("detected"); a column of nothing but cells like ``51.257``
reads the point as the decimal mark and says "ambiguous".  Values are
checked against Python's ``float`` (correctly rounded).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clusterdesk.io import pandas_column, read_measurements
from clusterdesk.io.numbers import parse_column
from clusterdesk.io.point_check import point_evidence

_BASIS = {"point": "detected", "ambiguous": "ambiguous", "none": "no decimals"}


def evidence_and_reference(texts: list[str], crlf: bool = False) -> tuple[str, str]:
    """point_evidence on the lines (values from Python's float), and the per-cell reader's basis."""
    eol = "\r\n" if crlf else "\n"
    data = (eol.join(texts) + eol).encode("ascii")
    values = np.array([float(t) for t in texts])
    found = point_evidence(data, 0, len(data), values, crlf)
    assert found is not None  # fewer odd lines than the budget: always decided
    return _BASIS[found], parse_column(texts).style.decimal_mark_basis


@pytest.mark.parametrize(
    "texts, basis",
    [
        (["51.257", "-7.125", "100.000", "999.999", "1.000"], "ambiguous"),
        (["51.257", "51.25", "52.125"], "detected"),  # two decimals
        (["51.257", "51.2570", "52.125"], "detected"),  # four decimals
        (["51.257", "051.257", "52.125"], "detected"),  # a leading zero
        (["51.257", "0.257", "52.125"], "detected"),  # below one
        (["51.257", "1051.257"], "detected"),  # four integer digits
        (["51.257", "5.1257e1"], "detected"),  # an exponent
        (["51.257", "51.2e0"], "detected"),  # as long as 51.257, with an exponent
        (["51.2", "7", "52.125"], "detected"),  # a short line and a short next line, both ending where 51.200 would
        (["51.257", "+51.257", " 51.257 ", "51.257\t"], "ambiguous"),  # sign and spaces: still like 1.234
        (["51.257", "51.25 "], "detected"),  # a trailing space does not make 51.25 a three-decimal cell
        (["51.257", "51", "inf", "-Infinity", "7"], "ambiguous"),  # no point, not a number word
        (["12", "13"], "no decimals"),
    ],
)
def test_point_evidence_follows_the_per_cell_reader(texts, basis):
    for crlf in (False, True):
        found, reference = evidence_and_reference(texts, crlf)
        assert reference == basis
        assert found == reference


_CELL = st.one_of(
    st.integers(1000, 999_999).map(lambda m: f"{m / 1000:.3f}"),  # like 51.257
    st.integers(-999_999, -1000).map(lambda m: f"{m / 1000:.3f}"),
    st.integers(1000, 999_999).map(lambda m: f"{m / 1000:.3f}").map(lambda t: "+" + t),
    st.integers(0, 99_999).map(lambda m: f"{m / 1000:.2f}"),
    st.integers(0, 99_999).map(lambda m: f"{m / 10_000:.4f}"),
    st.integers(1, 999).map(str),
    st.integers(1, 99_999).map(lambda m: f"0{m / 1000:.3f}"),
    st.integers(1, 99_999).map(lambda m: f"{m / 1000:.3f}".rstrip("0")),
    st.integers(1, 9999).map(lambda m: f"{m}e-2"),
    st.sampled_from(["inf", "-inf", " 51.257", "51.257 ", "5.", ".5", "0.000", "-0.000"]),
)


@settings(derandomize=True, max_examples=200, deadline=None)
@given(st.lists(_CELL, min_size=1, max_size=120), st.booleans(), st.booleans())
def test_point_evidence_equals_the_per_cell_reader_on_mixed_cells(texts, mostly_three_decimals, crlf):
    # A long run of three-decimal cells, with the drawn cells among them.
    if mostly_three_decimals:
        run = [f"{50 + k / 1000:.3f}" for k in range(200)]
        texts = run[:100] + texts + run[100:]
    found, reference = evidence_and_reference(texts, crlf)
    assert found == reference


def _three_decimal_file(tmp_path, name: str, lines: list[str], crlf: bool = False):
    eol = "\r\n" if crlf else "\n"
    path = tmp_path / name
    path.write_bytes(("length_mm" + eol + eol.join(lines) + eol).encode("ascii"))
    assert path.stat().st_size >= pandas_column.WHOLE_COLUMN_CHECK_BYTES
    return path


def _lines(seed: int) -> list[str]:
    values = np.random.default_rng(seed).normal(60, 12, 160_000).clip(1.5, 998)
    return [f"{v:.3f}" for v in values]


@pytest.mark.slow
@pytest.mark.parametrize(
    "variant, basis",
    [("plain", "ambiguous"), ("CRLF", "ambiguous"), ("two decimals at the end", "detected"),
     ("leading zero inside", "detected"), ("a short line inside", "detected")],
)
def test_large_three_decimal_file_on_pandas_equals_general(tmp_path, assert_same_reads, variant, basis):
    if not pandas_column.pandas_usable():
        pytest.skip("pandas 3 is not installed")
    lines = _lines(11)
    if variant == "two decimals at the end":
        lines[-1] = "51.25"
    elif variant == "leading zero inside":
        lines[90_000] = "0" + lines[90_000]
    elif variant == "a short line inside":
        lines[70_000:70_002] = ["51.2", "7"]
    path = _three_decimal_file(tmp_path, "lengths.csv", lines, crlf=variant == "CRLF")
    fast = read_measurements(path, parser="vectorised")
    assert fast.format.parser == "vectorised (pandas C parser)"
    assert fast.format.decimal_mark_basis == basis
    assert fast.values.tolist() == [float(t) for t in lines]
    assert_same_reads(read_measurements(path, parser="general"), fast)


@pytest.mark.parametrize(
    "text",
    [
        "v\n1.5\n2.5\x1f3\n" + "".join(f"{k}.25\n" for k in range(2000)),  # the separator pandas is given, in a line
        "v\n" + "".join(f"{k}.25\n" for k in range(2000)) + '7.5\n"8.5"\n',  # a quote after pandas' first block
    ],
)
def test_lines_pandas_cannot_take_go_to_the_other_readers(write, assert_same_reads, text):
    path = write("odd.csv", text)
    fast = read_measurements(path, parser="vectorised")
    assert fast.format.parser != "vectorised (pandas C parser)"
    assert_same_reads(read_measurements(path, parser="general"), fast)
