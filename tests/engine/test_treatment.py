"""Which likelihood a scan uses (clusterdesk.engine.treatment), and that it says so.

The rule is ours (documented in the module); the checks here are that each
case gets the documented treatment, that overrides work both ways, and that
the ranking rows name the likelihood they are of. The data are synthetic,
drawn here with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest

import clusterdesk
from clusterdesk.engine.treatment import COARSE_FRACTION, resolve_treatment
from clusterdesk.errors import InputError


def _sample(seed=1, n=400):
    rng = np.random.default_rng(seed)
    return np.concatenate([rng.normal(20.0, 2.0, n // 2), rng.normal(30.0, 3.0, n // 2)])


def test_continuous_values_are_exact():
    sample, used = resolve_treatment(_sample())
    assert used.used == "exact" and not sample.is_intervals
    assert "no recording grid" in used.reason


def test_coarse_grid_is_intervals_and_fine_grid_exact():
    x = _sample()
    sample, used = resolve_treatment(np.round(x))  # step 1 against a spread of about 5
    assert used.used == "intervals" and used.resolution == 1.0 and sample.is_intervals
    np.testing.assert_allclose(sample.upper - sample.lower, 1.0)
    fine = np.round(x, 3)  # step 0.001: far below COARSE_FRACTION of the spread
    assert 0.001 < COARSE_FRACTION * 5.0
    assert resolve_treatment(fine)[1].used == "exact"


def test_value_count_table_is_intervals_of_its_class_width():
    v = np.arange(10.0, 40.0, 2.0)
    c = np.arange(1, v.size + 1)
    sample, used = resolve_treatment(v, c)
    assert used.used == "intervals" and used.resolution == 2.0
    assert sample.n == c.sum() and "value/count table" in used.reason


def test_overrides_both_ways():
    x = np.round(_sample())
    assert resolve_treatment(x, treatment="exact")[1].used == "exact"
    assert resolve_treatment(_sample(), treatment="intervals", resolution=0.5)[1].used == "intervals"
    with pytest.raises(InputError, match="resolution"):
        resolve_treatment(_sample(), treatment="intervals")
    with pytest.raises(InputError, match="Unknown treatment"):
        resolve_treatment(x, treatment="rounded")
    with pytest.raises(InputError, match="positive number"):
        resolve_treatment(x, resolution=-1)


def test_censored_bounds_force_intervals_under_auto():
    x = _sample()
    lower, upper = x - 0.005, x + 0.005
    lower[:5] = -np.inf
    sample, used = resolve_treatment(x, bounds=(lower, upper))
    assert used.used == "intervals" and used.censored == 5 and "censored" in used.reason


def test_scan_states_the_treatment_in_result_and_rows():
    x = np.round(_sample())
    result = clusterdesk.scan(x, kmin=1, kmax=2, widths="both", seed=0)
    assert result.treatment.used == "intervals" and result.treatment.requested == "auto"
    assert {row.likelihood for row in result.ranking} == {"intervals"}
    assert "intervals of width 1" in result.treatment.describe()
    exact = clusterdesk.scan(x, kmin=1, kmax=2, seed=0, treatment="exact")
    assert {row.likelihood for row in exact.ranking} == {"exact"}
    assert exact.treatment.as_dict()["used"] == "exact"


def test_a_class_named_by_its_lower_end_is_the_interval_above_it():
    # A length-frequency tally recorded to the whole unit below (class 12 holds
    # 12.0 to 12.99), from a known mixture (synthetic, seeded). Taken as the
    # lower end of its class, the interval fit recovers the generating means
    # within sampling error (standard error of a component mean s / sqrt(n w),
    # common practice); taken as the middle, every mean comes out half a class
    # low: flooring moves each value down by h/2 on average (common practice).
    rng = np.random.default_rng(52)
    weights, means, sds = np.array([0.55, 0.45]), np.array([12.3, 21.5]), np.array([1.6, 2.4])
    n = 20_000
    labels = rng.choice(2, n, p=weights)
    classes, counts = np.unique(np.floor(rng.normal(means[labels], sds[labels])), return_counts=True)
    se = sds / np.sqrt(n * weights)
    lower = clusterdesk.fit(classes, 2, counts=counts, value_at="lower", seed=0)
    middle = clusterdesk.fit(classes, 2, counts=counts, value_at="middle", seed=0)
    assert np.all(np.abs(lower.mixture.means - means) < 4 * se)
    assert np.all(np.abs(middle.mixture.means - (means - 0.5)) < 4 * se)
    # The interval likelihood is unchanged by moving every interval and the means alike.
    np.testing.assert_allclose(lower.mixture.means - middle.mixture.means, 0.5, atol=1e-5)
    np.testing.assert_allclose(lower.mixture.sds, middle.mixture.sds, rtol=1e-5)
    sample, treatment = resolve_treatment(classes, counts, value_at="lower")
    np.testing.assert_array_equal(sample.lower, classes)
    np.testing.assert_array_equal(sample.upper, classes + 1)
    assert treatment.value_at == "lower" and "lower end of its interval" in treatment.describe()
    upper, _ = resolve_treatment(classes, counts, value_at="upper")
    np.testing.assert_array_equal(upper.upper, classes)
    with pytest.raises(InputError, match="'middle'"):
        resolve_treatment(classes, counts, value_at="start")
