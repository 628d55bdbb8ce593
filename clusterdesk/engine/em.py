"""EM for one-dimensional normal mixtures on weighted values, many restarts at once.

The restarts of one model are fitted side by side: parameters are arrays of
shape ``(r, k)`` (one row per restart) and every E-step evaluates all active
restarts on the data in one vectorised pass, in log space.  Rows may also
carry their own counts or values, shape ``(r, n)``: a batch of bootstrap
replicates is fitted the same way.

Acceleration is SQUAREM (Varadhan & Roland 2008, Scand. J. Statist. 35:335-353,
scheme S3) on the unconstrained parameters (log weights, means, log variances)
with a monotone safeguard: an extrapolated point is kept only when its
log-likelihood is at least that of the plain EM step before it, so the
log-likelihoods recorded at the start of each cycle never decrease.

Convergence is declared when the gain of a whole cycle per unit of count is
below ``tol`` *and* an Aitken-type estimate of the gain still to come
(Böhning et al. 1994, Ann. Inst. Statist. Math. 46:373-388) is below ``10 * tol``.
A per-step change threshold alone stops on flat ridges far from the maximum.

This module works in whatever units it is given; :mod:`.fitting` standardises
the data first.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import Cancelled
from .validation import prepare_sample, weighted_mean_sd

__all__ = ["EMSettings", "BatchResult", "run_batch", "run_em", "EMTrace", "e_step"]

_LOG_2PI = float(np.log(2.0 * np.pi))
_TINY_WEIGHT = 1e-300
# Elements of the (restarts, components, values) work arrays per chunk.
_CHUNK_ELEMENTS = 1 << 20


@dataclass(frozen=True)
class EMSettings:
    """Numerical settings of the EM iterations.

    Parameters
    ----------
    tol : float, default 1e-10
        Convergence threshold on the log-likelihood gain per unit of count.
    max_iter : int, default 20000
        Cap on EM map evaluations per restart (three per accelerated cycle).
    accelerate : bool, default True
        Use SQUAREM; ``False`` runs plain EM (for checks and traces).
    """

    tol: float = 1e-10
    max_iter: int = 20000
    accelerate: bool = True


@dataclass(frozen=True)
class Stats:
    """Sufficient statistics of one E-step for ``r`` restarts.

    ``loglik`` has shape (r,); ``nk``, ``sd`` and ``sdd`` shape (r, k): the
    summed responsibilities, and the responsibility-weighted sums of
    ``x - mu`` and ``(x - mu)**2`` about the current means.
    """

    loglik: np.ndarray
    nk: np.ndarray
    sd: np.ndarray
    sdd: np.ndarray


@dataclass
class BatchResult:
    """Outcome of EM on a batch of restarts (arrays have a leading restart axis).

    Attributes
    ----------
    weights, means, variances : ndarray, shape (r, k)
    loglik : ndarray, shape (r,)
    converged : ndarray of bool, shape (r,)
    iterations : ndarray of int, shape (r,)
        EM map evaluations used by each restart.
    nk : ndarray, shape (r, k)
        Expected count in each component at the final parameters.
    traces : list of list of float or None
        Log-likelihood at the start of each cycle (or step), when recorded.
    """

    weights: np.ndarray
    means: np.ndarray
    variances: np.ndarray
    loglik: np.ndarray
    converged: np.ndarray
    iterations: np.ndarray
    nk: np.ndarray
    traces: list | None = None


def e_step(x, c, logw, mu, var) -> Stats:
    """One E-step for every restart, in log space and in chunks of the data.

    Parameters
    ----------
    x : ndarray, shape (n,) or (r, n)
        Values: one set shared by every row, or one set per row (e.g. simulated
        samples of a parametric bootstrap).
    c : ndarray, shape (n,) or (r, n)
        Counts of the values: shared, or one count vector per row (e.g.
        multinomial resampling counts over the same values).  Zero counts are
        allowed.
    logw, mu, var : ndarray, shape (r, k)
        Log weights, means and variances of each row (restart or replicate).

    Returns
    -------
    Stats
        Each row's statistics use that row's values and counts only.
    """
    r, k = mu.shape
    const = logw - 0.5 * (_LOG_2PI + np.log(var))
    half_prec = 0.5 / var
    loglik = np.zeros(r)
    nk = np.zeros((r, k))
    sd = np.zeros((r, k))
    sdd = np.zeros((r, k))
    step = max(256, _CHUNK_ELEMENTS // max(1, r * k))
    for start in range(0, x.shape[-1], step):
        xs = x[..., start:start + step]
        cs = c[..., start:start + step]
        # (1, n) or (r, 1, n) against (r, k, 1): shape (r, k, chunk) either way
        d = xs[..., None, :] - mu[:, :, None]
        dd = d * d
        lj = const[:, :, None] - half_prec[:, :, None] * dd
        top = lj.max(axis=1)
        np.subtract(lj, top[:, None, :], out=lj)
        np.exp(lj, out=lj)
        total = lj.sum(axis=1)
        row_loglik = top + np.log(total)
        loglik += np.einsum("rn,n->r" if cs.ndim == 1 else "rn,rn->r", row_loglik, cs)  # no BLAS threads: same bits on any thread count
        np.multiply(lj, (cs / total)[:, None, :], out=lj)
        nk += lj.sum(axis=2)
        sd += np.einsum("rkn,rkn->rk", lj, d)
        sdd += np.einsum("rkn,rkn->rk", lj, dd)
    return Stats(loglik, nk, sd, sdd)


def m_step(stats: Stats, mu, var, n: float, var_floor: float, shared: bool):
    """Maximise the expected complete-data log-likelihood given E-step statistics.

    Components whose expected count has fallen below ``1e-10 * n`` keep their
    mean and variance (their weight is then negligible); the fitting layer
    reports them as collapsed.  ``n`` is the total count: a float, or an
    array of shape (r, 1) when the rows have their own totals.

    Returns
    -------
    logw, mu, var : ndarray, shape (r, k)
    """
    nk = stats.nk
    alive = nk > 1e-10 * n
    safe = np.where(alive, nk, 1.0)
    shift = np.where(alive, stats.sd / safe, 0.0)
    new_mu = mu + shift
    within = np.maximum(stats.sdd - nk * shift * shift, 0.0)
    if shared:
        pooled = within.sum(axis=1, keepdims=True) / n
        new_var = np.broadcast_to(np.maximum(pooled, var_floor), var.shape).copy()
    else:
        new_var = np.where(alive, np.maximum(within / safe, var_floor), var)
    logw = np.log(np.maximum(nk / n, _TINY_WEIGHT))
    return logw, new_mu, new_var


def _pack(logw, mu, var):
    return np.concatenate([logw, mu, np.log(var)], axis=1)


def _unpack(theta, k, var_floor):
    logw = theta[:, :k]
    logw = logw - _logsumexp_rows(logw)[:, None]
    mu = theta[:, k:2 * k]
    var = np.maximum(np.exp(theta[:, 2 * k:]), var_floor)
    return logw, mu, var


def _logsumexp_rows(a):
    top = a.max(axis=1)
    return top + np.log(np.exp(a - top[:, None]).sum(axis=1))


class _EMMap:
    """The EM map theta -> M(E(theta)) on the data of the given rows."""

    def __init__(self, x, c, k, n, var_floor, shared, e_step_fn=None):
        self.x, self.c, self.k, self.n = x, c, k, n
        self.var_floor, self.shared = var_floor, shared
        self.e_step = e_step if e_step_fn is None else e_step_fn

    def __call__(self, theta, rows):
        x = self.x[rows] if self.x.ndim == 2 else self.x
        c = self.c[rows] if self.c.ndim == 2 else self.c
        logw, mu, var = _unpack(theta, self.k, self.var_floor)
        stats = self.e_step(x, c, logw, mu, var)
        new = m_step(stats, mu, var, self.n[rows][:, None], self.var_floor, self.shared)
        return stats.loglik, _pack(*new), stats.nk


@dataclass
class _Progress:
    """Per-restart bookkeeping of a running batch."""

    r: int
    loglik: np.ndarray = field(init=False)
    last_gain: np.ndarray = field(init=False)
    iterations: np.ndarray = field(init=False)
    converged: np.ndarray = field(init=False)

    def __post_init__(self):
        self.loglik = np.full(self.r, -np.inf)
        self.last_gain = np.full(self.r, np.nan)
        self.iterations = np.zeros(self.r, dtype=np.int64)
        self.converged = np.zeros(self.r, dtype=bool)


def _has_converged(gain, previous_gain, tol_abs):
    """Gain small now, and the Aitken projection of the remaining gain small too."""
    finite = np.isfinite(gain) & np.isfinite(previous_gain)
    gain = np.where(finite, gain, np.inf)
    small = gain <= tol_abs
    usable = finite & (previous_gain > 0)
    ratio = np.where(usable, gain / np.where(usable, previous_gain, 1.0), 0.0)
    ratio = np.clip(ratio, 0.0, 0.999999)
    with np.errstate(invalid="ignore"):
        remaining = np.where(small, np.maximum(gain, 0.0) * ratio / (1.0 - ratio), np.inf)
    return small & (remaining <= 10.0 * tol_abs)


def run_batch(x, c, weights, means, variances, *, n=None, var_floor=0.0, shared=False,
              settings: EMSettings = EMSettings(), cancel=None, record_trace=False,
              e_step_fn=None) -> BatchResult:
    """Run EM from several starts side by side until each converges.

    Parameters
    ----------
    x : ndarray, shape (m,) or (r, m)
        Values, shared by every row or one set per row.
    c : ndarray, shape (m,) or (r, m)
        Counts (>= 0, each row with a positive total), shared or one vector per
        row: a batch of bootstrap replicates is a batch of count vectors on the
        same values.
    weights, means, variances : ndarray, shape (r, k)
        Starting parameters, one row per restart (or replicate).
    n : float or ndarray of shape (r,), optional
        Total count of each row; defaults to ``c.sum(axis=-1)``.
    var_floor : float, default 0.0
        Smallest variance a component may take.
    shared : bool, default False
        One variance shared by all components.
    settings : EMSettings
    cancel : object with ``is_set()``, optional
        Checked every cycle; raises :class:`~clusterdesk.errors.Cancelled`.
    record_trace : bool, default False
        Keep the log-likelihood at the start of every cycle.
    e_step_fn : callable(x, c, logw, mu, var) -> Stats, optional
        Another E-step with the same statistics (e.g. the interval E-step of
        :mod:`.grouped`, whose M-step is this one); default :func:`e_step`.

    Returns
    -------
    BatchResult
    """
    r, k = means.shape
    n = np.broadcast_to(np.asarray(c.sum(axis=-1) if n is None else n, dtype=np.float64), (r,))
    em_map = _EMMap(x, c, k, n, var_floor, shared, e_step_fn)
    theta = _pack(np.log(np.maximum(weights, _TINY_WEIGHT)), means,
                  np.maximum(variances, max(var_floor, 1e-300)))
    state = _Progress(r)
    nk = np.zeros((r, k))
    traces = [[] for _ in range(r)] if record_trace else None
    tol_abs = settings.tol * n
    step_max = np.ones(r)
    active = np.arange(r)
    while active.size:
        if cancel is not None and cancel.is_set():
            raise Cancelled("The fit was cancelled.")
        th0 = theta[active]
        ll0, th1, nk0 = em_map(th0, active)
        state.iterations[active] += 1
        nk[active] = nk0
        gain = ll0 - state.loglik[active]
        done = _has_converged(gain, state.last_gain[active], tol_abs[active])
        state.last_gain[active] = gain
        state.loglik[active] = ll0
        if traces is not None:
            for i, value in zip(active, ll0):
                traces[i].append(float(value))
        out_of_budget = state.iterations[active] >= settings.max_iter
        state.converged[active[done]] = True
        stop = done | out_of_budget | ~np.isfinite(ll0)
        keep = ~stop
        active, th0, th1 = active[keep], th0[keep], th1[keep]
        ll0 = ll0[keep]
        if not active.size:
            break
        if not settings.accelerate:
            theta[active] = th1
            continue
        theta[active] = _squarem_cycle(em_map, th0, th1, step_max, active, state)
    w = np.exp(_unpack(theta, k, var_floor)[0])
    _, mu, var = _unpack(theta, k, var_floor)
    return BatchResult(weights=w, means=mu, variances=var, loglik=state.loglik.copy(),
                       converged=state.converged.copy(), iterations=state.iterations.copy(),
                       nk=nk, traces=traces)


def _squarem_cycle(em_map, th0, th1, step_max, active, state):
    """One SQUAREM S3 cycle; returns the next cycle's starting parameters."""
    ll1, th2, _ = em_map(th1, active)
    r_vec = th1 - th0
    v_vec = th2 - 2.0 * th1 + th0
    norm_r = np.sqrt((r_vec * r_vec).sum(axis=1))
    norm_v = np.sqrt((v_vec * v_vec).sum(axis=1))
    alpha = -norm_r / np.where(norm_v > 0, norm_v, 1.0)
    alpha = np.where(norm_v > 0, alpha, -1.0)
    limit = step_max[active]
    alpha = np.clip(alpha, -limit, -1.0)
    th_jump = th0 - 2.0 * alpha[:, None] * r_vec + (alpha * alpha)[:, None] * v_vec
    ll_jump, th_next, _ = em_map(th_jump, active)
    state.iterations[active] += 2
    good = np.isfinite(ll_jump) & (ll_jump >= ll1) & np.all(np.isfinite(th_next), axis=1)
    # Varadhan & Roland's step-length rule: widen after a full-length success,
    # narrow after a rejected jump.
    widened = good & (alpha <= -limit)
    step_max[active[widened]] *= 4.0
    step_max[active[~good]] = np.maximum(1.0, step_max[active[~good]] / 4.0)
    return np.where(good[:, None], th_next, th2)


