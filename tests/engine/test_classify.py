"""Classification summary and expected misclassification rates.

References named beside each check:
- scipy.integrate.quad of the component density over the regions where
  another component wins (regions from Mixture.classify and scipy.optimize.brentq);
- the error of two equal-variance, equal-weight normal classes, Phi(-d / (2 s))
  (common practice);
- Monte Carlo draws with their component labels, binomial tolerance (scipy.stats.binom).
All mixtures and samples are synthetic.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, optimize, stats

import clusterdesk
from clusterdesk.engine.classify import (classification_summary, decision_regions,
                                         misclassification_rates)
from clusterdesk.engine.mixture import Mixture

MIXTURES = {
    "two_equal": Mixture([0.5, 0.5], [0.0, 3.0], [1.0, 1.0]),
    "nested": Mixture([0.6, 0.4], [0.0, 0.5], [1.0, 3.0]),            # wide one wins both tails
    "three": Mixture([0.5, 0.3, 0.2], [0.0, 1.0, 6.0], [1.0, 3.0, 0.5]),
    "four_shared": Mixture([0.25, 0.25, 0.3, 0.2], [0.0, 2.0, 4.5, 9.0], [1.2, 1.2, 1.2, 1.2]),
    "lopsided": Mixture([0.97, 0.03], [10.0, 14.0], [1.0, 0.4]),
}


def _boundaries_by_scanning(mixture: Mixture) -> np.ndarray:
    """Where Mixture.classify changes, found on a fine grid and refined with brentq."""
    lo = float(np.min(mixture.means - 12 * mixture.sds))
    hi = float(np.max(mixture.means + 12 * mixture.sds))
    grid = np.linspace(lo, hi, 200_001)
    labels = mixture.classify(grid)
    edges = []
    for i in np.flatnonzero(labels[1:] != labels[:-1]):
        a, b = labels[i], labels[i + 1]
        f = lambda x: (np.log(mixture.weights[a]) + stats.norm.logpdf(x, mixture.means[a], mixture.sds[a])
                       - np.log(mixture.weights[b]) - stats.norm.logpdf(x, mixture.means[b], mixture.sds[b]))
        edges.append(optimize.brentq(f, grid[i], grid[i + 1], xtol=1e-14))
    return np.array(edges)


def _inside(a: float, b: float) -> float:
    """A point inside the stretch (a, b); either end may be infinite."""
    if np.isfinite(a) and np.isfinite(b):
        return 0.5 * (a + b)
    if np.isfinite(b):
        return b - 1.0
    return a + 1.0 if np.isfinite(a) else 0.0


def _rate_by_quad(mixture: Mixture, j: int) -> float:
    """scipy.integrate.quad of phi_j over the stretches where classify says another component."""
    edges = np.concatenate([[-np.inf], _boundaries_by_scanning(mixture), [np.inf]])
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:]):
        if mixture.classify(np.array([_inside(a, b)]))[0] != j:
            total += integrate.quad(stats.norm.pdf, a, b, args=(mixture.means[j], mixture.sds[j]),
                                    epsabs=1e-13, epsrel=1e-11, limit=200)[0]
    return total


@pytest.mark.parametrize("name", sorted(MIXTURES))
def test_misclassification_matches_numerical_integration(name):
    # Reference: scipy.integrate.quad over regions found independently by scanning.
    mixture = MIXTURES[name]
    rates = misclassification_rates(mixture)
    expected = [_rate_by_quad(mixture, j) for j in range(mixture.k)]
    np.testing.assert_allclose(rates, expected, rtol=1e-7, atol=1e-12)


def test_decision_regions_match_the_scanned_boundaries():
    # Reference: label changes of Mixture.classify, refined with brentq.
    for mixture in MIXTURES.values():
        edges, winners = decision_regions(mixture)
        np.testing.assert_allclose(edges[1:-1], _boundaries_by_scanning(mixture), rtol=1e-9, atol=1e-9)
        assert np.all(winners[1:] != winners[:-1])


def test_two_equal_classes_have_the_textbook_error():
    # Phi(-d / (2 s)) for two equal-weight, equal-sd normals d apart (common practice).
    mixture = MIXTURES["two_equal"]
    np.testing.assert_allclose(misclassification_rates(mixture), stats.norm.cdf(-1.5), rtol=1e-12)
    assert misclassification_rates(Mixture(1.0, 0.0, 1.0)).tolist() == [0.0]


def test_misclassification_agrees_with_monte_carlo():
    # Draws with known labels: the share of each component's draws assigned
    # elsewhere must be a plausible Binomial(n_j, rate_j) count (scipy.stats.binom).
    mixture = MIXTURES["three"]
    values, labels = mixture.sample(np.random.default_rng(4), 200_000, return_labels=True)
    wrong = mixture.classify(values) != labels
    rates = misclassification_rates(mixture)
    for j in range(mixture.k):
        trials = int(np.sum(labels == j))
        count = int(np.sum(wrong[labels == j]))
        assert stats.binom.ppf(0.0005, trials, rates[j]) <= count <= stats.binom.isf(0.0005, trials, rates[j])


def test_summary_on_rows_follows_the_posteriors():
    # Reference: Mixture.posterior row by row, and direct counting.
    mixture = MIXTURES["three"]
    rng = np.random.default_rng(8)
    values = rng.permutation(mixture.sample(rng, 500))
    counts = rng.integers(1, 4, size=values.size)
    summary = classification_summary(mixture, values, counts)
    posterior = mixture.posterior(values)
    np.testing.assert_array_equal(summary.posterior, posterior)
    np.testing.assert_array_equal(summary.assigned, np.argmax(posterior, axis=1))
    confident = posterior.max(axis=1) >= 0.9
    assert summary.confident_share == pytest.approx(counts[confident].sum() / counts.sum())
    np.testing.assert_array_equal(summary.assigned_counts,
                                  [counts[summary.assigned == j].sum() for j in range(3)])
    for j in range(3):
        mine = summary.assigned == j
        assert summary.confident_share_by_component[j] == pytest.approx(
            counts[mine & confident].sum() / counts[mine].sum())
    assert summary.overall_misclassification == pytest.approx(
        float(mixture.weights @ summary.misclassification))
    with pytest.raises(ValueError):
        summary.posterior[0, 0] = 1.0


@pytest.mark.parametrize("values, counts, threshold", [
    ([1.0, np.nan], None, 0.9), ([], None, 0.9), ([1.0, 2.0], [1, 2, 3], 0.9),
    ([1.0, 2.0], [1, -1], 0.9), ([1.0, 2.0], None, 0.0), ([[1.0, 2.0]], None, 0.9)])
def test_bad_input_raises_input_error(values, counts, threshold):
    with pytest.raises(clusterdesk.InputError):
        classification_summary(MIXTURES["two_equal"], values, counts, threshold=threshold)


def test_needs_a_mixture():
    with pytest.raises(clusterdesk.InputError):
        classification_summary("not a mixture", [1.0, 2.0])
