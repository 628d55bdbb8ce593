"""Tests of the Mixture value against scipy.stats references and published results."""

from __future__ import annotations

import dataclasses
import pickle

import numpy as np
import pytest
from scipy import integrate, optimize, signal, special, stats

from clusterdesk.engine.mixture import Mixture, cut_point_between
from clusterdesk.errors import InputError

# (k, scale, offset): scales from 1e-6 to 1e6 check that nothing depends on units.
CASES = [(1, 1.0, 0.0), (2, 1.0, 0.0), (3, 1e-6, 0.0), (4, 1e6, 0.0),
         (5, 1e-3, 50.0), (3, 1.0, -7.0)]


def random_mixture(seed: int, k: int, scale: float = 1.0, offset: float = 0.0) -> Mixture:
    rng = np.random.default_rng(seed)
    weights = rng.dirichlet(np.full(k, 2.0))
    means = offset + scale * rng.normal(0.0, 4.0, k)
    sds = scale * rng.uniform(0.3, 2.0, k)
    return Mixture(weights, means, sds)


def reference_components(mix: Mixture):
    """The mixture as explicit scipy.stats.norm objects (the reference in this file)."""
    return [(w, stats.norm(loc=m, scale=s)) for w, m, s in zip(mix.weights, mix.means, mix.sds)]


def reference_pdf(mix, x):
    return sum(w * comp.pdf(x) for w, comp in reference_components(mix))


def reference_logpdf(mix, x):
    logs = np.stack([np.log(w) + comp.logpdf(x) for w, comp in reference_components(mix)], axis=-1)
    return special.logsumexp(logs, axis=-1)


def reference_cdf(mix, x):
    return sum(w * comp.cdf(x) for w, comp in reference_components(mix))


def reference_sf(mix, x):
    return sum(w * comp.sf(x) for w, comp in reference_components(mix))


def reference_posterior(mix, x):
    logs = np.stack([np.log(w) + comp.logpdf(x) for w, comp in reference_components(mix)], axis=-1)
    return special.softmax(logs, axis=-1)


def body_points(mix: Mixture, seed: int, n: int = 200) -> np.ndarray:
    rng = np.random.default_rng(seed)
    j = rng.integers(0, mix.k, n)
    return mix.means[j] + mix.sds[j] * rng.uniform(-6.0, 6.0, n)


# ------------------------------------------------------------------ validation
@pytest.mark.parametrize(
    ("weights", "means", "sds", "message"),
    [
        ([], [], [], "at least one component"),
        ([0.5, 0.5], [0.0], [1.0, 1.0], "one entry per component"),
        ([0.5, 0.6], [0.0, 1.0], [1.0, 1.0], "add up to 1"),
        ([1.2, -0.2], [0.0, 1.0], [1.0, 1.0], "weights must all be positive"),
        ([1.0, 0.0], [0.0, 1.0], [1.0, 1.0], "weights must all be positive"),
        ([0.5, 0.5], [0.0, np.nan], [1.0, 1.0], "finite"),
        ([0.5, 0.5], [0.0, 1.0], [1.0, np.inf], "finite"),
        ([0.5, 0.5], [0.0, 1.0], [1.0, 0.0], "standard deviations must be positive"),
        ([[0.5, 0.5]], [[0.0, 1.0]], [[1.0, 1.0]], "flat list"),
        (["a"], [0.0], [1.0], "must be numbers"),
    ],
)
def test_invalid_parameters_raise_input_error(weights, means, sds, message):
    with pytest.raises(InputError, match=message):
        Mixture(weights, means, sds)


def test_input_error_is_a_value_error():
    assert issubclass(InputError, ValueError)
    with pytest.raises(ValueError):
        Mixture([0.5, 0.5], [0.0, 1.0], [1.0, -1.0])


