"""Rows grouped by value, bit for bit: the groups numpy.unique finds on the bit patterns.

Reference: :func:`numpy.unique` over the float64 bit patterns (viewed as
int64), which is what "the same value, bit for bit" means; the grid path
must find exactly those groups, and fall back to them when its check fails.
"""

from __future__ import annotations

import numpy as np
import pytest

from clusterdesk.engine.distinct import group_rows


def _bits(x):
    return np.ascontiguousarray(x, dtype=np.float64).view(np.int64)


def _check_groups(groups, values, follow=()):
    """Each row holds its group's bits; groups are as many as numpy.unique finds (values and follow together)."""
    columns = [_bits(values)] + [np.asarray(c).astype(np.int64) if np.asarray(c).dtype != np.float64 else _bits(c)
                                 for c in follow]
    keys = np.stack(columns, axis=1)
    assert groups.index.shape == (values.size,)
    np.testing.assert_array_equal(keys, keys[groups.first][groups.index])
    assert groups.size == np.unique(keys, axis=0).shape[0]


@pytest.mark.parametrize("step", [0.001, None])
def test_recorded_values_group_as_numpy_unique_finds_them(rng, step):
    values = np.round(rng.normal(25.0, 4.0, 20_000), 3)
    groups = group_rows(values, step=step)
    _check_groups(groups, values)
    assert groups.size == np.unique(values).size < 20_000  # recorded to 0.001: many repeats


def test_negative_zero_stays_apart_from_zero(rng):
    values = np.round(rng.normal(0.0, 0.01, 1_000), 3)
    values[:3] = [-0.0, 0.0, -0.0]
    groups = group_rows(values, step=0.001)  # one grid number, two bit patterns: the sort decides
    _check_groups(groups, values)
    assert groups.index[0] == groups.index[2] != groups.index[1]


@pytest.mark.parametrize("values", [
    np.array([0.1, 0.1 + 1e-12, 0.2, 0.1]),         # off the grid: two values share a grid number
    np.array([1.0, np.nan, 1.0, np.inf, -np.inf, np.nan]),  # not finite: no grid numbers
    np.array([1.0, 1e300, 1.0]),                      # far beyond the grid's reach
])
def test_values_the_grid_cannot_hold_group_by_sorting(values):
    groups = group_rows(values, step=0.1)
    _check_groups(groups, values)


def test_a_column_that_does_not_follow_the_value_splits_its_groups(rng):
    values = np.round(rng.uniform(1.0, 2.0, 5_000), 2)
    follows = np.log(values)
    _check_groups(group_rows(values, step=0.01, follow=[follows]), values, [follows])
    differs = follows.copy()
    differs[::7] = np.nextafter(differs[::7], np.inf)  # the same value, another neighbour: other text
    groups = group_rows(values, step=0.01, follow=[differs])
    _check_groups(groups, values, [differs])
    assert groups.size > np.unique(values).size
    reasons = rng.integers(0, 3, values.size).astype(np.uint8)
    _check_groups(group_rows(values, follow=[reasons]), values, [reasons])


def test_totals_count_rows_or_add_weights(rng):
    values = rng.choice([1.5, 2.5, 3.5], 1_000)
    weights = rng.integers(1, 5, 1_000).astype(float)
    groups = group_rows(values, step=1.0)
    for j, row in enumerate(groups.first):
        same = values == values[row]
        assert groups.totals()[j] == same.sum()
        assert groups.totals(weights)[j] == weights[same].sum()


def test_no_rows_make_no_groups():
    groups = group_rows(np.zeros(0), step=0.1)
    assert groups.size == 0 and groups.index.size == 0
