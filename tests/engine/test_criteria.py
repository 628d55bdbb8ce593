"""Tests of the model criteria against their published formulas and scikit-learn."""

from __future__ import annotations

import math

import numpy as np
import pytest
from sklearn.mixture import GaussianMixture

from clusterdesk.engine.criteria import (
    aic,
    bic,
    bic_weights,
    describe_gap,
    evidence_wording,
    icl,
    n_parameters,
    posterior_entropy,
)
from clusterdesk.engine.mixture import Mixture
from clusterdesk.errors import InputError


def two_group_values(seed: int = 5, n: int = 400) -> np.ndarray:
    """Synthetic values: two overlapping normal groups."""
    rng = np.random.default_rng(seed)
    first = int(0.6 * n)
    return np.concatenate([rng.normal(10.0, 1.0, first), rng.normal(14.0, 1.5, n - first)])


# ------------------------------------------------------------ parameter counts
@pytest.mark.parametrize("k", [1, 2, 3, 6, np.int64(4)])
def test_parameter_counts(k):
    # k means + k sds + (k - 1) free weights; k means + 1 sd + (k - 1) weights (common practice;
    # the same counts scikit-learn uses for 1-D "full" and "tied" covariances).
    assert n_parameters(k, "separate") == 3 * k - 1
    assert n_parameters(k, "shared") == 2 * k
    assert isinstance(n_parameters(k, "shared"), int)


@pytest.mark.parametrize(("k", "widths", "message"), [
    (0, "separate", "at least 1"), (2.5, "separate", "whole number"),
    (True, "shared", "whole number"),
    (2, "both", "Unknown widths"), (2, "tied", "Unknown widths"),
])
def test_parameter_count_rejects_bad_input(k, widths, message):
    with pytest.raises(InputError, match=message):
        n_parameters(k, widths)


# ---------------------------------------------------------------- BIC and AIC
def test_bic_and_aic_direct_formulas():
    # Schwarz (1978): BIC = -2 logL + p ln n.  Akaike (1974): AIC = -2 logL + 2 p.
    assert bic(-123.4, 5, 200) == pytest.approx(246.8 + 5 * math.log(200), rel=1e-15)
    assert aic(-123.4, 5) == pytest.approx(246.8 + 10.0, rel=1e-15)
    # n may be a sum of counts, not a whole number
    assert bic(-10.0, 2, 37.5) == pytest.approx(20.0 + 2 * math.log(37.5), rel=1e-15)
    assert bic(-math.inf, 2, 10) == math.inf


@pytest.mark.parametrize(("call", "message"), [
    (lambda: bic(-1.0, 2, 0), "observations"), (lambda: bic(math.nan, 2, 10), "log-likelihood"),
    (lambda: aic(-1.0, -1), "parameters"), (lambda: aic(-1.0, 1.5), "parameters"),
])
def test_bic_and_aic_reject_bad_input(call, message):
    with pytest.raises(InputError, match=message):
        call()


@pytest.mark.parametrize(("covariance_type", "widths"), [("full", "separate"), ("tied", "shared")])
@pytest.mark.parametrize("k", [1, 2, 3])
def test_bic_and_aic_match_scikit_learn(covariance_type, widths, k):
    # Reference: sklearn.mixture.GaussianMixture.bic()/aic() of a fitted 1-D model (test-only).
    # For 1-D data sklearn counts 3k-1 parameters with "full" and 2k with "tied" covariances.
    x = two_group_values()
    fitted = GaussianMixture(n_components=k, covariance_type=covariance_type, random_state=0,
                             n_init=2).fit(x[:, None])
    sds = np.sqrt(np.broadcast_to(fitted.covariances_.ravel(), (k,)))
    mixture = Mixture(fitted.weights_, fitted.means_.ravel(), sds)
    loglik = mixture.loglik(x)
    assert loglik == pytest.approx(fitted.score(x[:, None]) * x.size, rel=1e-10)
    p = n_parameters(k, widths)
    assert bic(loglik, p, x.size) == pytest.approx(fitted.bic(x[:, None]), rel=1e-10)
    assert aic(loglik, p) == pytest.approx(fitted.aic(x[:, None]), rel=1e-10)


# ------------------------------------------------------------ entropy and ICL
def direct_entropy(r, counts=None):
    terms = np.where(r > 0, -r * np.log(np.where(r > 0, r, 1.0)), 0.0)
    per_row = terms.sum(axis=1)
    return float(per_row.sum() if counts is None else (counts * per_row).sum())


