"""Cell and column parsing (clusterdesk.io.numbers).

The reference for every plain value is Python's own ``float`` on the same
decimal text (correctly rounded, IEEE 754 round-to-nearest); decimal-comma and
grouped spellings are compared with ``float`` of the same digits written with
a decimal point.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clusterdesk.io import reasons as R
from clusterdesk.io.numbers import looks_numeric, parse_column


def parse(*cells):
    return parse_column(list(cells))


def test_plain_numbers_equal_python_float():
    cells = ["12.5", "-3", "+4.25", "1e3", "2.5E-3", ".5", "5.", "0007.50", "-0.0"]
    column = parse(*cells)
    assert column.status.tolist() == [R.KEPT] * len(cells)
    assert column.values.tolist() == [float(c) for c in cells]
    assert np.signbit(column.values[-1])  # "-0.0" keeps its sign, as float() does


def test_unicode_minus_spaces_and_no_break_spaces():
    column = parse("\u22123.2", "  4.5 ", "\u00a06.5\u00a0", "\u202f7\u2009")
    assert column.values.tolist() == [-3.2, 4.5, 6.5, 7.0]
    assert column.status.tolist() == [R.KEPT] * 4


def test_decimal_comma_column_detected_and_reported():
    column = parse("12,5", "13,25", "14")
    assert column.values.tolist() == [12.5, 13.25, 14.0]
    assert column.style.decimal_mark == ","
    assert column.style.decimal_mark_basis == "detected"


def test_mixed_marks_majority_wins_minority_not_a_number():
    column = parse("12,5", "13,25", "14,75", "1.5")
    assert column.style.decimal_mark == "," and column.style.decimal_mark_basis == "mixed"
    assert column.values[:3].tolist() == [12.5, 13.25, 14.75]
    assert column.status[3] == R.NOT_A_NUMBER and np.isnan(column.values[3])


@pytest.mark.parametrize(
    "cells, expected, separator",
    [
        (["1 234,5", "2 000,25"], [1234.5, 2000.25], " "),
        (["1.234,5", "12.345.678,9"], [1234.5, 12345678.9], "."),
        (["1,234.5", "12,345,678"], [1234.5, 12345678.0], ","),
        (["1'234.5", "2'000"], [1234.5, 2000.0], "'"),
        (["1\u00a0234,5", "7,5"], [1234.5, 7.5], "\u00a0"),
    ],
)
def test_thousands_separators_where_unambiguous(cells, expected, separator):
    column = parse(*cells)
    assert column.values.tolist() == expected
    assert column.status.tolist() == [R.KEPT] * len(cells)
    assert column.style.thousands_separator == separator


def test_ambiguous_cells_follow_the_column():
    # "1,234" is 1234 when the column uses a decimal point elsewhere ...
    assert parse("1,234", "2.5").values.tolist() == [1234.0, 2.5]
    # ... and 1.234 when the column uses a decimal comma elsewhere.
    assert parse("1,234", "2,5").values.tolist() == [1.234, 2.5]
    # "1.234" is 1234 in a decimal-comma column.
    assert parse("1.234", "2,5").values.tolist() == [1234.0, 2.5]


def test_only_ambiguous_cells_read_the_separator_as_decimal_mark():
    column = parse("1,234", "2,345")
    assert column.values.tolist() == [1.234, 2.345]
    assert column.style.decimal_mark_basis == "ambiguous"
    column = parse("1.234", "2.345")
    assert column.values.tolist() == [1.234, 2.345]
    assert column.style.decimal_mark == "."


def test_bad_grouping_is_not_a_number():
    column = parse("1,23,4", "12.5", "1 23")
    assert column.status.tolist() == [R.NOT_A_NUMBER, R.KEPT, R.NOT_A_NUMBER]


def test_units_accepted_only_when_the_whole_column_carries_the_same_unit():
    column = parse("12.5 mm", "12.5mm", "13 mm", "")
    assert column.values[:3].tolist() == [12.5, 12.5, 13.0]
    assert column.style.unit == "mm"
    assert column.status[3] == R.EMPTY
    mixed = parse("12.5 mm", "13 cm")
    assert mixed.status.tolist() == [R.NOT_A_NUMBER, R.NOT_A_NUMBER] and mixed.style.unit is None
    with_plain = parse("12.5 mm", "13")
    assert with_plain.status.tolist() == [R.NOT_A_NUMBER, R.KEPT]


def test_units_with_micro_sign_and_percent():
    assert parse("3.5 \u00b5m", "4 \u00b5m").style.unit == "\u00b5m"
    assert parse("12%", "13.5 %").values.tolist() == [12.0, 13.5]


def test_detection_limits_keep_their_limit():
    column = parse("<0.5", "< 0.5", "\u2264 0,5", "1.5", ">100", "\u2265 2")
    assert column.status.tolist() == [
        R.BELOW_LIMIT,
        R.BELOW_LIMIT,
        R.NOT_A_NUMBER,  # a decimal-comma limit in a decimal-point column is not a number
        R.KEPT,
        R.ABOVE_LIMIT,
        R.ABOVE_LIMIT,
    ]
    assert column.values[[0, 1, 4, 5]].tolist() == [0.5, 0.5, 100.0, 2.0]


def test_limits_with_units_in_a_unit_column():
    column = parse("<0.5 mm", "1.5 mm", "2 mm")
    assert column.style.unit == "mm"
    assert column.status.tolist() == [R.BELOW_LIMIT, R.KEPT, R.KEPT]


@pytest.mark.parametrize("cell", ["NaN", "nan", "inf", "-inf", "Infinity", "1e400", "-1e999"])
def test_non_finite_cells(cell):
    column = parse(cell, "1.5")
    assert column.status[0] == R.NOT_FINITE
    assert not np.isfinite(column.values[0])


@pytest.mark.parametrize("cell", ["NA", "n/a", "-", "abc", "12a4", "1..2", "--5", "e5", "0x1A", "1_000", "\u0661\u0662"])
def test_text_is_not_a_number(cell):
    column = parse(cell, "1.5")
    assert column.status[0] == R.NOT_A_NUMBER


def test_empty_and_missing_cells():
    column = parse("", "  ", None, "\u00a0", "2")
    assert column.status.tolist() == [R.EMPTY] * 4 + [R.KEPT]


def test_spreadsheet_cells_taken_as_they_are():
    import datetime

    column = parse(1.5, 2, True, datetime.date(2024, 1, 2), "3,5", float("nan"))
    assert column.values[:2].tolist() == [1.5, 2.0]
    assert column.status.tolist() == [R.KEPT, R.KEPT, R.NOT_A_NUMBER, R.NOT_A_NUMBER, R.KEPT, R.NOT_FINITE]
    assert column.values[4] == 3.5


def test_looks_numeric():
    assert looks_numeric("12,5") and looks_numeric("<0.5") and looks_numeric("12 mm") and looks_numeric(3.0)
    assert not looks_numeric("length") and not looks_numeric("") and not looks_numeric(None) and not looks_numeric(True)


@settings(derandomize=True, max_examples=200, deadline=None)
@given(st.lists(st.floats(allow_nan=False, allow_infinity=False, width=64), min_size=1, max_size=20))
def test_repr_of_any_float_reads_back_exactly(values):
    # repr() gives the shortest text that rounds back to the same float64 (Python's float repr).
    column = parse(*[repr(v) for v in values])
    assert column.status.tolist() == [R.KEPT] * len(values)
    assert column.values.tolist() == values


@settings(derandomize=True, max_examples=150, deadline=None)
@given(st.lists(st.integers(-(10**12), 10**12), min_size=1, max_size=15), st.integers(0, 6))
def test_decimal_comma_spelling_reads_as_the_point_spelling(integers, decimals):
    texts = [f"{i / 10**decimals:.{decimals}f}" for i in integers]
    # One unambiguous decimal-comma cell fixes the column's mark.
    comma = [t.replace(".", ",") for t in texts] + ["0,5"]
    column = parse(*comma)
    assert column.values[:-1].tolist() == [float(t) for t in texts]
