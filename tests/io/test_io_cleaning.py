"""Cleaning: every row's fate and reason, range, log scales, counts, resolution."""

from __future__ import annotations

import pickle

import numpy as np
import pytest

from clusterdesk.errors import InputError
from clusterdesk.io import REASON_WORDS, detect_resolution, read_measurements, reason_words
from clusterdesk.io import reasons as R
from clusterdesk.io.cleaning import clean_column, to_original_scale
from clusterdesk.io.numbers import parse_column


def accounted(m) -> bool:
    s = m.summary
    return s.rows_read == s.rows_kept + sum(s.excluded.values()) == len(m.rows)


def test_every_reason_once_with_line_numbers_and_raw_text():
    text = "\n".join(
        [
            "length,count",  # line 1
            "12.5,1",  # 2 kept
            ",1",  # 3 empty
            "abc,1",  # 4 not a number
            "inf,1",  # 5 not finite
            "<0.5,1",  # 6 below detection limit
            ">90,1",  # 7 above reporting limit
            "13.5,0",  # 8 zero count
            "14.5,-2",  # 9 negative count
            "99,1",  # 10 outside the range
            "-1,1",  # 11 not positive under a log scale (and inside the range)
            "15.5,2",  # 12 kept
        ]
    )
    m = read_measurements(text=text, counts="count", low=-5, high=50, scale="ln")
    assert m.values.tolist() == [12.5, 15.5]
    assert m.counts.tolist() == [1.0, 2.0]
    assert m.fit_values.tolist() == np.log([12.5, 15.5]).tolist()
    assert m.rows.line.tolist() == list(range(2, 13))
    expected = [R.KEPT, R.EMPTY, R.NOT_A_NUMBER, R.NOT_FINITE, R.BELOW_LIMIT, R.ABOVE_LIMIT,
                R.MISSING_COUNT, R.NEGATIVE_COUNT, R.OUT_OF_RANGE, R.NOT_POSITIVE, R.KEPT]  # fmt: skip
    assert m.rows.reason.tolist() == expected
    assert [m.rows.reason_words(c) for c in m.rows.reason[:2]] == ["kept", "empty"]
    assert m.summary.excluded == {REASON_WORDS[c]: 1 for c in expected[1:-1]}
    assert accounted(m)
    # the limit value stays in the row record
    assert m.rows.value[4] == 0.5 and m.rows.value[5] == 90.0
    assert np.isnan(m.rows.value[2]) and np.isinf(m.rows.value[3])
    assert [m.rows.raw(i) for i in range(1, 5)] == ["", "abc", "inf", "<0.5"]
    assert m.rows.raw(0) is None  # kept rows carry no text
    assert m.rows.position.tolist() == [0] + [-1] * 9 + [1]
    assert m.rows.excluded().tolist() == list(range(1, 10))
    assert m.rows.excluded(R.OUT_OF_RANGE).tolist() == [8]
    assert m.summary.total_count == 3.0
    assert "11 rows read, 2 kept" in str(m.summary)


def test_range_limits_are_inclusive():
    m = read_measurements(text="x\n4.9\n5\n7\n10\n10.1\n", low=5, high=10)
    assert m.values.tolist() == [5.0, 7.0, 10.0]
    assert m.summary.excluded == {"outside the chosen range": 2}
    assert (m.low, m.high) == (5.0, 10.0)


@pytest.mark.parametrize("scale, function", [("ln", np.log), ("log10", np.log10), ("linear", lambda v: v)])
def test_scales_keep_both_value_scales(scale, function):
    m = read_measurements(text="x\n0\n-1\n1\n10\n100\n", scale=scale)
    expected = [0.0, -1.0, 1.0, 10.0, 100.0] if scale == "linear" else [1.0, 10.0, 100.0]
    assert m.values.tolist() == expected
    assert m.fit_values.tolist() == list(function(np.array(expected)))
    assert m.scale == scale and accounted(m)


