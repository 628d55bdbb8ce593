"""Log-likelihood of a normal mixture on intervals, with its gradient and Hessian, for many parameter sets at once.

Each observation (or bin) is known to lie in ``[a_i, b_i)``; component j
gives it the probability ``P_ij = Phi(beta) - Phi(alpha)`` with
``alpha = (a_i - mu_j) / sd_j`` and ``beta = (b_i - mu_j) / sd_j``. With
``A = phi(alpha)``, ``B = phi(beta)`` and ``tau = ln(sd)``, differentiating
under the integral gives (both ends move with the parameters; an infinite end
contributes nothing):

    dP/dmu       = (A - B) / sd,
    dP/dtau      = alpha A - beta B,
    d2P/dmu2     = (alpha A - beta B) / sd^2,
    d2P/dmu dtau = ((alpha^2 - 1) A - (beta^2 - 1) B) / sd,
    d2P/dtau2    = (alpha^3 - alpha) A - (beta^3 - beta) B,

using ``phi'(z) = -z phi(z)``, ``d alpha/d mu = -1/sd`` and
``d alpha/d tau = -alpha`` (calculus, no source needed). Divided by ``P`` these
are the per-component terms of :func:`.derivatives.hessian_from_terms`, so
the gradient and the Hessian in the unconstrained parameters of
:mod:`.derivatives` are assembled as for exact values. The ratios
``phi(end) / P`` are formed in log space from :func:`.grouped.log_interval_mass`,
so far tails neither underflow nor cancel. As the intervals shrink the terms
tend to those of the normal density (``(A - B) / (sd P) -> z / sd``, ...).

:class:`IntervalTrialPoints` has the interface of
:class:`.derivatives.TrialPoints`, so the trust-region walks of
:mod:`.newton` run on intervals unchanged.
"""

from __future__ import annotations

import numpy as np
from scipy.special import ndtr

from .derivatives import hessian_from_terms

__all__ = ["IntervalTrialPoints", "interval_loglik_derivatives", "log_masses"]

#: Parameter sets times intervals evaluated side by side at most; beyond, set by set in chunks.
_BATCH_ELEMENTS = 1 << 17
#: Intervals per chunk when one parameter set is evaluated on many intervals.
_CHUNK = 1 << 14
#: Masses below this are recomputed in log space (:func:`log_masses`).
_SMALLEST_MASS = 1e-250


def interval_loglik_derivatives(lower, upper, c, w, mu, sd, shared):
    """Interval log-likelihood, gradient and Hessian of one parameter set.

    Parameters
    ----------
    lower, upper, c : ndarray, shape (m,)
        Interval ends (``lower`` may be ``-inf``, ``upper`` ``+inf``) and counts.
    w, mu, sd : ndarray, shape (k,)
        Weights, means, standard deviations.
    shared : bool
        One standard deviation for all components (``sd`` all equal).

    Returns
    -------
    loglik : float
    grad : ndarray, shape (p,)
    hess : ndarray, shape (p, p)
    nk : ndarray, shape (k,)
        Expected count in each component.
    """
    points = IntervalTrialPoints(lower, upper, c, *(np.asarray(a, dtype=float)[None] for a in (w, mu, sd)),
                                 shared)
    grad, hess = points.derivatives(np.array([0]))
    return float(points.loglik[0]), grad[0], hess[0], points.nk[0]


class IntervalTrialPoints:
    """Interval log-likelihoods at trial points now, derivatives only for the rows asked for.

    The interface of :class:`.derivatives.TrialPoints`: ``loglik`` (r,),
    ``nk`` (r, k) and :meth:`derivatives`. When the rows times the intervals
    fit in one batch, the first pass's standardised ends, log masses and
    responsibilities are kept for the derivatives; larger problems are
    evaluated in full, row by row, in chunks of intervals.

    Parameters
    ----------
    lower, upper, c : ndarray, shape (m,)
    w, mu, sd : ndarray, shape (r, k)
    shared : bool
    """

    def __init__(self, lower, upper, c, w, mu, sd, shared):
        self._args = (c, w, sd, shared)
        self._full = None
        if w.shape[0] * lower.size <= _BATCH_ELEMENTS:
            self._kept = _value_pass(lower, upper, c, w, mu, sd)
            self.loglik, self.nk = self._kept[:2]
        else:
            self._full = [_chunked(lower, upper, c, w[r:r + 1], mu[r:r + 1], sd[r:r + 1], shared)
                          for r in range(w.shape[0])]
            self.loglik = np.array([f[0] for f in self._full])
            self.nk = np.array([f[3] for f in self._full])

    def derivatives(self, rows):
        """Gradients, shape (len(rows), p), and Hessians, shape (len(rows), p, p)."""
        if self._full is not None:
            return (np.array([self._full[r][1] for r in rows]),
                    np.array([self._full[r][2] for r in rows]))
        c, w, sd, shared = self._args
        _, nk, alpha, beta, logp, resp = self._kept
        pick = (lambda a: a) if rows.size == w.shape[0] else (lambda a: a[rows])
        w, sd, nk = pick(w), pick(sd), pick(nk)
        grad, outer, terms = _derivative_pass(c, w, sd, shared, pick(alpha), pick(beta), pick(logp),
                                              pick(resp))
        return grad, hessian_from_terms(outer, terms, w, nk, c.sum(), shared)


