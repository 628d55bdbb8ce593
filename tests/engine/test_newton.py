"""The trust-region step of the Newton endgame.

Sources:
- The exact trust-region step maximises the quadratic model
  ``g's - s'As/2`` over ``|s| <= radius``; it is characterised by
  ``(A + lam I) s = g``, ``A + lam I`` positive semidefinite, ``lam >= 0`` and
  ``lam (radius - |s|) = 0`` (Moré & Sorensen 1983; Nocedal & Wright 2006,
  Theorem 4.1).
- scipy.optimize.minimize (SLSQP) on the same model with the ball as a
  constraint, from several starts, as an independent optimiser.
- numpy.linalg.solve for the plain Newton step when it fits in the region.
- Restarts walked side by side end where each ends when walked alone.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import minimize

from clusterdesk.engine.newton import newton_polish, newton_polish_batch, trust_region_step


def model_value(a, g, s):
    return float(g @ s - 0.5 * s @ a @ s)


def step_in_original_basis(a, g, radius):
    eigval, eigvec = np.linalg.eigh(a)
    floor = 1e-12 * max(1.0, np.abs(eigval).max())
    return eigvec @ trust_region_step(eigval, eigvec.T @ g, radius, floor)


def random_problem(seed, p, negative):
    rng = np.random.default_rng(seed)
    q, _ = np.linalg.qr(rng.normal(size=(p, p)))
    eig = rng.uniform(0.1, 10.0, size=p)
    eig[:negative] *= -1.0
    return (q * eig) @ q.T, rng.normal(size=p)


def best_by_slsqp(a, g, radius, seed):
    rng = np.random.default_rng(seed)
    best = -np.inf
    for _ in range(8):
        start = rng.normal(size=g.size)
        start *= 0.5 * radius / np.linalg.norm(start)
        out = minimize(lambda s: -model_value(a, g, s), start, method="SLSQP",
                       constraints=[{"type": "ineq", "fun": lambda s: radius**2 - s @ s}],
                       options={"ftol": 1e-12, "maxiter": 500})
        if radius**2 - out.x @ out.x >= -1e-9:
            best = max(best, model_value(a, g, out.x))
    return best


@pytest.mark.parametrize("seed,negative,radius", [(1, 0, 0.3), (2, 1, 0.5), (3, 2, 2.0), (4, 0, 0.05)])
def test_step_maximises_the_model_within_the_region(seed, negative, radius):
    a, g = random_problem(seed, 6, negative)
    s = step_in_original_basis(a, g, radius)
    assert np.linalg.norm(s) <= radius * (1.0 + 1e-9)
    # Independent optimiser: our step is at least as good (the solver stops
    # near the boundary within its own tolerance; 1e-3 of the radius there).
    assert model_value(a, g, s) >= best_by_slsqp(a, g, radius, seed) - 1e-6
    # Optimality conditions: s = (A + lam I)^-1 g with lam >= 0, A + lam I PSD.
    lam = float(np.median((g - a @ s) / s))
    np.testing.assert_allclose((a + lam * np.eye(6)) @ s, g, rtol=0, atol=1e-2 * np.linalg.norm(g))
    assert lam >= -1e-9
    assert np.linalg.eigvalsh(a + lam * np.eye(6)).min() >= -1e-6


def test_step_is_the_newton_step_when_it_fits():
    a, g = random_problem(5, 5, 0)
    newton = np.linalg.solve(a, g)
    s = step_in_original_basis(a, g, 2.0 * np.linalg.norm(newton))
    np.testing.assert_allclose(s, newton, rtol=1e-10)


def test_saddle_point_is_left_along_negative_curvature():
    # Zero gradient at a saddle: the step goes to the boundary along the
    # direction of negative curvature, where the model rises.
    a = np.diag([-1.0, 2.0, 3.0])
    s = step_in_original_basis(a, np.zeros(3), 0.5)
    assert np.linalg.norm(s) == pytest.approx(0.5)
    assert model_value(a, np.zeros(3), s) == pytest.approx(0.5 * 0.25)


@pytest.mark.parametrize("shared", [False, True])
def test_walks_side_by_side_end_where_single_walks_end(shared):
    # Several restarts walked together must each end where it ends alone:
    # same maximum, same convergence (common practice: batching is an
    # implementation detail, not a change of the algorithm).
    rng = np.random.default_rng(7)
    x = np.sort(np.concatenate([rng.normal(-2.0, 0.7, 300), rng.normal(1.5, 1.0, 500)]))
    c = np.ones_like(x)
    k = 3
    starts_w = rng.dirichlet(np.full(k, 2.0), size=4)
    starts_mu = np.sort(rng.normal(0.0, 1.5, size=(4, k)), axis=1)
    starts_var = rng.uniform(0.5, 1.5, size=(4, k))
    options = dict(shared=shared, var_floor=1e-4, tol_abs=1e-10 * x.size, max_steps=300)
    together = newton_polish_batch(x, c, starts_w, starts_mu, starts_var, **options)
    for r, end in enumerate(together):
        alone = newton_polish(x, c, starts_w[r], starts_mu[r], starts_var[r], **options)
        assert end.converged and alone.converged
        assert end.loglik == pytest.approx(alone.loglik, rel=1e-12, abs=1e-9)
        np.testing.assert_allclose(end.means, alone.means, atol=1e-6)
        assert end.steps > 0