def test_linear_scale_shares_the_array_and_arrays_are_read_only():
    m = read_measurements(text="x\n1\n2\n")
    assert m.fit_values is m.values
    with pytest.raises(ValueError):
        m.values[0] = 5.0
    with pytest.raises(ValueError):
        m.rows.kept[0] = False


def test_row_fates_made_on_first_use_equal_the_stored_ones():
    # Consecutive lines given as a range, and "every row kept", are made into
    # arrays on first use; the reference is the same rows given as arrays.
    parsed = parse_column(["1.5", "2.5", "4"])
    lazy = clean_column(parsed, range(2, 5), lambda positions: [])
    stored = clean_column(parse_column(["1.5", "2.5", "4"]), np.array([2, 3, 4], dtype=np.int32), lambda positions: [])
    for name in ("line", "kept", "reason", "position"):
        made, given = getattr(lazy.rows, name), getattr(stored.rows, name)
        assert made.dtype == given.dtype and made.tolist() == given.tolist()
        with pytest.raises(ValueError):
            made[0] = 0
    assert len(lazy.rows) == 3 and lazy.rows.kept.all()
    again = pickle.loads(pickle.dumps(clean_column(parse_column(["7", "x"]), range(10, 12), lambda positions: ["x"])))
    assert again.rows.line.tolist() == [10, 11] and again.rows.kept.tolist() == [True, False]


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"scale": "sqrt"}, "scale 'sqrt' is not known"),
        ({"low": 5, "high": 1}, "range is empty"),
        ({"low": "abc"}, "not a number"),
        ({"high": float("nan")}, "not finite"),
        ({"low": 1000}, "No value of column"),
        ({"column": "x", "counts": "x"}, "same"),
    ],
)
def test_bad_settings_are_input_errors(kwargs, match):
    with pytest.raises(InputError, match=match):
        read_measurements(text="x,n\n1,1\n2,1\n", **kwargs)


def test_reason_words_lookup():
    assert reason_words(R.BELOW_LIMIT) == "below detection limit"
    assert reason_words(0) == "kept"
    with pytest.raises(ValueError):
        reason_words(99)


@pytest.mark.parametrize(
    "values, step",
    [
        (np.arange(0, 50) * 0.1 + 10, 0.1),  # tenths; float noise from the multiplication
        ([0.1, 0.2, 0.30000000000000004, 0.7], 0.1),
        (np.arange(0, 40) * 0.5, 0.5),
        ([1.0, 3.0, 4.0, 10.0], 1.0),
        ([10.0, 20.0, 50.0], 10.0),
        ([0.25, 0.5, 1.75], 0.25),
        ([12.345, 12.346, 12.35], 0.001),
    ],
)
def test_resolution_of_a_value_grid(values, step):
    assert detect_resolution(np.asarray(values, dtype=float)) == pytest.approx(step, rel=1e-12)


def test_resolution_of_continuous_data_is_none():
    rng = np.random.default_rng(5)
    assert detect_resolution(rng.normal(10, 2, 1000)) is None
    assert detect_resolution(np.array([3.0])) is None
    assert detect_resolution(np.array([2.0, 2.0, 2.0])) is None
    assert detect_resolution(np.array([])) is None


def test_resolution_reported_on_the_original_scale():
    m = read_measurements(text="x\n1.5\n2.0\n3.5\n", scale="ln")
    assert m.resolution == 0.5


@pytest.mark.parametrize("scale, forward", [("ln", np.log), ("log10", np.log10), ("linear", lambda v: v)])
def test_to_original_scale_undoes_the_analysis_scale(scale, forward):
    # Reference: numpy's own logarithms; the round trip returns the recorded values.
    recorded = np.array([0.003, 1.0, 42.5, 1e6])
    np.testing.assert_allclose(to_original_scale(forward(recorded), scale), recorded, rtol=1e-14)
    assert float(to_original_scale(forward(1e6), scale)) == pytest.approx(1e6, rel=1e-14)


def test_to_original_scale_refuses_an_unknown_scale():
    with pytest.raises(InputError, match="log10"):
        to_original_scale(1.0, "sqrt")