def test_weights_within_tolerance_are_renormalised_and_copied():
    weights = np.array([0.3, 0.7 + 5e-7])
    mix = Mixture(weights, [0.0, 1.0], [1.0, 1.0])
    assert mix.weights.sum() == pytest.approx(1.0, abs=2 * np.finfo(float).eps)
    np.testing.assert_allclose(mix.weights, weights / weights.sum(), rtol=1e-15)
    weights[0] = 0.9  # changing the caller's array does not reach the value
    assert mix.weights[0] == pytest.approx(0.3 / (1 + 5e-7))


def test_components_sorted_by_mean_then_sd_and_read_only():
    mix = Mixture([0.2, 0.3, 0.5], [3.0, 1.0, 1.0], [1.0, 2.0, 0.5])
    np.testing.assert_array_equal(mix.means, [1.0, 1.0, 3.0])
    np.testing.assert_array_equal(mix.sds, [0.5, 2.0, 1.0])
    np.testing.assert_array_equal(mix.weights, [0.5, 0.3, 0.2])
    assert mix.k == 3 and mix.weights.dtype == np.float64
    with pytest.raises(ValueError):
        mix.weights[0] = 0.1
    with pytest.raises(dataclasses.FrozenInstanceError):
        mix.means = np.zeros(3)


def test_equality_hash_and_pickle_round_trip():
    a = Mixture([0.4, 0.6], [0.0, 2.0], [1.0, 0.5])
    b = Mixture([0.6, 0.4], [2.0, 0.0], [0.5, 1.0])  # same components, other order
    assert a == b and hash(a) == hash(b)
    assert a != Mixture([0.4, 0.6], [0.0, 2.1], [1.0, 0.5])
    c = pickle.loads(pickle.dumps(a))
    assert c == a and not c.weights.flags.writeable


# -------------------------------------------------------- densities and cdf
@pytest.mark.parametrize(("k", "scale", "offset"), CASES)
def test_pdf_logpdf_cdf_match_sum_of_scipy_normals(k, scale, offset):
    # Reference: explicit weighted sums of scipy.stats.norm objects.
    mix = random_mixture(10 + k, k, scale, offset)
    x = body_points(mix, 20 + k)
    np.testing.assert_allclose(mix.pdf(x), reference_pdf(mix, x), rtol=1e-10)
    np.testing.assert_allclose(mix.logpdf(x), np.log(reference_pdf(mix, x)), rtol=1e-11, atol=1e-11)
    np.testing.assert_allclose(mix.cdf(x), reference_cdf(mix, x), rtol=1e-11, atol=1e-300)
    np.testing.assert_allclose(mix.sf(x), reference_sf(mix, x), rtol=1e-11, atol=1e-300)
    np.testing.assert_allclose(mix.logcdf(x), np.log(reference_cdf(mix, x)), rtol=1e-10, atol=1e-12)
    weighted = np.stack([w * c.pdf(x) for w, c in reference_components(mix)], axis=1)
    np.testing.assert_allclose(mix.component_densities(x), weighted, rtol=1e-10, atol=0)


@pytest.mark.parametrize(("k", "scale", "offset"), CASES)
def test_far_tails_logpdf_stays_finite_while_pdf_underflows(k, scale, offset):
    # Reference: logsumexp of log w_j + scipy.stats.norm.logpdf.
    mix = random_mixture(30 + k, k, scale, offset)
    spread = mix.sds.max()
    x = np.array([mix.means.min() - 1e4 * spread, mix.means.max() + 1e4 * spread,
                  mix.means.max() + 1e7 * spread])
    assert np.all(reference_pdf(mix, x) == 0.0) and np.all(mix.pdf(x) == 0.0)
    logpdf = mix.logpdf(x)
    assert np.all(np.isfinite(logpdf))
    np.testing.assert_allclose(logpdf, reference_logpdf(mix, x), rtol=1e-12)
    components = reference_components(mix)
    lower_log = special.logsumexp([np.log(w) + c.logcdf(x[0]) for w, c in components])
    upper_log = special.logsumexp([np.log(w) + c.logsf(x[1]) for w, c in components])
    assert mix.logcdf(x[0]) == pytest.approx(lower_log, rel=1e-12)
    assert mix.logsf(x[1]) == pytest.approx(upper_log, rel=1e-12)


