"""Values far outside the rest of the sample: named in a note, not silently ranked away.

Sources:
- Tukey's far-out fences, ``Q1 - 3 IQR`` and ``Q3 + 3 IQR`` (Tukey 1977,
  Exploratory Data Analysis; the factor 3 from memory), with quartiles by
  numpy's ``inverted_cdf`` method (definition 1 of Hyndman & Fan 1996).
- Posterior probabilities from scipy.stats.norm densities (Bayes' rule).
- scikit-learn's GaussianMixture run to a tight tolerance as the reference
  for which component count BIC (Schwarz 1978) ranks first.

The data sets are synthetic, drawn here with fixed seeds.
"""

from __future__ import annotations

import functools

import numpy as np
import pytest
from scipy import stats
from sklearn.mixture import GaussianMixture
from threadpoolctl import threadpool_limits

import clusterdesk
from clusterdesk.engine.outliers import far_out_fences, held_values

WILD = 1e6


@functools.cache
def two_groups(seed: int = 3) -> np.ndarray:
    """250 values from N(0, 1) and 250 from N(5, 1), shape (500,)."""
    rng = np.random.default_rng(seed)
    values = np.concatenate([rng.normal(0.0, 1.0, 250), rng.normal(5.0, 1.0, 250)])
    values.flags.writeable = False
    return values


@functools.cache
def clean_scan_and_reference():
    """Our scan of the two groups and the reference's choice of k on them."""
    clean = two_groups()
    return clusterdesk.scan(clean, kmin=1, kmax=3, seed=0), reference_bic_first(clean)


def reference_bic_first(values: np.ndarray, ks=(1, 2, 3)) -> int:
    """Component count with the lowest BIC by scikit-learn at a tight tolerance."""
    column = values.reshape(-1, 1)
    with threadpool_limits(1):
        bics = {k: GaussianMixture(k, tol=1e-10, max_iter=20_000, n_init=5, random_state=0)
                .fit(column).bic(column) for k in ks}
    return min(bics, key=bics.get)


def test_far_out_fences_match_quartiles_and_counts():
    rng = np.random.default_rng(41)
    values = np.sort(rng.normal(10.0, 2.0, 301))
    q1, q3 = np.quantile(values, [0.25, 0.75], method="inverted_cdf")
    lower, upper = far_out_fences(values, np.ones(values.size))
    assert lower == pytest.approx(q1 - 3.0 * (q3 - q1), rel=1e-12)
    assert upper == pytest.approx(q3 + 3.0 * (q3 - q1), rel=1e-12)
    # Counts act as repetitions: a value/count table gives the fences of the expanded sample.
    distinct = np.arange(1.0, 11.0)
    counts = rng.integers(1, 6, size=distinct.size).astype(float)
    expanded = np.repeat(distinct, counts.astype(int))
    q1, q3 = np.quantile(expanded, [0.25, 0.75], method="inverted_cdf")
    assert far_out_fences(distinct, counts) == pytest.approx((q1 - 3 * (q3 - q1), q3 + 3 * (q3 - q1)))


def test_held_values_follow_bayes_rule():
    values = np.linspace(-4.0, 9.0, 131)
    weights, means, sds = np.array([0.7, 0.3]), np.array([0.0, 5.0]), np.array([1.0, 1.5])
    joint = weights * stats.norm.pdf(values[:, None], means, sds)
    posterior = joint / joint.sum(axis=1, keepdims=True)
    expected = values[posterior[:, 1] > 0.5]
    held = held_values(values, weights, means, sds, np.array([False, True]))
    np.testing.assert_array_equal(held, expected)


@pytest.mark.parametrize("wild", [[WILD], [-WILD], [WILD, WILD], [WILD, -3e5]],
                         ids=["one high", "one low", "two tied", "two apart"])
def test_a_wild_value_is_named_with_what_to_do(wild):
    clean = two_groups()
    values = np.concatenate([clean, wild])
    result = clusterdesk.scan(values, kmin=1, kmax=4, seed=0)

    # The wild values, and only they, are named; the note says what to try.
    assert result.suspect_values == tuple(sorted(set(wild)))
    assert len(result.notes) == 1
    note = result.notes[0]
    for value in set(wild):
        assert f"{value:.10g}" in note
    assert "range limit" in note and "recording error" in note
    # Common practice: a value beyond the far-out fences of the clean values is an outlier.
    lower, upper = far_out_fences(np.sort(clean), np.ones(clean.size))
    assert all(v < lower or v > upper for v in wild)
    # Every collapsed model that names a value holds it in its collapsed component.
    named = [m for m in result.models if m.suspect_values]
    assert named and all(m.collapsed for m in named)

    # Leaving the values out, as the note advises, finds the two real groups,
    # as scikit-learn's BIC does on the same values.
    cleaned, reference_k = clean_scan_and_reference()
    assert cleaned.notes == () and cleaned.suspect_values == ()
    assert cleaned.ranking[0].k == 2 == reference_k


@pytest.mark.parametrize("seed", [5, 6])
def test_a_small_far_group_is_not_called_an_outlier(seed):
    # 25 of 500 values form a real group 12 sds away: beyond the far-out
    # fences, but a group with a width of its own, so no model collapses on it.
    rng = np.random.default_rng(seed)
    values = np.concatenate([rng.normal(0.0, 1.0, 475), rng.normal(12.0, 1.0, 25)])
    lower, upper = far_out_fences(np.sort(values), np.ones(values.size))
    assert np.sum(values > upper) >= 20
    result = clusterdesk.scan(values, kmin=1, kmax=3, seed=0)
    assert result.notes == () and result.suspect_values == ()
    assert result.ranking[0].k == 2 == reference_bic_first(values)
    assert result.best.mixture.weights[1] == pytest.approx(0.05, abs=0.02)