@dataclass(frozen=True)
class EMTrace:
    """Result of :func:`run_em`: the best restart and its log-likelihood trace."""

    weights: np.ndarray
    means: np.ndarray
    sds: np.ndarray
    loglik: float
    converged: bool
    iterations: int
    loglik_trace: list


def run_em(values, k, *, counts=None, widths="separate", restarts=1, seed=0,
           accelerate=True, record_trace=False, tol=1e-10, max_iter=20000) -> EMTrace:
    """Plain entry point to the EM iterations, without binning, polishing or collapse rules.

    Meant for checks of the iterations themselves (monotonicity, traces).
    Values are used in their own units. See :func:`clusterdesk.fit` for fitting.

    Parameters
    ----------
    values : array_like, shape (n,)
    k : int
    counts : array_like, shape (n,), optional
    widths : {"separate", "shared"}, default "separate"
    restarts : int, default 1
    seed : int, default 0
    accelerate : bool, default True
    record_trace : bool, default False
    tol : float, default 1e-10
    max_iter : int, default 20000

    Returns
    -------
    EMTrace
    """
    from .starts import make_starts
    from .validation import check_widths

    sample = prepare_sample(values, counts)
    (variant,) = check_widths(widths)
    x, c = sample.values, sample.counts
    spread = weighted_mean_sd(x, c)[1]
    floor = (1e-6 * spread) ** 2
    rng = np.random.default_rng(seed)
    w0, m0, v0 = make_starts(x, c, k, restarts, rng, floor)
    shared = variant == "shared"
    if shared:
        v0 = np.repeat(v0.mean(axis=1, keepdims=True), k, axis=1)
    res = run_batch(x, c, w0, m0, v0, var_floor=floor, shared=shared,
                    settings=EMSettings(tol=tol, max_iter=max_iter, accelerate=accelerate),
                    record_trace=record_trace)
    best = int(np.argmax(res.loglik))
    return EMTrace(weights=res.weights[best], means=res.means[best],
                   sds=np.sqrt(res.variances[best]), loglik=float(res.loglik[best]),
                   converged=bool(res.converged[best]), iterations=int(res.iterations[best]),
                   loglik_trace=res.traces[best] if res.traces else [])