def test_shapes_follow_input():
    mix = random_mixture(1, 3)
    assert np.shape(mix.pdf(0.5)) == () and np.shape(mix.cdf(0.5)) == ()
    assert mix.component_densities(0.5).shape == (3,)
    assert mix.posterior(np.zeros(4)).shape == (4, 3)
    assert mix.logpdf(np.zeros((2, 5))).shape == (2, 5)
    assert mix.classify([0.0, 1.0]).shape == (2,)
    assert mix.pdf(np.inf) == 0.0 and mix.logpdf(-np.inf) == -np.inf
    assert mix.cdf(-np.inf) == 0.0 and mix.cdf(np.inf) == 1.0


def test_mean_and_variance_match_numerical_integration():
    # Reference: scipy.integrate.quad of x f(x) and (x - mean)^2 f(x) with the scipy density.
    mix = random_mixture(5, 3)
    components = reference_components(mix)  # made once: quad calls the density many times

    def density(t):
        return sum(w * c.pdf(t) for w, c in components)

    lo, hi = mix.means.min() - 15 * mix.sds.max(), mix.means.max() + 15 * mix.sds.max()
    mean, _ = integrate.quad(lambda t: t * density(t), lo, hi, points=mix.means, limit=200)
    var, _ = integrate.quad(lambda t: (t - mean) ** 2 * density(t), lo, hi,
                            points=mix.means, limit=200)
    assert mix.mean() == pytest.approx(mean, rel=1e-9, abs=1e-9)
    assert mix.variance() == pytest.approx(var, rel=1e-9)


# ------------------------------------------------------------------- quantile
@pytest.mark.parametrize(("k", "scale", "offset"), CASES)
def test_quantile_inverts_cdf(k, scale, offset):
    mix = random_mixture(40 + k, k, scale, offset)
    x = mix.sample(np.random.default_rng(50 + k), 300)
    p = mix.cdf(x)
    back = mix.quantile(p)
    # The attainable accuracy is rounding in p divided by the density (common practice).
    eps = np.finfo(float).eps
    allowed = (1e-12 * np.maximum(np.abs(x), mix.sds.min())
               + 64 * eps * np.minimum(p, 1 - p) / mix.pdf(x))
    assert np.all(np.abs(back - x) <= allowed)


@pytest.mark.parametrize(("k", "scale", "offset"), CASES)
def test_quantile_matches_brentq_on_scipy_cdf(k, scale, offset):
    # Reference: scipy.optimize.brentq on the cdf built from scipy.stats.norm.
    mix = random_mixture(60 + k, k, scale, offset)
    lo = mix.means.min() - 40 * mix.sds.max()
    hi = mix.means.max() + 40 * mix.sds.max()
    for q in (1e-6, 0.01, 0.3, 0.5, 0.77, 0.999):
        expected = optimize.brentq(lambda t: reference_cdf(mix, t) - q, lo, hi,
                                   xtol=1e-14 * mix.sds.min(), rtol=1e-15)
        assert mix.quantile(q) == pytest.approx(expected, rel=1e-11, abs=1e-10 * mix.sds.min())


def test_quantile_extremes_and_edges():
    mix = Mixture([0.3, 0.7], [5.0, 0.0], [1.0, 2.0])
    q_low, q_high = 1e-300, 1 - 1e-15
    # Reference: scipy.stats.norm cdf / sf, which stay relatively accurate in the tails.
    assert reference_cdf(mix, mix.quantile(q_low)) == pytest.approx(q_low, rel=1e-10)
    assert reference_sf(mix, mix.quantile(q_high)) == pytest.approx(1 - q_high, rel=1e-10)
    np.testing.assert_array_equal(mix.quantile([0.0, 1.0]), [-np.inf, np.inf])
    assert np.shape(mix.quantile(0.5)) == ()
    single = Mixture(1.0, 3.0, 2.0)
    assert single.quantile(0.975) == pytest.approx(stats.norm(3.0, 2.0).ppf(0.975), rel=1e-14)


