"""The mixture log-likelihood's gradient and Hessian in the unconstrained parameters.

Sources:
- numerical derivatives (scipy.differentiate.jacobian and .hessian,
  Richardson-extrapolated finite differences) of the log-likelihood written
  independently with scipy.stats.norm.logpdf and scipy.special.logsumexp;
- the expected counts sum to the total count (common practice: the
  responsibilities of each value sum to one).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.differentiate import hessian as numerical_hessian
from scipy.differentiate import jacobian as numerical_jacobian
from scipy.special import logsumexp
from scipy.stats import norm

from clusterdesk.engine.derivatives import TrialPoints, join_parameters, loglik_derivatives


def reference_loglik(theta, x, c, k, shared):
    """Mixture log-likelihood of unconstrained parameters (weights' log-ratios to the last, means, log sds).

    Vectorised for scipy.differentiate: theta has shape (p, ...).
    """
    theta = np.asarray(theta, dtype=float)
    flat = theta.reshape(theta.shape[0], -1)                          # (p, N)
    logw = np.vstack([flat[:k - 1], np.zeros((1, flat.shape[1]))])
    logw = logw - logsumexp(logw, axis=0)                             # (k, N)
    mu = flat[k - 1:2 * k - 1]
    sd = np.exp(np.repeat(flat[2 * k - 1:2 * k], k, axis=0) if shared else flat[2 * k - 1:])
    dens = logw[:, :, None] + norm.logpdf(x, mu[:, :, None], sd[:, :, None])   # (k, N, m)
    out = logsumexp(dens, axis=0) @ c
    return out.reshape(theta.shape[1:])


@pytest.mark.parametrize("k,shared", [(1, False), (2, False), (3, False), (2, True), (3, True)])
def test_derivatives_match_numerical_differentiation(k, shared):
    rng = np.random.default_rng(40 + k)
    x = np.sort(rng.normal(size=60) * 1.5)
    c = rng.integers(1, 5, size=60).astype(float)
    w = rng.dirichlet(np.full(k, 3.0))
    mu = np.sort(rng.normal(size=k))
    sd = np.full(k, 0.9) if shared else rng.uniform(0.6, 1.4, size=k)
    loglik, grad, hess, nk = loglik_derivatives(x, c, w, mu, sd, shared)
    theta = join_parameters(w[None], mu[None], sd[None], shared)[0]
    assert loglik == pytest.approx(float(reference_loglik(theta[:, None], x, c, k, shared)[0]), rel=1e-12)
    ref_grad = numerical_jacobian(lambda t: reference_loglik(t, x, c, k, shared), theta).df
    ref_hess = numerical_hessian(lambda t: reference_loglik(t, x, c, k, shared), theta).ddf
    np.testing.assert_allclose(grad, ref_grad, rtol=1e-6, atol=1e-6 * np.abs(ref_grad).max())
    np.testing.assert_allclose(hess, ref_hess, rtol=1e-5, atol=1e-5 * np.abs(ref_hess).max())
    assert nk.sum() == pytest.approx(c.sum(), rel=1e-12)


def test_trial_points_side_by_side_equal_one_by_one():
    # Several parameter sets evaluated together give each set's own numbers
    # (the reference is loglik_derivatives on one set at a time, checked above).
    rng = np.random.default_rng(3)
    x = np.sort(rng.normal(size=200))
    c = rng.integers(1, 4, size=200).astype(float)
    w = rng.dirichlet(np.ones(3), size=4)
    mu = np.sort(rng.normal(size=(4, 3)), axis=1)
    sd = rng.uniform(0.5, 1.5, size=(4, 3))
    points = TrialPoints(x, c, w, mu, sd, shared=False)
    rows = np.array([0, 2, 3])
    grad, hess = points.derivatives(rows)
    for i, r in enumerate(rows):
        loglik, g, h, nk = loglik_derivatives(x, c, w[r], mu[r], sd[r], False)
        assert points.loglik[r] == pytest.approx(loglik, rel=1e-13)
        np.testing.assert_allclose(points.nk[r], nk, rtol=1e-12)
        np.testing.assert_allclose(grad[i], g, rtol=1e-9, atol=1e-9 * np.abs(g).max())
        np.testing.assert_allclose(hess[i], h, rtol=1e-9, atol=1e-9 * np.abs(h).max())
