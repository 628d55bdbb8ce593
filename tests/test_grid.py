"""The recording grid (resolution) shared by the reader and the engine.

Reference: exact rational arithmetic on the decimal texts of the values
(Python's ``fractions`` and ``math.gcd``): the fewest decimals that write
every value exactly, and the greatest common divisor of the values'
distances on that grid.  Float noise (``0.30000000000000004``) is the
float64 rounding of those texts (IEEE 754).
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

from clusterdesk.engine.resolution import detect_grid_step
from clusterdesk.grid import MAX_DECIMALS, grid_step
from clusterdesk.io import detect_resolution


def exact_step(texts: list[str]) -> float | None:
    """The grid step of decimal texts by exact arithmetic (the reference)."""
    values = [Fraction(t) for t in texts]
    decimals = 0
    while any((v * 10**decimals).denominator != 1 for v in values):
        decimals += 1
    if decimals > MAX_DECIMALS:
        return None
    grid = [int(v * 10**decimals) for v in values]
    step = math.gcd(*[g - min(grid) for g in grid])
    return round(step / 10**decimals, decimals) if step else None


def test_one_implementation_under_the_old_names():
    assert detect_resolution is grid_step
    assert detect_grid_step is grid_step


@pytest.mark.parametrize("decimals", [0, 1, 2, 3, 5, 8])
@pytest.mark.parametrize("factor", [1, 2, 5, 25])
def test_matches_exact_arithmetic_on_decimal_texts(decimals, factor):
    rng = np.random.default_rng(100 * decimals + factor)
    units = rng.integers(-40_000, 40_000, 3000) * factor + 7 * factor
    texts = [f"{u / 10**decimals:.{decimals}f}" for u in units]
    assert grid_step(np.array([float(t) for t in texts])) == exact_step(texts)


def test_float_noise_is_tolerated():
    # 0.1 * k in float64 is not k tenths exactly (IEEE 754); the grid is still 0.1.
    assert grid_step(np.arange(0, 500) * 0.1 + 10) == 0.1
    assert grid_step([0.1, 0.2, 0.30000000000000004, 0.7]) == 0.1


def test_continuous_data_and_degenerate_input_give_none():
    rng = np.random.default_rng(5)
    assert grid_step(rng.normal(10, 2, 100_000)) is None
    assert grid_step(np.round(rng.normal(10, 2, 1000), MAX_DECIMALS + 1)) is None  # more decimals than looked for
    for values in ([], [3.0], [2.0, 2.0, 2.0]):
        assert grid_step(values) is None


@pytest.mark.parametrize("bad", [np.inf, -np.inf, np.nan])
def test_values_that_are_not_all_finite_give_none(bad):
    x = np.round(np.random.default_rng(6).normal(5, 1, 300_000), 2)
    x[-1] = bad  # outside the evenly spread sample: found by the pass over every value
    assert grid_step(x) is None


def test_two_distinct_values_give_their_distance():
    assert grid_step([1.0, 3.0, 1.0]) == 2.0
    assert grid_step([0.25, 0.5]) == 0.25


def test_small_values_get_as_many_decimals_beyond_their_leading_digit():
    # Values near 4e-8 recorded to 5e-10 (metres to half a nanometre): eight
    # decimals would see no grid; the step is found beyond the leading digit.
    rng = np.random.default_rng(7)
    x = np.round(rng.normal(40, 8, 2000) / 0.5) * 0.5 * 1e-9
    assert grid_step(x) == pytest.approx(5e-10, rel=1e-12)
    assert grid_step(rng.normal(4e-8, 1e-8, 2000)) is None


def test_every_value_is_checked_not_only_the_sample():
    rng = np.random.default_rng(8)
    x = np.round(rng.normal(300, 40, 400_000) / 2) * 2  # even whole numbers: step 2
    assert grid_step(x) == 2.0
    x[12_345] += 1.0  # one odd value between the sampled ones
    assert grid_step(x) == 1.0
    x[54_321] += 0.5  # one half unit
    assert grid_step(x) == 0.5
    x[99_999] += 1e-3 / 3  # one value off every decimal grid
    assert grid_step(x) is None


def test_a_large_value_outside_the_sample_widens_the_noise_allowance():
    # The allowance for float rounding grows with the largest value
    # (4e-16 of it per grid step); the answer must not depend on whether the
    # sample saw that value.  Reference: the same values with the large one
    # first (inside the sample).
    rng = np.random.default_rng(9)
    x = np.round(rng.normal(5, 1, 300_000), 3)
    x[1] = 4e9  # not in the sample (every 15th value)
    y = x.copy()
    y[[0, 1]] = y[[1, 0]]
    assert grid_step(x) == grid_step(y) == 0.001


def test_a_grid_too_coarse_to_tell_the_values_apart_gives_way_to_a_finer_one():
    # 2.0000001 is within 1e-6 of the whole-number grid point 2, as 2.0 is:
    # both sit on one point, so the next grids are tried (reference: exact
    # arithmetic on the texts, seven decimals).
    assert grid_step([2.0, 2.0000001, 2.0000003]) == exact_step(["2.0", "2.0000001", "2.0000003"]) == 1e-7
    # Near 1e14 float64 is spaced 1/64 apart (IEEE 754): no finer grid is
    # trusted where float rounding is that coarse.
    assert grid_step(1e14 + np.array([0.0, 1 / 64, 2 / 64])) is None
