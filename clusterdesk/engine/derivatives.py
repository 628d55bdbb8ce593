"""Log-likelihood of a normal mixture with its gradient and Hessian, for many parameter sets at once.

The parameters are unconstrained: ``eta_j = ln(w_j / w_last)`` for the first
``k - 1`` weights, the means, and ``tau_j = ln(sd_j)`` (one ``tau`` for a
shared width); their number equals the BIC parameter count. The Newton
endgame (:mod:`.newton`) evaluates several restarts' trial points side by
side, so every array here has a leading axis of parameter sets (rows).
"""

from __future__ import annotations

import numpy as np

__all__ = ["loglik_derivatives", "split_parameters", "join_parameters", "TrialPoints", "hessian_from_terms"]

_HALF_LOG_2PI = 0.5 * float(np.log(2.0 * np.pi))
#: Values per chunk when one parameter set is evaluated on many values.
_CHUNK_ROWS = 1 << 16
#: Parameter sets times values evaluated side by side at most; beyond, set by set in chunks.
_BATCH_ELEMENTS = 1 << 17


def split_parameters(theta, k, shared):
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


def join_parameters(w, mu, sd, shared):
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
    terms = np.zeros((1, 5, k))  # see hessian_from_terms
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
                terms += part[2]
    if order == 0:
        return loglik, None, None, nk[0]
    if order == 1:
        return loglik, grad[0], None, nk[0]
    return loglik, grad[0], hessian_from_terms(outer, terms, w, nk, c.sum(), shared)[0], nk[0]


def hessian_from_terms(outer, terms, w, nk, n, shared):
    """Assemble the Hessians, shape (r, p, p), from the outer products of the scores and per-component sums.

    ``H = sum_i c_i (sum_j r_ij (d2 log(w_j f_ij) + g_ij g_ij') - s_i s_i')``
    where ``f_ij`` is component j's density (or probability) of observation
    i, ``s_i`` the score of observation i and ``g_ij`` the score of its
    component j (Louis 1982, J. R. Statist. Soc. B 44:226-233, the observed
    information of incomplete data; from memory); only the block-diagonal part of the
    first term needs the per-component sums, and it has the same form for
    densities of exact values and probabilities of intervals.

    Parameters
    ----------
    outer : ndarray, shape (r, p, p)
        ``sum_i c_i s_i s_i'``.
    terms : ndarray, shape (r, 5, k)
        Per component j, sums over observations of ``c r``, times: the
        component's score for its mean (``d log f / d mu``) and for its log
        standard deviation (``d log f / d tau``), and ``(d2 f / d mu2) / f``,
        ``(d2 f / d mu d tau) / f``, ``(d2 f / d tau2) / f``.
    w, nk : ndarray, shape (r, k)
        Weights and expected counts.
    n : float
        Total count.
    shared : bool
    """
    rows, p, _ = outer.shape
    k = w.shape[1]
    kk = k - 1
    diag = p + 1  # stride of a diagonal in a flattened matrix
    q_mu, q_tau, h_mu_mu, h_mu_tau, h_tau_tau = (terms[:, i] for i in range(5))
    # With v = w[:k-1] and d = nk[:k-1] - n v, the weights block of the first
    # term is diag(d) - d v' - v d', and its cross blocks with a per-component
    # vector q (the sums of c r times the mean or width score) are
    # [diag(q[:k-1]) | 0] - v q'. Diagonals are filled through slices of the
    # flattened matrices: each block is one short numpy call for all rows.
    v = w[:, :kk]
    d = nk[:, :kk] - n * v
    hess = np.negative(outer)
    flat = hess.reshape(rows, -1)
    dv = d[:, :, None] * v[:, None, :]
    hess[:, :kk, :kk] -= dv + dv.transpose(0, 2, 1)
    flat[:, :kk * diag:diag] += d
    cross_mu = v[:, :, None] * (-q_mu)[:, None, :]                 # (r, k-1, k)
    cross_mu.reshape(rows, -1)[:, :kk * (k + 1):k + 1] += q_mu[:, :kk]
    cross_tau = v[:, :, None] * (-q_tau)[:, None, :]
    cross_tau.reshape(rows, -1)[:, :kk * (k + 1):k + 1] += q_tau[:, :kk]
    hess[:, :kk, kk:kk + k] += cross_mu
    hess[:, kk:kk + k, :kk] += cross_mu.transpose(0, 2, 1)
    flat[:, kk * diag:(kk + k) * diag:diag] += h_mu_mu
    if shared:
        t = 2 * k - 1
        cross_t = cross_tau.sum(axis=2)
        hess[:, :kk, t] += cross_t
        hess[:, t, :kk] += cross_t
        hess[:, kk:kk + k, t] += h_mu_tau
        hess[:, t, kk:kk + k] += h_mu_tau
        hess[:, t, t] += h_tau_tau.sum(axis=1)
    else:
        hess[:, :kk, kk + k:] += cross_tau
        hess[:, kk + k:, :kk] += cross_tau.transpose(0, 2, 1)
        start = kk * diag + k                           # entry (k-1, 2k-1): mean j with its width
        flat[:, start:start + k * diag:diag] += h_mu_tau
        start = (kk + k) * p + kk                       # entry (2k-1, k-1): width j with its mean
        flat[:, start:start + k * diag:diag] += h_mu_tau
        flat[:, (kk + k) * diag::diag] += h_tau_tau
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
    """Gradients, and for ``order == 2`` the outer products of the scores and the terms of :func:`hessian_from_terms`.

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
    terms : ndarray, shape (r, 5, k)
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
    # For a normal density, with z = (x - mu) / sd: d log f / d mu = z / sd,
    # d log f / d tau = z^2 - 1, f_mu_mu / f = (z^2 - 1) / sd^2,
    # f_mu_tau / f = (z^3 - 3 z) / sd, f_tau_tau / f = (z^2 - 1)^2 - 2 z^2.
    q_mu = grad[:, kk:kk + k]
    s_z = q_mu * sd
    terms = np.stack([q_mu, s_z2m1, s_z2m1 / sd**2, (cubic - 2.0 * s_z) / sd,
                      quartic - 2.0 * (s_z2m1 + nk)], axis=1)
    return grad, outer, terms


class TrialPoints:
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
        grad, outer, terms = _derivative_terms(c, w, sd, shared, z, resp, nk, order=2)
        return grad, hessian_from_terms(outer, terms, w, nk, c.sum(), shared)