def test_quantile_with_far_apart_components_of_very_different_widths():
    # Reference: the scipy-built cdf and sf; the density is ~0 between the two groups.
    mix = Mixture([0.5, 0.5], [0.0, 1e6], [1e-3, 1e5])
    q = np.array([1e-300, 1e-10, 0.01, 0.25, 0.4999999, 0.5000001, 0.75, 0.99])
    np.testing.assert_allclose(reference_cdf(mix, mix.quantile(q)), q, rtol=1e-9)
    assert reference_sf(mix, mix.quantile(1 - 1e-12)) == pytest.approx(1e-12, rel=1e-3)
    assert reference_cdf(mix, mix.quantile(0.5)) == pytest.approx(0.5, rel=1e-12)


@pytest.mark.parametrize("bad", [-0.1, 1.5, np.nan, [0.2, 2.0]])
def test_quantile_outside_unit_interval_raises(bad):
    with pytest.raises(InputError, match="between 0 and 1"):
        Mixture([0.5, 0.5], [0.0, 3.0], [1.0, 1.0]).quantile(bad)


# ------------------------------------------------------------------- sampling
def test_sample_follows_cdf_kolmogorov_smirnov():
    # Reference: scipy.stats.kstest against the scipy-built cdf, seeded.
    mix = Mixture([0.2, 0.5, 0.3], [-3.0, 1.0, 6.0], [0.5, 1.5, 1.0])
    values = mix.sample(np.random.default_rng(2024), 4000)
    assert values.shape == (4000,)
    assert stats.kstest(values, lambda t: reference_cdf(mix, t)).pvalue > 0.01


def test_sample_labels_follow_weights_and_components():
    # References: scipy.stats.chisquare on the label counts; kstest per component.
    mix = Mixture([0.2, 0.5, 0.3], [-3.0, 1.0, 6.0], [0.5, 1.5, 1.0])
    values, labels = mix.sample(np.random.default_rng(7), 6000, return_labels=True)
    counts = np.bincount(labels, minlength=3)
    assert stats.chisquare(counts, 6000 * mix.weights).pvalue > 0.01
    for j, (_, comp) in enumerate(reference_components(mix)):
        assert stats.kstest(values[labels == j], comp.cdf).pvalue > 0.01


def test_sample_is_reproducible_for_a_seed():
    mix = random_mixture(3, 3)
    a = mix.sample(np.random.default_rng(11), 500)
    b = mix.sample(np.random.default_rng(11), 500)
    c = mix.sample(np.random.default_rng(12), 500)
    np.testing.assert_array_equal(a, b)
    assert not np.array_equal(a, c)
    assert mix.sample(np.random.default_rng(11), (2, 3)).shape == (2, 3)


def test_sample_rejects_bad_generator_and_size():
    mix = random_mixture(3, 2)
    with pytest.raises(InputError, match="default_rng"):
        mix.sample(np.random.RandomState(0), 10)
    with pytest.raises(InputError, match="negative"):
        mix.sample(np.random.default_rng(0), -1)
    with pytest.raises(InputError, match="whole number"):
        mix.sample(np.random.default_rng(0), 2.5)


# ------------------------------------------------------- posterior, classify
@pytest.mark.parametrize(("k", "scale", "offset"), CASES)
def test_posterior_matches_direct_computation(k, scale, offset):
    # Reference: w_j norm.pdf_j / sum_l w_l norm.pdf_l with scipy.stats.norm.
    mix = random_mixture(70 + k, k, scale, offset)
    x = body_points(mix, 80 + k)
    direct = np.stack([w * c.pdf(x) for w, c in reference_components(mix)], axis=1)
    direct /= direct.sum(axis=1, keepdims=True)
    post = mix.posterior(x)
    np.testing.assert_allclose(post, direct, rtol=1e-9, atol=1e-14)
    np.testing.assert_allclose(post.sum(axis=1), 1.0, atol=1e-13)
    np.testing.assert_array_equal(mix.classify(x), np.argmax(direct, axis=1))


