"""Trust-region Newton steps on the mixture log-likelihood, for the endgame of a fit.

EM is reliable far from a maximum but crawls where the likelihood is flat
(overlapping or redundant components: its rate of convergence tends to one).
There, exact second derivatives are cheap in one dimension (``3k - 1``
parameters at most), so we finish with Newton steps safeguarded by a trust
region (Levenberg-Marquardt shift of the Hessian's spectrum; Nocedal & Wright
2006, Numerical Optimization, ch. 4), which also escape saddle points along
directions of positive curvature.

Convergence is certified, not guessed: at a point where the Hessian is
negative definite, the Newton decrement ``g' (-H)^-1 g / 2`` is the gain a
quadratic model still promises; we stop when it is below ``tol * n``.

Parameters are unconstrained: ``eta_j = ln(w_j / w_last)`` for the first
``k - 1`` weights, the means, and ``tau_j = ln(sd_j)`` (one ``tau`` for a
shared width). Their number equals the BIC parameter count.

All restarts of a model walk side by side (:func:`newton_polish_batch`):
each follows its own trust region and stops on its own, but the arithmetic
of one step is done for all of them at once. On a histogram of ~1,700 bins
the fixed cost of a step (eigen-decomposition, trust-region subproblem,
Hessian assembly: many numpy calls on 23-element arrays) is as large as the
work on the bins, and side by side it is paid once per step of the longest
walk instead of once per step of every walk.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["NewtonOutcome", "loglik_derivatives", "newton_polish", "newton_polish_batch",
           "trust_region_step"]

_HALF_LOG_2PI = 0.5 * float(np.log(2.0 * np.pi))
#: Values per chunk when one restart is evaluated on many values.
_CHUNK_ROWS = 1 << 16
#: Restarts times values evaluated side by side at most; beyond, restart by restart in chunks.
_BATCH_ELEMENTS = 1 << 17
# Trust-region radius (standard units of the unconstrained parameters).
_RADIUS_START = 1.0
_RADIUS_MAX = 4.0
# After a rejected step of length L the radius may grow back to this fraction
# of L only, and then by this factor per step that was accepted at the
# boundary with a good ratio. On flat, curved ridges the plain rule (double
# after a good step) re-tries the rejected length every third step; measured
# on the large-sample benchmark's histogram walks (k = 5..8, separate widths)
# this rule needs 7.5 % fewer steps and reaches the same or higher maxima.
_CEILING_AFTER_REJECTION = 0.5
_CEILING_GROWTH = 1.5


@dataclass(frozen=True)
class NewtonOutcome:
    """Result of :func:`newton_polish` for one restart."""

    weights: np.ndarray
    means: np.ndarray
    variances: np.ndarray
    loglik: float
    converged: bool
    steps: int
    nk: np.ndarray


def _split(theta, k, shared):
    """Weights, means and standard deviations, each shape (r, k), of parameter rows theta (r, p)."""
    w = np.zeros((theta.shape[0], k))
    w[:, :k - 1] = theta[:, :k - 1]
    w -= w.max(axis=1, keepdims=True)
    np.exp(w, out=w)
    w /= w.sum(axis=1, keepdims=True)
    mu = theta[:, k - 1:2 * k - 1]
    tau = theta[:, 2 * k - 1:]
    sd = np.exp(np.repeat(tau, k, axis=1) if shared else tau)
    return w, mu, sd


def _join(w, mu, sd, shared):
    """Parameter rows, shape (r, p), of weights, means and standard deviations (r, k)."""
    logw = np.log(w)
    eta = logw[:, :-1] - logw[:, -1:]
    tau = np.log(sd[:, :1]) if shared else np.log(sd)
    return np.concatenate([eta, mu, tau], axis=1)


def loglik_derivatives(x, c, w, mu, sd, shared, order=2):
    """Log-likelihood, gradient and Hessian in the unconstrained parameters.

    Parameters
    ----------
    x, c : ndarray, shape (n,)
        Values and counts.
    w, mu, sd : ndarray, shape (k,)
        Weights, means, standard deviations.
    shared : bool
        One standard deviation for all components (``sd`` all equal).
    order : {0, 1, 2}, default 2
        Highest derivative wanted.

    Returns
    -------
    loglik : float
    grad : ndarray, shape (p,) or None
    hess : ndarray, shape (p, p) or None
    nk : ndarray, shape (k,)
        Expected count in each component.
    """
    w, mu, sd = (np.asarray(a, dtype=float)[None, :] for a in (w, mu, sd))
    k = mu.shape[1]
    p = 3 * k - 1 if not shared else 2 * k
    loglik = 0.0
    nk = np.zeros((1, k))
    grad = np.zeros((1, p))
    outer = np.zeros((1, p, p))
    sums = np.zeros((1, 5, k))  # sum c r times: z, z^2, z^2 - 1, z (z^2 - 1), (z^2 - 1)^2
    # Chunks keep memory bounded and every numpy call short, so a worker
    # thread running this never holds the interpreter for long (the window's
    # event loop stays responsive).
    for start in range(0, x.size, _CHUNK_ROWS):
        xs, cs = x[start:start + _CHUNK_ROWS], c[start:start + _CHUNK_ROWS]
        part_ll, part_nk, z, resp = _value_terms(xs, cs, w, mu, sd)
        loglik += float(part_ll[0])
        nk += part_nk
        if order >= 1:
            part = _derivative_terms(cs, w, sd, shared, z, resp, part_nk, order)
            grad += part[0]
            if order == 2:
                outer += part[1]
                sums += part[2]
    if order == 0:
        return loglik, None, None, nk[0]
    if order == 1:
        return loglik, grad[0], None, nk[0]
    return loglik, grad[0], _hessian(outer, sums, w, sd, nk, c.sum(), shared)[0], nk[0]


def _hessian(outer, sums, w, sd, nk, n, shared):
    """Assemble the Hessians, shape (r, p, p), from the outer products of the scores and the per-component sums.

    ``H = sum_i c_i (sum_j r_ij (d2 log(w_j phi_ij) + g_ij g_ij') - s_i s_i')``
    where ``s_i`` is the score of value i and ``g_ij`` the score of its
    component j (Louis 1982, J. R. Statist. Soc. B 44:226-233, the observed
    information of incomplete data; from memory); only the block-diagonal part of the
    first term needs the per-component sums.

    Parameters
    ----------
    outer : ndarray, shape (r, p, p)
    sums : ndarray, shape (r, 5, k)
        Sums of ``c r`` times z, z^2, z^2 - 1, z (z^2 - 1), (z^2 - 1)^2 per component.
    w, sd, nk : ndarray, shape (r, k)
    n : float
        Total count.
    shared : bool
    """
    rows, p, _ = outer.shape
    k = w.shape[1]
    kk = k - 1
    diag = p + 1  # stride of a diagonal in a flattened matrix
    s_z, s_z2, s_z2m1, s_zz2m1, s_z2m1sq = (sums[:, i] for i in range(5))
    # With v = w[:k-1] and d = nk[:k-1] - n v, the weights block of the first
    # term is diag(d) - d v' - v d', and its cross blocks with a per-component
    # vector q (means: q = sum c r z / sd; widths: sum c r (z^2 - 1)) are
    # [diag(q[:k-1]) | 0] - v q'. Diagonals are filled through slices of the
    # flattened matrices: each block is one short numpy call for all rows.
    v = w[:, :kk]
    d = nk[:, :kk] - n * v
    hess = np.negative(outer)
    flat = hess.reshape(rows, -1)
    dv = d[:, :, None] * v[:, None, :]
    hess[:, :kk, :kk] -= dv + dv.transpose(0, 2, 1)
    flat[:, :kk * diag:diag] += d
    cross_mu = v[:, :, None] * (-s_z / sd)[:, None, :]             # (r, k-1, k)
    cross_mu.reshape(rows, -1)[:, :kk * (k + 1):k + 1] += s_z[:, :kk] / sd[:, :kk]
    cross_tau = v[:, :, None] * (-s_z2m1)[:, None, :]
    cross_tau.reshape(rows, -1)[:, :kk * (k + 1):k + 1] += s_z2m1[:, :kk]
    hess[:, :kk, kk:kk + k] += cross_mu
    hess[:, kk:kk + k, :kk] += cross_mu.transpose(0, 2, 1)
    flat[:, kk * diag:(kk + k) * diag:diag] += (s_z2 - nk) / sd**2
    mu_tau = (s_zz2m1 - 2.0 * s_z) / sd
    tau_tau = s_z2m1sq - 2.0 * s_z2
    if shared:
        t = 2 * k - 1
        cross_t = cross_tau.sum(axis=2)
        hess[:, :kk, t] += cross_t
        hess[:, t, :kk] += cross_t
        hess[:, kk:kk + k, t] += mu_tau
        hess[:, t, kk:kk + k] += mu_tau
        hess[:, t, t] += tau_tau.sum(axis=1)
    else:
        hess[:, :kk, kk + k:] += cross_tau
        hess[:, kk + k:, :kk] += cross_tau.transpose(0, 2, 1)
        start = kk * diag + k                           # entry (k-1, 2k-1): mean j with its width
        flat[:, start:start + k * diag:diag] += mu_tau
        start = (kk + k) * p + kk                       # entry (2k-1, k-1): width j with its mean
        flat[:, start:start + k * diag:diag] += mu_tau
        flat[:, (kk + k) * diag::diag] += tau_tau
    return hess


def _value_terms(x, c, w, mu, sd):
    """Log-likelihoods, expected counts, standardised distances and responsibilities.

    Arrays are laid out restart by component by value, shape (r, k, m), so
    that every sum over components and every product runs along contiguous
    memory and the sums over values are matrix-vector products (on 1,700
    histogram bins and eight components this is about twice as fast as a
    value-by-component layout).

    Parameters
    ----------
    x, c : ndarray, shape (m,)
    w, mu, sd : ndarray, shape (r, k)

    Returns
    -------
    loglik : ndarray, shape (r,)
    nk : ndarray, shape (r, k)
    z, resp : ndarray, shape (r, k, m)
    """
    z = np.subtract(x, mu[:, :, None])
    z *= (1.0 / sd)[:, :, None]
    resp = np.multiply(z, z)  # becomes log(w_j phi_j), then the responsibilities, in place
    resp *= -0.5
    resp += (np.log(w) - np.log(sd) - _HALF_LOG_2PI)[:, :, None]
    top = resp.max(axis=1)
    resp -= top[:, None, :]
    np.exp(resp, out=resp)
    total = resp.sum(axis=1)
    loglik = (top + np.log(total)) @ c
    resp *= (1.0 / total)[:, None, :]
    return loglik, resp @ c, z, resp


def _derivative_terms(c, w, sd, shared, z, resp, nk, order):
    """Gradients, and for ``order == 2`` the outer products of the scores and the sums of :func:`_hessian`.

    The scores of each value are formed already multiplied by the square root
    of its count, so that a gradient is one matrix-vector product and the
    count-weighted outer product of the scores one symmetric rank update
    (``A @ A.T``, which numpy hands to BLAS as such). ``z`` is overwritten.

    Parameters
    ----------
    c : ndarray, shape (m,)
    w, sd, nk : ndarray, shape (r, k)
    shared : bool
    z, resp : ndarray, shape (r, k, m)
        From :func:`_value_terms`.
    order : {1, 2}

    Returns
    -------
    grad : ndarray, shape (r, p)
    outer : ndarray, shape (r, p, p)
        Only for ``order == 2``, as are
    sums : ndarray, shape (r, 5, k)
    """
    rows, k, m = z.shape
    kk = k - 1
    root = np.sqrt(c)
    rooted = resp * root                                     # sqrt(c) r
    scores = np.empty((rows, 3 * k - 1 if not shared else 2 * k, m))
    np.multiply(w[:, :kk, None], root, out=scores[:, :kk])
    np.subtract(rooted[:, :kk], scores[:, :kk], out=scores[:, :kk])   # sqrt(c) (r - w)
    r_z = np.multiply(rooted, z, out=scores[:, kk:kk + k])             # sqrt(c) r z, / sd below
    z2m1 = z
    z2m1 *= z2m1
    z2m1 -= 1.0
    if shared:
        r_z2m1 = rooted * z2m1
        r_z2m1.sum(axis=1, out=scores[:, 2 * k - 1])
    else:
        r_z2m1 = np.multiply(rooted, z2m1, out=scores[:, 2 * k - 1:])
    if order == 2:
        # sum c r z (z^2 - 1) and sum c r (z^2 - 1)^2, through a buffer no longer needed
        cubic = np.multiply(r_z, z2m1, out=rooted) @ root
        quartic = np.multiply(r_z2m1, z2m1, out=rooted) @ root
        s_z2m1 = r_z2m1 @ root
    r_z *= (1.0 / sd)[:, :, None]
    grad = scores @ root
    if order == 1:
        return (grad,)
    # Restart by restart: each one's numbers do not depend on which others walk beside it.
    outer = np.stack([s @ s.T for s in scores])
    s_z = grad[:, kk:kk + k] * sd
    sums = np.stack([s_z, s_z2m1 + nk, s_z2m1, cubic, quartic], axis=1)
    return grad, outer, sums


class _TrialPoints:
    """Log-likelihoods at trial points now, derivatives only for the rows asked for.

    A trust-region step that is rejected needs the log-likelihood of its trial
    point and nothing else (about a third of the steps on flat ridges). When
    the restarts times the values fit in one batch, the responsibilities of
    the first pass are kept, so the derivatives cost no second pass over the
    values; larger samples are evaluated in full, restart by restart, in
    chunks (:func:`loglik_derivatives`).
    """

    def __init__(self, x, c, w, mu, sd, shared):
        self._args = (x, c, w, sd, shared)
        self._full = None
        if w.shape[0] * x.size <= _BATCH_ELEMENTS:
            self.loglik, self.nk, self._z, self._resp = _value_terms(x, c, w, mu, sd)
        else:
            self._full = [loglik_derivatives(x, c, w[r], mu[r], sd[r], shared) for r in range(w.shape[0])]
            self.loglik = np.array([f[0] for f in self._full])
            self.nk = np.array([f[3] for f in self._full])

    def derivatives(self, rows):
        """Gradients, shape (len(rows), p), and Hessians, shape (len(rows), p, p)."""
        x, c, w, sd, shared = self._args
        if self._full is not None:
            return (np.array([self._full[r][1] for r in rows]),
                    np.array([self._full[r][2] for r in rows]))
        if rows.size < w.shape[0]:
            w, sd, nk, z, resp = w[rows], sd[rows], self.nk[rows], self._z[rows], self._resp[rows]
        else:
            nk, z, resp = self.nk, self._z, self._resp
        grad, outer, sums = _derivative_terms(c, w, sd, shared, z, resp, nk, order=2)
        return grad, _hessian(outer, sums, w, sd, nk, c.sum(), shared)


def newton_polish(x, c, weights, means, variances, *, shared, var_floor, tol_abs,
                  max_steps=200, cancel=None) -> NewtonOutcome:
    """Climb to a local maximum with trust-region Newton steps, from one starting point.

    The walk of :func:`newton_polish_batch` for a single restart; the
    parameters are the same, with ``weights``, ``means`` and ``variances`` of
    shape (k,).

    Returns
    -------
    NewtonOutcome
    """
    return newton_polish_batch(x, c, np.asarray(weights)[None], np.asarray(means)[None],
                               np.asarray(variances)[None], shared=shared, var_floor=var_floor,
                               tol_abs=tol_abs, max_steps=max_steps, cancel=cancel)[0]


def newton_polish_batch(x, c, weights, means, variances, *, shared, var_floor, tol_abs,
                        max_steps=200, cancel=None) -> list:
    """Climb to a local maximum from each of several starting points, side by side.

    Each step solves the trust-region subproblem exactly in the eigenbasis of
    the Hessian (Moré & Sorensen 1983; Nocedal & Wright 2006, Algorithm 4.3)
    and the radius follows the ratio of the actual to the predicted gain
    (Nocedal & Wright 2006, Algorithm 4.1), never growing back in one go past
    half of the last rejected step. Only ascent is accepted, so no
    log-likelihood decreases. Every walk keeps its own radius, step count and
    stopping rule; walks that have stopped drop out of the batch.

    Parameters
    ----------
    x, c : ndarray, shape (n,)
    weights, means, variances : ndarray, shape (r, k)
        Starting points, one row per restart (typically where EM slowed down).
    shared : bool
    var_floor : float
        Variances are kept at or above this value.
    tol_abs : float
        A walk stops when its certified remaining gain is below this.
    max_steps : int, default 200
        Cap on trial points (accepted or not) per walk.
    cancel : object with ``is_set()``, optional
        Checked every step; the current points are returned unconverged when set.

    Returns
    -------
    list of NewtonOutcome
        One per row, in the order given.
    """
    weights, means, variances = (np.asarray(a, dtype=float) for a in (weights, means, variances))
    rows, k = means.shape
    sd = np.sqrt(np.maximum(variances, var_floor))
    if shared:
        sd = np.repeat(sd.mean(axis=1, keepdims=True), k, axis=1)
    w = np.maximum(weights, 1e-300)
    w = w / w.sum(axis=1, keepdims=True)
    theta = _join(w, means, sd, shared)
    p = theta.shape[1]
    tau_floor = 0.5 * np.log(var_floor) if var_floor > 0 else -np.inf
    start = _TrialPoints(x, c, w, means, sd, shared)
    ll, nk = start.loglik.copy(), start.nk.copy()
    grad, hess = start.derivatives(np.arange(rows))
    radius = np.full(rows, _RADIUS_START)
    ceiling = np.full(rows, _RADIUS_MAX)
    converged = np.zeros(rows, dtype=bool)
    steps = np.zeros(rows, dtype=int)
    decompose = np.ones(rows, dtype=bool)
    active = np.ones(rows, dtype=bool)
    eigval, eigvec = np.zeros((rows, p)), np.zeros((rows, p, p))
    g_rot, floor_eig = np.zeros((rows, p)), np.zeros(rows)
    while True:
        active &= steps < max_steps
        if not active.any() or (cancel is not None and cancel.is_set()):
            break
        fresh = np.flatnonzero(active & decompose)
        if fresh.size:
            vals, vecs, ok = _symmetric_eigen(-hess[fresh])  # maximising: want -H positive definite
            active[fresh[~ok]] = False
            fresh = fresh[ok]
            eigval[fresh], eigvec[fresh] = vals[ok], vecs[ok]
            g_rot[fresh] = np.einsum("rqp,rq->rp", eigvec[fresh], grad[fresh])
            floor_eig[fresh] = 1e-12 * np.maximum(1.0, np.abs(eigval[fresh]).max(axis=1))
            definite = eigval[fresh, 0] > floor_eig[fresh]
            certified = fresh[definite]
            decrement = 0.5 * np.sum(g_rot[certified]**2 / eigval[certified], axis=1)
            done = certified[decrement <= tol_abs]
            converged[done] = True
            active[done] = False
        walking = np.flatnonzero(active)
        if walking.size == 0:
            break
        lam_vals, g_w = eigval[walking], g_rot[walking]
        s_rot = _trust_region_steps(lam_vals, g_w, radius[walking], floor_eig[walking])
        predicted = np.sum(g_w * s_rot, axis=1) - 0.5 * np.sum(lam_vals * s_rot**2, axis=1)
        length = np.sqrt(np.sum(s_rot * s_rot, axis=1))
        trial = theta[walking] + np.einsum("rpq,rq->rp", eigvec[walking], s_rot)
        np.maximum(trial[:, 2 * k - 1:], tau_floor, out=trial[:, 2 * k - 1:])
        w_t, mu_t, sd_t = _split(trial, k, shared)
        steps[walking] += 1
        at_trial = _TrialPoints(x, c, w_t, mu_t, sd_t, shared)
        ll_t = at_trial.loglik
        accepted = np.isfinite(ll_t) & (ll_t >= ll[walking])
        taken = np.flatnonzero(accepted)
        if taken.size:
            grad_t, hess_t = at_trial.derivatives(taken)
            finite = np.isfinite(hess_t).all(axis=(1, 2))
            accepted[taken[~finite]] = False
            grad_t, hess_t, taken = grad_t[finite], hess_t[finite], taken[finite]
        gain = ll_t - ll[walking]
        good = accepted & (predicted > 0)
        ratio = np.where(accepted, 1.0, -1.0)
        ratio[good] = gain[good] / predicted[good]
        shrink = ratio < 0.25
        grow = ~shrink & (ratio > 0.75) & (length >= 0.99 * radius[walking])
        radius[walking[shrink]] = 0.25 * length[shrink]
        ceiling[walking[shrink]] = _CEILING_AFTER_REJECTION * length[shrink]
        grown = walking[grow]
        ceiling[grown] = np.minimum(_CEILING_GROWTH * ceiling[grown], _RADIUS_MAX)
        radius[grown] = np.minimum(2.0 * radius[grown], ceiling[grown])
        decompose[walking] = accepted
        moved = walking[taken]
        if moved.size:
            theta[moved], ll[moved], nk[moved] = trial[taken], ll_t[taken], at_trial.nk[taken]
            grad[moved], hess[moved] = grad_t, hess_t
            grad_norm = np.sqrt(np.sum(grad[moved]**2, axis=1))
            stalled = (gain[taken] <= 1e-3 * tol_abs) & (grad_norm <= 1e-8 * np.maximum(1.0, np.abs(ll[moved])))
            converged[moved[stalled]] = True
            active[moved[stalled]] = False
        tiny = walking[active[walking] & (radius[walking] < 1e-12)]
        if tiny.size:
            # No ascent is possible at machine precision: a maximum up to rounding.
            grad_norm = np.sqrt(np.sum(grad[tiny]**2, axis=1))
            converged[tiny] = grad_norm <= 1e-6 * np.maximum(1.0, np.abs(ll[tiny]))
            active[tiny] = False
    w, mu, sd = _split(theta, k, shared)
    return [NewtonOutcome(weights=w[r], means=mu[r].copy(), variances=sd[r]**2, loglik=float(ll[r]),
                          converged=bool(converged[r]), steps=int(steps[r]), nk=nk[r])
            for r in range(rows)]


def _symmetric_eigen(a):
    """Eigen-decompositions of symmetric matrices a, shape (r, p, p).

    Returns
    -------
    eigval : ndarray, shape (r, p)
        Ascending.
    eigvec : ndarray, shape (r, p, p)
        Eigenvectors in columns.
    ok : ndarray of bool, shape (r,)
        False where the matrix or its eigenvalues are not finite (those rows
        hold zeros).
    """
    ok = np.isfinite(a).all(axis=(1, 2))
    eigval, eigvec = np.zeros(a.shape[:2]), np.zeros(a.shape)
    if ok.any():
        eigval[ok], eigvec[ok] = np.linalg.eigh(a[ok])
        ok &= np.isfinite(eigval).all(axis=1)
    return eigval, eigvec, ok


def trust_region_step(eigval, g_rot, radius, floor_eig):
    """Maximiser of the quadratic model within ``radius``, in the Hessian's eigenbasis.

    Maximises ``g's - s'As/2`` (``A = -H`` with eigenvalues ``eigval``) over
    ``|s| <= radius``: ``s = g / (eigval + lam)`` with the smallest shift
    ``lam >= 0`` that makes ``A + lam I`` positive definite and the step fit,
    found by Newton's method on the secular equation ``1/radius - 1/|s(lam)| = 0``,
    which is concave in ``lam`` so the iterates approach the root from below
    (Moré & Sorensen 1983). When the gradient has no component along a
    direction of negative curvature (the "hard case") the step is completed
    along that direction to the boundary, so saddle points are left.

    Parameters
    ----------
    eigval : ndarray, shape (p,)
        Eigenvalues of ``-H``, ascending.
    g_rot : ndarray, shape (p,)
        Gradient in the eigenbasis.
    radius : float
    floor_eig : float
        Smallest eigenvalue treated as positive.

    Returns
    -------
    ndarray, shape (p,)
        The step in the eigenbasis.
    """
    return _trust_region_steps(np.asarray(eigval, dtype=float)[None], np.asarray(g_rot, dtype=float)[None],
                               np.array([float(radius)]), np.array([float(floor_eig)]))[0]


def _trust_region_steps(eigval, g_rot, radius, floor_eig):
    """:func:`trust_region_step` for several problems at once: arrays (r, p), (r, p), (r,), (r,).

    The secular iteration runs on all rows together; a row that has its
    shift keeps it (its update is masked out), which on a handful of rows is
    cheaper than gathering and scattering the rows still iterating.
    """
    lam = np.maximum(0.0, floor_eig - eigval[:, 0])
    den = eigval + lam[:, None]
    den = np.where(den > floor_eig[:, None], den, floor_eig[:, None])
    g2 = g_rot * g_rot
    norm = np.sqrt(np.sum(g2 / (den * den), axis=1))
    todo = (norm > radius) & (radius > 0.0)
    for _ in range(40):
        if not todo.any():
            break
        inv = 1.0 / den
        cube = np.sum(g2 * inv * inv * inv, axis=1)   # -d|s|^2/dlam / 2 = sum g^2 / den^3
        todo &= cube > 0.0
        shift = np.where(todo, (norm / np.where(todo, radius, 1.0) - 1.0) * norm * norm / np.where(todo, cube, 1.0), 0.0)
        lam += shift
        den = np.where(todo[:, None], eigval + lam[:, None], den)
        norm = np.where(todo, np.sqrt(np.sum(g2 / (den * den), axis=1)), norm)
        todo &= norm > radius * (1.0 + 1e-3)
    step = g_rot / den
    norm = np.sqrt(np.sum(step * step, axis=1))
    over = norm > radius
    step[over] *= (radius[over] / norm[over])[:, None]
    hard = ~over & (eigval[:, 0] < floor_eig) & (norm < radius)
    if hard.any():
        along = np.sqrt(radius[hard]**2 - norm[hard]**2)
        step[hard, 0] += np.where(g_rot[hard, 0] >= 0, along, -along)
    return step