def test_icl_is_bic_plus_twice_entropy():
    # Biernacki, Celeux & Govaert (2000): ICL = BIC + 2 E, E = -sum_i sum_j r_ij ln r_ij.
    x = two_group_values(seed=8, n=300)
    mixture = Mixture([0.6, 0.4], [10.0, 14.0], [1.0, 1.5])
    r = mixture.posterior(x)
    entropy = posterior_entropy(r)
    assert entropy == pytest.approx(direct_entropy(r), rel=1e-12)
    value = bic(mixture.loglik(x), n_parameters(2, "separate"), x.size)
    assert icl(value, entropy) == pytest.approx(value + 2 * direct_entropy(r), rel=1e-14)
    assert icl(value, entropy) > value  # overlapping groups are penalised


def test_posterior_entropy_with_counts_and_certain_rows():
    r = np.array([[1.0, 0.0], [0.5, 0.5], [0.2, 0.8]])
    counts = np.array([3.0, 2.0, 1.0])
    # Weighted rows equal repeated rows; 0 ln 0 = 0 (common practice).
    repeated = np.repeat(r, counts.astype(int), axis=0)
    assert posterior_entropy(r, counts) == pytest.approx(direct_entropy(repeated), rel=1e-14)
    by_hand = 2 * math.log(2) + direct_entropy(r[2:])  # rows 1 and 3; row 0 is certain
    assert posterior_entropy(r, counts) == pytest.approx(by_hand, rel=1e-14)
    assert posterior_entropy(np.eye(3)) == 0.0


@pytest.mark.parametrize(("posterior", "counts", "message"), [
    ([0.5, 0.5], None, "shape"), ([[0.5, 0.4]], None, "add up to 1"),
    ([[1.5, -0.5]], None, "between 0 and 1"),
    ([[0.5, 0.5]], [1.0, 2.0], "one entry per row"), ([[0.5, 0.5]], [-1.0], "not negative"),
])
def test_posterior_entropy_rejects_bad_input(posterior, counts, message):
    with pytest.raises(InputError, match=message):
        posterior_entropy(posterior, counts)


# ------------------------------------------------------------------- evidence
@pytest.mark.parametrize(("delta", "words"), [
    (0.0, "weak"), (1.999, "weak"), (2.0, "weak"), (2.001, "positive"), (6.0, "positive"),
    (6.001, "strong"), (10.0, "strong"), (10.001, "very strong"), (math.inf, "very strong"),
])
def test_evidence_bands(delta, words):
    # Kass & Raftery (1995), JASA 90:773-795, bands on 2 ln B: 0-2, 2-6, 6-10, >10.
    assert evidence_wording(delta) == words


@pytest.mark.parametrize("delta", [-0.1, math.nan])
def test_evidence_rejects_negative_or_missing_gap(delta):
    with pytest.raises(InputError, match="zero or positive"):
        evidence_wording(delta)


def test_describe_gap_sentence():
    expected = "BIC favours the best model over the runner-up by 4.3: positive evidence."
    assert describe_gap(4.3) == expected
    assert describe_gap(12.04).endswith("by 12.0: very strong evidence.")
    assert "very strong" in describe_gap(math.inf)
    with pytest.raises(InputError):
        describe_gap(-1.0)


# --------------------------------------------------------------- BIC weights
def test_bic_weights_direct_and_robust():
    bics = np.array([1012.0, 1010.0, 1016.5, 1030.0])
    direct = np.exp(-0.5 * (bics - bics.min()))
    # exp(-delta/2) normalised (common practice: BIC gaps approximate -2 ln Bayes factors)
    direct /= direct.sum()
    np.testing.assert_allclose(bic_weights(bics), direct, rtol=1e-14)
    np.testing.assert_allclose(bic_weights(bics + 1e7), direct, rtol=1e-9)  # no overflow far from 0
    with_failed = bic_weights([1012.0, np.inf, 1010.0])
    expected = np.array([direct[0], 0.0, direct[1]]) / (direct[0] + direct[1])
    np.testing.assert_allclose(with_failed, expected, rtol=1e-14)
    np.testing.assert_array_equal(bic_weights([5.0, 5.0]), [0.5, 0.5])


@pytest.mark.parametrize(("bics", "message"), [
    ([], "non-empty"), ([[1.0, 2.0]], "flat"), ([np.inf, np.inf], "finite"),
    ([1.0, np.nan], "numbers"), ([1.0, -np.inf], "infinity"),
])
def test_bic_weights_reject_bad_input(bics, message):
    with pytest.raises(InputError, match=message):
        bic_weights(bics)