def test_posterior_of_a_long_column_is_computed_in_blocks_with_the_same_numbers():
    # A column longer than one block (2**18 rows), far tails and infinities included.
    mix = Mixture([0.3, 0.4, 0.3], [0.0, 5.0, 10.0], [1.0, 3.0, 1.0])
    x = np.random.default_rng(5).normal(5.0, 6.0, (1 << 18) + 1001)
    x[[7, (1 << 18) + 3, -1]] = [-np.inf, np.inf, 1e150]
    post = mix.posterior(x)
    pieces = np.concatenate([mix.posterior(x[i:i + 1000]) for i in range(0, x.size, 1000)])
    np.testing.assert_array_equal(post, pieces)  # row for row the same numbers, whatever the blocking
    # Reference: softmax of log w + scipy.stats.norm.logpdf.
    finite = np.isfinite(x) & (np.abs(x) < 1e100)
    np.testing.assert_allclose(post[finite], reference_posterior(mix, x[finite]), atol=1e-13)


def test_posterior_rows_sum_to_one_in_far_tails_and_at_infinity():
    mix = Mixture([0.3, 0.4, 0.3], [0.0, 5.0, 10.0], [1.0, 3.0, 1.0])
    x = np.array([-1e8, -1e4, 1e4, 1e8, 1e150])
    post = mix.posterior(x)
    np.testing.assert_allclose(post.sum(axis=1), 1.0, atol=1e-13)
    # Reference: softmax of log w + scipy.stats.norm.logpdf (no underflow in log space).
    np.testing.assert_allclose(post, reference_posterior(mix, x), atol=1e-13)
    # In both tails the widest component takes over (its log density falls slowest).
    limits = mix.posterior([-np.inf, np.inf, 1e300])
    np.testing.assert_allclose(limits, np.tile([0.0, 1.0, 0.0], (3, 1)))
    np.testing.assert_array_equal(mix.classify([-1e8, 1e8, np.inf]), [1, 1, 1])
    with pytest.raises(InputError, match="NaN"):
        mix.posterior([0.0, np.nan])


def test_classify_orders_components_by_mean():
    mix = Mixture([0.5, 0.5], [10.0, 0.0], [1.0, 1.0])
    np.testing.assert_array_equal(mix.classify([-1.0, 4.9, 5.1, 11.0]), [0, 0, 1, 1])


def test_loglik_with_and_without_counts():
    mix = random_mixture(9, 3)
    rng = np.random.default_rng(9)
    x = np.round(mix.sample(rng, 50), 1)
    counts = rng.integers(0, 5, 50)
    # Reference: log of the scipy-built density, values repeated by their counts.
    assert mix.loglik(x) == pytest.approx(np.sum(np.log(reference_pdf(mix, x))), rel=1e-12)
    repeated = np.repeat(x, counts)
    expected = np.sum(np.log(reference_pdf(mix, repeated)))
    assert mix.loglik(x, counts) == pytest.approx(expected, rel=1e-12)
    with pytest.raises(InputError, match="one entry per value"):
        mix.loglik(x, counts[:-1])
    with pytest.raises(InputError, match="not negative"):
        mix.loglik(x, -counts)
    with pytest.raises(InputError, match="finite values"):
        mix.loglik([0.0, np.inf])


# ----------------------------------------------------------------- cut points
def equal_log_densities(w1, m1, s1, w2, m2, s2, x):
    return np.log(w1) + stats.norm.logpdf(x, m1, s1), np.log(w2) + stats.norm.logpdf(x, m2, s2)


def test_cut_point_equal_weights_equal_widths_is_midpoint():
    # Equal weights and widths: by symmetry the densities cross half-way (common practice).
    assert cut_point_between(0.5, 2.0, 1.3, 0.5, 9.0, 1.3) == 0.5 * (2.0 + 9.0)
    np.testing.assert_array_equal(Mixture([0.5, 0.5], [2.0, 9.0], [1.3, 1.3]).cut_points(), [5.5])