def _chunked(lower, upper, c, w, mu, sd, shared):
    """Log-likelihood, gradient, Hessian and expected counts of one row (shapes (1, k)), chunk by chunk.

    Every chunk's derivatives are taken at once, so memory stays bounded by
    the chunk whatever the number of intervals.
    """
    k = w.shape[1]
    p = 2 * k if shared else 3 * k - 1
    loglik, nk = 0.0, np.zeros((1, k))
    grad, outer, terms = np.zeros((1, p)), np.zeros((1, p, p)), np.zeros((1, 5, k))
    for start in range(0, lower.size, _CHUNK):
        part = slice(start, start + _CHUNK)
        ll, part_nk, alpha, beta, logp, resp = _value_pass(lower[part], upper[part], c[part], w, mu, sd)
        loglik += float(ll[0])
        nk += part_nk
        if not np.isfinite(loglik):
            return loglik, np.full(p, np.nan), np.full((p, p), np.nan), nk[0]
        g, o, t = _derivative_pass(c[part], w, sd, shared, alpha, beta, logp, resp)
        grad += g
        outer += o
        terms += t
    hess = hessian_from_terms(outer, terms, w, nk, c.sum(), shared)
    return loglik, grad[0], hess[0], nk[0]


def log_masses(alpha, beta):
    """``log(Phi(beta) - Phi(alpha))``, as :func:`.grouped.log_interval_mass` but faster in the bulk.

    The difference is taken of plain normal CDF values on the lower tail (an
    interval above the mean is mirrored), where each keeps its relative
    precision; only where it is below ``1e-250`` (far tails, or nothing left
    of it) is the mass recomputed in log space. Both forms lose relative
    precision alike on intervals very narrow against their tail's scale.
    """
    from .grouped import log_interval_mass

    flip = alpha > 0
    lo = np.where(flip, -beta, alpha)
    mass = ndtr(np.where(flip, -alpha, beta))
    mass -= ndtr(lo)
    with np.errstate(divide="ignore", invalid="ignore"):
        logp = np.log(mass)
    far = ~(mass > _SMALLEST_MASS)
    if far.any():
        logp[far] = log_interval_mass(alpha[far], beta[far])
    return logp


def _value_pass(lower, upper, c, w, mu, sd):
    """Log-likelihoods (r,), expected counts (r, k), and the arrays (r, k, m) the derivatives need."""
    inv = (1.0 / sd)[:, :, None]
    alpha = (lower - mu[:, :, None]) * inv
    beta = (upper - mu[:, :, None]) * inv
    logp = log_masses(alpha, beta)
    with np.errstate(divide="ignore"):
        resp = logp + np.log(w)[:, :, None]
    top = resp.max(axis=1)
    top = np.where(np.isfinite(top), top, 0.0)
    resp -= top[:, None, :]
    np.exp(resp, out=resp)
    total = resp.sum(axis=1)
    with np.errstate(divide="ignore"):
        loglik = (top + np.log(total)) @ c
    with np.errstate(divide="ignore", invalid="ignore"):
        resp *= np.where(total > 0, 1.0 / total, 0.0)[:, None, :]
    return loglik, resp @ c, alpha, beta, logp, resp


def _end_ratios(end, logp):
    """``phi(end) / P`` times ``end**0 .. end**3``, each shape of ``end`` (0 at an infinite end)."""
    from .grouped import _phi_ratio

    ratio, _ = _phi_ratio(end, logp)
    e = np.where(np.isfinite(end), end, 0.0)
    r1 = e * ratio
    r2 = e * r1
    return ratio, r1, r2, e * r2


def _derivative_pass(c, w, sd, shared, alpha, beta, logp, resp):
    """Gradients (r, p), outer products of the scores (r, p, p) and the terms (r, 5, k) of :func:`.derivatives.hessian_from_terms`."""
    rows, k, m = alpha.shape
    kk = k - 1
    a0, a1, a2, a3 = _end_ratios(alpha, logp)
    b0, b1, b2, b3 = _end_ratios(beta, logp)
    inv_sd = (1.0 / sd)[:, :, None]
    g_mu = (a0 - b0) * inv_sd                      # d log P / d mu
    g_tau = a1 - b1                                # d log P / d tau
    root = np.sqrt(c)
    rooted = resp * root
    scores = np.empty((rows, 2 * k if shared else 3 * k - 1, m))
    np.multiply(w[:, :kk, None], root, out=scores[:, :kk])
    np.subtract(rooted[:, :kk], scores[:, :kk], out=scores[:, :kk])   # sqrt(c) (r - w)
    np.multiply(rooted, g_mu, out=scores[:, kk:kk + k])
    r_tau = rooted * g_tau
    if shared:
        r_tau.sum(axis=1, out=scores[:, 2 * k - 1])
    else:
        scores[:, 2 * k - 1:] = r_tau
    grad = scores @ root
    outer = np.stack([s @ s.T for s in scores])
    weighted = resp * c
    terms = np.stack([grad[:, kk:kk + k],
                      r_tau @ root,
                      (weighted * (a1 - b1)).sum(axis=2) / sd**2,
                      (weighted * (a2 - a0 - b2 + b0)).sum(axis=2) / sd,
                      (weighted * (a3 - a1 - b3 + b1)).sum(axis=2)], axis=1)
    return grad, outer, terms
