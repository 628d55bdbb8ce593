"""The interval log-likelihood's gradient and Hessian in the unconstrained parameters.

Sources:
- numerical derivatives (scipy.differentiate.jacobian and .hessian,
  Richardson-extrapolated finite differences) of the interval log-likelihood
  written independently with scipy.stats.norm.cdf and scipy.special.logsumexp;
- as the intervals shrink, the interval log-likelihood of a value minus
  log(width) and its derivatives tend to those of the density (calculus: the
  probability of [x - h/2, x + h/2) is h f(x) + O(h^3)), compared with the
  exact-value derivatives, themselves checked against scipy in
  test_derivatives.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.differentiate import hessian as numerical_hessian
from scipy.differentiate import jacobian as numerical_jacobian
from scipy.special import logsumexp
from scipy.stats import norm

from clusterdesk.engine import interval_derivatives
from clusterdesk.engine.derivatives import join_parameters, loglik_derivatives
from clusterdesk.engine.interval_derivatives import IntervalTrialPoints, interval_loglik_derivatives


def reference_interval_loglik(theta, lower, upper, c, k, shared):
    """Interval log-likelihood of unconstrained parameters, vectorised for scipy.differentiate (theta (p, ...))."""
    theta = np.asarray(theta, dtype=float)
    flat = theta.reshape(theta.shape[0], -1)                          # (p, N)
    logw = np.vstack([flat[:k - 1], np.zeros((1, flat.shape[1]))])
    logw = logw - logsumexp(logw, axis=0)                             # (k, N)
    mu = flat[k - 1:2 * k - 1][:, :, None]
    sd = np.exp(np.repeat(flat[2 * k - 1:2 * k], k, axis=0) if shared else flat[2 * k - 1:])[:, :, None]
    mass = norm.cdf(upper, mu, sd) - norm.cdf(lower, mu, sd)          # (k, N, m)
    with np.errstate(divide="ignore"):  # a mass that underflows is a log of minus infinity
        out = logsumexp(logw[:, :, None] + np.log(mass), axis=0) @ c
    return out.reshape(theta.shape[1:])


def _problem(seed, k, shared, m=50):
    rng = np.random.default_rng(seed)
    lower = np.sort(rng.normal(size=m) * 1.5)
    upper = lower + rng.uniform(0.05, 0.8, size=m)
    lower[0], upper[-1] = -np.inf, np.inf          # a reading below a limit and one above
    c = rng.integers(1, 5, size=m).astype(float)
    w = rng.dirichlet(np.full(k, 3.0))
    mu = np.sort(rng.normal(size=k))
    sd = np.full(k, 0.9) if shared else rng.uniform(0.6, 1.4, size=k)
    return lower, upper, c, w, mu, sd


@pytest.mark.parametrize("k,shared", [(1, False), (2, False), (3, False), (2, True), (3, True)])
def test_interval_derivatives_match_numerical_differentiation(k, shared):
    lower, upper, c, w, mu, sd = _problem(70 + k, k, shared)
    loglik, grad, hess, nk = interval_loglik_derivatives(lower, upper, c, w, mu, sd, shared)
    theta = join_parameters(w[None], mu[None], sd[None], shared)[0]
    f = lambda t: reference_interval_loglik(t, lower, upper, c, k, shared)  # noqa: E731
    assert loglik == pytest.approx(float(f(theta[:, None])[0]), rel=1e-12)
    ref_grad = numerical_jacobian(f, theta).df
    ref_hess = numerical_hessian(f, theta).ddf
    np.testing.assert_allclose(grad, ref_grad, rtol=1e-6, atol=1e-6 * np.abs(ref_grad).max())
    np.testing.assert_allclose(hess, ref_hess, rtol=1e-5, atol=1e-5 * np.abs(ref_hess).max())
    assert nk.sum() == pytest.approx(c.sum(), rel=1e-12)


def test_narrow_intervals_tend_to_the_exact_value_derivatives():
    rng = np.random.default_rng(5)
    x = np.sort(rng.normal(size=80))
    c = np.ones_like(x)
    w, mu, sd = np.array([0.4, 0.6]), np.array([-0.5, 0.8]), np.array([0.7, 1.1])
    exact = loglik_derivatives(x, c, w, mu, sd, False)
    gaps = []
    for h in (1e-1, 1e-2):
        ll, grad, hess, _ = interval_loglik_derivatives(x - h / 2, x + h / 2, c, w, mu, sd, False)
        gaps.append((abs(ll - x.size * np.log(h) - exact[0]), np.abs(grad - exact[1]).max(),
                     np.abs(hess - exact[2]).max()))
    for wide, narrow in zip(*gaps):
        assert narrow < wide / 50           # O(h^2): a tenth of the width, a hundredth of the gap
    assert gaps[1][1] < 1e-3 and gaps[1][2] < 1e-2


def test_far_tail_intervals_keep_finite_derivatives():
    # Intervals ten to forty standard deviations out: the ratios phi(end) / P
    # are formed in log space, so nothing underflows to 0/0.
    lower = np.array([10.0, 20.0, 39.0, -3.0])
    upper = np.array([10.5, 21.0, 40.0, 3.0])
    c = np.array([1.0, 1.0, 1.0, 50.0])
    loglik, grad, hess, nk = interval_loglik_derivatives(lower, upper, c, np.array([1.0]), np.array([0.0]),
                                                         np.array([1.0]), False)
    assert np.isfinite(loglik) and np.isfinite(grad).all() and np.isfinite(hess).all()
    # far out, d log P / d mu is about the end's z (the inverse Mills ratio; common practice)
    assert grad[0] > 39.0


def test_trial_points_side_by_side_and_in_chunks_equal_one_by_one(monkeypatch):
    rng = np.random.default_rng(3)
    lower, upper, c, _, _, _ = _problem(3, 3, False, m=200)
    w = rng.dirichlet(np.ones(3), size=4)
    mu = np.sort(rng.normal(size=(4, 3)), axis=1)
    sd = rng.uniform(0.5, 1.5, size=(4, 3))
    rows = np.array([0, 2, 3])
    together = IntervalTrialPoints(lower, upper, c, w, mu, sd, False)
    monkeypatch.setattr(interval_derivatives, "_BATCH_ELEMENTS", 1)
    monkeypatch.setattr(interval_derivatives, "_CHUNK", 64)
    chunked = IntervalTrialPoints(lower, upper, c, w, mu, sd, False)
    for points in (together, chunked):
        grad, hess = points.derivatives(rows)
        for i, r in enumerate(rows):
            loglik, g, h, nk = interval_loglik_derivatives(lower, upper, c, w[r], mu[r], sd[r], False)
            assert points.loglik[r] == pytest.approx(loglik, rel=1e-13)
            np.testing.assert_allclose(points.nk[r], nk, rtol=1e-12)
            np.testing.assert_allclose(grad[i], g, rtol=1e-9, atol=1e-9 * np.abs(g).max())
            np.testing.assert_allclose(hess[i], h, rtol=1e-9, atol=1e-9 * np.abs(h).max())


def test_fast_log_masses_match_scipy_cdf_differences():
    # Source: scipy.stats.norm, as in test_grouped's check of log_interval_mass:
    # an interval above the mean mirrored below it (the normal is symmetric),
    # then cdf differences, or logcdf where cdf itself underflows (so the
    # reference neither cancels nor underflows).
    from scipy import stats

    rng = np.random.default_rng(11)
    a = np.concatenate([rng.normal(scale=4.0, size=400), [-np.inf, -45.0, 39.0, 8.0, -0.01, -60.0]])
    b = np.concatenate([a[:400] + rng.uniform(1e-3, 2.0, size=400), [-50.0, -44.0, 40.0, np.inf, 0.01, -59.9]])
    reference = np.empty_like(a)
    for i, (lo, hi) in enumerate(zip(a, b)):
        if lo > 0:
            lo, hi = -hi, -lo
        if hi < -30:
            top = stats.norm.logcdf(hi)
            reference[i] = top + np.log1p(-np.exp(stats.norm.logcdf(lo) - top))
        else:
            reference[i] = np.log(stats.norm.cdf(hi) - stats.norm.cdf(lo))
    fast = interval_derivatives.log_masses(a[None, None], b[None, None])[0, 0]
    np.testing.assert_allclose(fast, reference, rtol=1e-9)