def test_cut_point_equal_widths_linear_formula():
    # x = (m1+m2)/2 + s^2 ln(w1/w2) / (m2-m1): the equal-variance discriminant boundary
    # (common practice).
    w1, m1, w2, m2, s = 0.7, 1.0, 0.3, 4.0, 0.9
    expected = 0.5 * (m1 + m2) + s**2 * np.log(w1 / w2) / (m2 - m1)
    cut = cut_point_between(w1, m1, s, w2, m2, s)
    assert cut == pytest.approx(expected, rel=1e-14)
    a, b = equal_log_densities(w1, m1, s, w2, m2, s, cut)
    assert a == pytest.approx(b, abs=1e-12)  # reference: scipy.stats.norm.logpdf
    post = Mixture([w1, w2], [m1, m2], [s, s]).posterior(cut)
    np.testing.assert_allclose(post, [0.5, 0.5], atol=1e-12)


def test_cut_point_unequal_widths_against_quadratic_roots():
    w1, m1, s1, w2, m2, s2 = 0.6, 0.0, 1.0, 0.4, 5.0, 2.5
    cut = cut_point_between(w1, m1, s1, w2, m2, s2)
    # Reference: numpy.roots on the quadratic from equating the two log densities (raw x).
    coefficients = [1 / (2 * s2**2) - 1 / (2 * s1**2), m1 / s1**2 - m2 / s2**2,
                    np.log(w1 / w2) - np.log(s1 / s2) - m1**2 / (2 * s1**2) + m2**2 / (2 * s2**2)]
    roots = np.roots(coefficients).real
    between = roots[(roots > m1) & (roots < m2)]
    assert between.size == 1 and cut == pytest.approx(between[0], rel=1e-12)
    a, b = equal_log_densities(w1, m1, s1, w2, m2, s2, cut)
    assert a == pytest.approx(b, abs=1e-12)
    # The posterior switches from the lower component below to the upper one above.
    mix = Mixture([w1, w2], [m1, m2], [s1, s2])
    np.testing.assert_array_equal(mix.classify([cut - 1e-6, cut + 1e-6]), [0, 1])
    np.testing.assert_allclose(mix.posterior(cut), [0.5, 0.5], atol=1e-12)


def test_cut_point_near_equal_widths_has_no_cancellation():
    w1, m1, w2, m2, s = 0.55, 10.0, 0.45, 13.0, 1.1
    linear = 0.5 * (m1 + m2) + s**2 * np.log(w1 / w2) / (m2 - m1)
    for relative_difference in (1e-15, 1e-12, 1e-9):
        cut = cut_point_between(w1, m1, s, w2, m2, s * (1 + relative_difference))
        assert cut == pytest.approx(linear, abs=1e-6)
        a, b = equal_log_densities(w1, m1, s, w2, m2, s * (1 + relative_difference), cut)
        assert a == pytest.approx(b, abs=1e-12)


def test_cut_point_nan_when_no_crossing_between_means():
    # Heavy component next to a light one: it dominates the whole interval.
    assert np.isnan(cut_point_between(0.99, 0.0, 1.0, 0.01, 0.5, 1.0))
    # A wide light component whose narrow heavy neighbour dominates up to the wide mean.
    assert np.isnan(cut_point_between(0.9, 0.0, 0.2, 0.1, 0.3, 3.0))
    # Equal means, or parameters that are not valid.
    assert np.isnan(cut_point_between(0.5, 1.0, 1.0, 0.5, 1.0, 2.0))
    assert np.all(np.isnan(cut_point_between([0.0, 0.5], 0.0, [1.0, -1.0], 0.5, 3.0, 1.0)))
    # Confirm the first case with scipy: the lower component is larger on the whole interval.
    grid = np.linspace(0.0, 0.5, 101)
    a, b = equal_log_densities(0.99, 0.0, 1.0, 0.01, 0.5, 1.0, grid)
    assert np.all(a > b)


def test_cut_point_between_vectorised_over_replicates():
    rng = np.random.default_rng(314)
    n = 150
    w1 = rng.uniform(0.05, 0.95, n)
    m1, m2 = rng.normal(0.0, 1.0, n), rng.normal(3.0, 1.0, n)
    s1, s2 = rng.uniform(0.3, 2.0, n), rng.uniform(0.3, 2.0, n)
    cuts = cut_point_between(w1, m1, s1, 1 - w1, m2, s2)
    assert cuts.shape == (n,)
    np.testing.assert_array_equal(cuts, cut_point_between(1 - w1, m2, s2, w1, m1, s1))  # order-free
    found = 0
    for i in range(n):
        lo_i, hi_i = sorted((m1[i], m2[i]))
        lower_first = m1[i] <= m2[i]
        params = (w1[i], m1[i], s1[i], 1 - w1[i], m2[i], s2[i]) if lower_first else \
                 (1 - w1[i], m2[i], s2[i], w1[i], m1[i], s1[i])

        def difference(t, p=params):
            a, b = equal_log_densities(*p, t)
            return a - b

        # Reference: scipy.optimize.brentq on the scipy log-density difference.
        if difference(lo_i) > 0 > difference(hi_i):
            expected = optimize.brentq(difference, lo_i, hi_i, xtol=1e-13, rtol=1e-14)
            assert cuts[i] == pytest.approx(expected, abs=1e-9)
            found += 1
        else:
            assert np.isnan(cuts[i])
    assert 40 < found < n  # both outcomes are exercised


def test_mixture_cut_points_use_neighbouring_components():
    mix = Mixture([0.3, 0.4, 0.3], [0.0, 6.0, 12.0], [1.0, 2.0, 1.0])
    expected = [cut_point_between(0.3, 0.0, 1.0, 0.4, 6.0, 2.0),
                cut_point_between(0.4, 6.0, 2.0, 0.3, 12.0, 1.0)]
    np.testing.assert_array_equal(mix.cut_points(), expected)
    assert Mixture(1.0, 0.0, 1.0).cut_points().shape == (0,)


# ---------------------------------------------------------------------- modes
@pytest.mark.parametrize(("start", "sd"), [(1.0, 0.7), (0.0, 1.0)])
@pytest.mark.parametrize(("separation", "n_modes"),
                         [(1.9, 1), (1.99, 1), (2.01, 2), (2.1, 2), (3.0, 2)])
def test_modes_equal_components_bimodal_beyond_two_sds(separation, n_modes, start, sd):
    # Schilling, Watkins & Watkins (2002), The American Statistician 56:223-229:
    # equal weights and sds are bimodal exactly when |m1 - m2| > 2 sd.
    mix = Mixture([0.5, 0.5], [start, start + separation * sd], [sd, sd])
    modes = mix.modes()
    assert modes.size == n_modes
    centre = start + 0.5 * separation * sd
    if n_modes == 1:
        assert modes[0] == pytest.approx(centre, abs=1e-9)
    else:
        # Stationary points of the equal mixture solve u = a tanh(a u), a = separation / 2,
        # u in sd units from the centre (derived from the density; common practice).
        a = separation / 2
        u = optimize.brentq(lambda t: t - a * np.tanh(a * t), 1e-6, 2 * a)
        np.testing.assert_allclose(modes, [centre - u * sd, centre + u * sd], rtol=1e-10)


def test_modes_of_trimodal_mixture_match_fine_grid_maxima():
    mix = Mixture([0.3, 0.4, 0.3], [0.0, 6.0, 11.0], [1.0, 1.2, 0.8])
    modes = mix.modes()
    assert modes.size == 3 and np.all(np.diff(modes) > 0)
    # Reference: scipy.signal.argrelmax of the scipy-built density on a grid of step 1e-4.
    grid = np.arange(-5.0, 16.0, 1e-4)
    maxima = grid[signal.argrelmax(reference_pdf(mix, grid))[0]]
    np.testing.assert_allclose(modes, maxima, atol=2e-4)
    # The derivative of the scipy density vanishes there (central difference).
    h = 1e-6
    slope = (reference_pdf(mix, modes + h) - reference_pdf(mix, modes - h)) / (2 * h)
    np.testing.assert_allclose(slope, 0.0, atol=1e-8)


@pytest.mark.parametrize("seed", range(6))
def test_modes_of_random_mixtures_match_fine_grid_maxima(seed):
    # Reference: scipy.signal.argrelmax of the scipy-built density on a grid much finer than any sd;
    # the mixtures include close pairs and narrow components sitting on wide ones.
    rng = np.random.default_rng(900 + seed)
    k = 4
    mix = Mixture(rng.dirichlet(np.full(k, 1.5)), rng.uniform(0.0, 8.0, k),
                  rng.uniform(0.08, 2.5, k))
    lo, hi = mix.means.min() - 1.0, mix.means.max() + 1.0
    grid = np.linspace(lo, hi, 100_001)
    maxima = grid[signal.argrelmax(reference_pdf(mix, grid))[0]]
    np.testing.assert_allclose(mix.modes(), maxima, atol=2 * (grid[1] - grid[0]))


def test_modes_single_component_is_its_mean_and_extreme_scale():
    assert Mixture(1.0, 42.0, 3.0).modes() == pytest.approx([42.0], abs=1e-10)
    # Same shape as a 3-sd-apart equal pair, at scale 1e-6 around 1e6.
    tiny = Mixture([0.5, 0.5], [1e6, 1e6 + 3e-6], [1e-6, 1e-6]).modes()
    unit = Mixture([0.5, 0.5], [0.0, 3.0], [1.0, 1.0]).modes()
    np.testing.assert_allclose((tiny - 1e6) / 1e-6, unit, atol=1e-3)
    # Widely different scales: a narrow and a very wide component far apart.
    wide = Mixture([0.5, 0.5], [-1e6, 1e6], [1e-6, 1e6]).modes()
    np.testing.assert_allclose(wide, [-1e6, 1e6], rtol=1e-9)


def test_pickle_keeps_every_bit_of_the_weights():
    # Models fitted in worker processes come back pickled; dividing normalised
    # weights by their sum again can move their last bit (floating-point
    # rounding, common practice), so the round trip must not renormalise.
    rng = np.random.default_rng(7)
    for _ in range(200):
        k = int(rng.integers(2, 9))
        mixture = Mixture(rng.dirichlet(np.ones(k)), rng.normal(size=k), rng.uniform(0.1, 2.0, k))
        again = pickle.loads(pickle.dumps(mixture))
        assert again.weights.tobytes() == mixture.weights.tobytes()
        assert again == mixture
        assert not again.weights.flags.writeable


@pytest.mark.parametrize("weights, means, sds, missing", [
    ([0.08, 0.92], [0.0, 1.5], [0.26, 2.0], {0}),                   # narrow light one on a wide one's shoulder
    ([0.45, 0.10, 0.45], [0.0, 1.0, 2.0], [1.0, 2.5, 1.0], {0, 1}),   # a wide light middle one, under both
    ([0.5, 0.5], [0.0, 3.0], [1.0, 1.0], set()),                    # two clear groups: a cut point
])
def test_cut_point_notes_name_the_pairs_without_one_and_which_side_wins(weights, means, sds, missing):
    # Reference: the weighted densities evaluated with scipy.stats.norm on a grid
    # between the two means; which of the two is larger there throughout.
    mix = Mixture(np.array(weights), np.array(means), np.array(sds))
    notes = mix.cut_point_notes()
    assert {j for j in range(mix.k - 1) if np.isnan(mix.cut_points()[j])} == missing
    assert len(notes) == len(missing)
    for note, j in zip(notes, sorted(missing)):
        grid = np.linspace(means[j], means[j + 1], 401)
        lower = weights[j] * stats.norm.pdf(grid, means[j], sds[j])
        upper = weights[j + 1] * stats.norm.pdf(grid, means[j + 1], sds[j + 1])
        more, less = (j + 1, j + 2) if np.all(lower > upper) else (j + 2, j + 1)
        assert np.all(lower > upper) or np.all(upper > lower)
        assert note.startswith(f"Components {j + 1} and {j + 2} do not cross between their means")
        assert note.endswith(f"more likely from component {more} than from component {less}.")
