"""EM on interval data: rounded values, binned values and value/count tallies.

Each observation (or tally bin) is known only to lie in an interval
``[a, b)``: a value recorded to a resolution ``h`` lies in ``[x - h/2, x + h/2)``,
a reading below a detection limit ``L`` in ``(-inf, L)``.  The likelihood of
a normal mixture is then the probability of each interval,

    log L = sum_i c_i log sum_j w_j (Phi((b_i - mu_j)/s_j) - Phi((a_i - mu_j)/s_j)),

which is bounded: no component can gain by shrinking onto a tied value.  EM
for it (McLachlan & Jones 1988, Biometrics 44:571-578) has an E-step with
these normal CDF differences and an M-step with the moments of the normal
truncated to each interval:

    E[X - mu | a <= X < b]     = s (phi(alpha) - phi(beta)) / P,
    E[(X - mu)^2 | a <= X < b] = s^2 (1 + (alpha phi(alpha) - beta phi(beta)) / P),

with ``alpha = (a - mu)/s``, ``beta = (b - mu)/s`` and ``P = Phi(beta) - Phi(alpha)``.
The M-step given those statistics is the one of exact values
(:func:`.em.m_step`), so the iterations, the restarts side by side and the
SQUAREM acceleration are those of :func:`.em.run_batch`.  CDF differences are
taken in log space with :func:`scipy.special.log_ndtr`, on the lower tail
(an interval above the mean is mirrored), so far tails neither underflow nor
cancel.

A fit hands over from EM to trust-region Newton steps on the interval
likelihood (:mod:`.interval_derivatives`, :mod:`.newton`) once EM's gains are
small, as on the exact path, and convergence is certified the same way: the
gain a quadratic model still promises is below ``FitSettings.tol`` (1e-10 of
log-likelihood per observation). Bootstrap replicates of interval fits are
refitted by EM alone, to that tolerance within :data:`INTERVAL_MAX_ITER`
steps (:mod:`.replicates`).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import log_ndtr

from . import criteria
from .em import EMSettings, Stats, run_batch
from .fitting import (FitSettings, FittedModel, _best_index, _count_agreeing, _robust_spread,
                      _suspect_values, degenerate_fits, model_with_criteria)
from .interval_derivatives import IntervalTrialPoints
from .mixture import Mixture
from .outliers import outlier_note
from .recording_cells import recording_cells
from .starts import make_starts
from .validation import Sample, weighted_mean_sd
from ..errors import InputError

__all__ = ["prepare_intervals", "log_interval_mass", "interval_e_step", "interval_e_step_on",
           "interval_loglik", "interval_posterior", "fit_intervals", "histogram_bins", "interval_plan",
           "INTERVAL_MAX_ITER"]

_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
_CHUNK_ELEMENTS = 1 << 19
#: Cap on EM map evaluations per bootstrap replicate refitted on intervals.
INTERVAL_MAX_ITER = 6000
_MOMENT_LOG_FLOOR = -1e4  # masses below e**-10000 carry no responsibility


def prepare_intervals(values, counts=None, lower=None, upper=None) -> Sample:
    """Validate interval data and return it as a :class:`~.validation.Sample`.

    Parameters
    ----------
    values : array_like, shape (m,)
        A representative finite value of each interval (the recorded value);
        used to order the intervals and to make starting points.
    counts : array_like, shape (m,), optional
        Whole numbers >= 0; default one each.
    lower, upper : array_like, shape (m,)
        Interval ends, ``lower < upper``; ``lower`` may be ``-inf`` and
        ``upper`` ``+inf`` (censored readings).

    Returns
    -------
    Sample
        Sorted by value, identical intervals merged (counts added).
    """
    from .validation import prepare_sample

    prepare_sample(values, counts)  # the checks on values and counts, with their messages
    x = np.asarray(values, dtype=np.float64).reshape(-1)
    c = np.ones_like(x) if counts is None else np.round(np.asarray(counts, dtype=np.float64))
    try:
        a = np.asarray(lower, dtype=np.float64).reshape(-1)
        b = np.asarray(upper, dtype=np.float64).reshape(-1)
    except (TypeError, ValueError):
        raise InputError("The interval ends could not be read as numbers; pass one lower "
                         "and one upper end per value.") from None
    if a.shape != x.shape or b.shape != x.shape:
        raise InputError(f"There are {x.size} values but the interval ends have shapes {a.shape} "
                         f"and {b.shape}; pass one lower and one upper end per value.")
    if np.isnan(a).any() or np.isnan(b).any() or (a == np.inf).any() or (b == -np.inf).any():
        raise InputError("Interval ends must be numbers (a lower end may be -inf, an upper end "
                         "+inf); remove the rows whose ends are missing.")
    if np.any(a >= b):
        bad = int(np.flatnonzero(a >= b)[0])
        raise InputError(f"Every interval needs lower < upper, but row {bad} has "
                         f"[{a[bad]:g}, {b[bad]:g}); check the resolution or the limits.")
    keep = c > 0
    x, c, a, b = x[keep], c[keep], a[keep], b[keep]
    order = np.lexsort((b, a, x))
    x, c, a, b = x[order], c[order], a[order], b[order]
    new = np.r_[True, (a[1:] != a[:-1]) | (b[1:] != b[:-1]) | (x[1:] != x[:-1])]
    starts = np.flatnonzero(new)
    c = np.add.reduceat(c, starts)
    x, a, b = x[starts], a[starts], b[starts]
    for arr in (x, c, a, b):
        arr.setflags(write=False)
    return Sample(values=x, counts=c, n=float(c.sum()), n_distinct=int(starts.size),
                  lower=a, upper=b)


def log_interval_mass(alpha, beta):
    """``log(Phi(beta) - Phi(alpha))`` for standardised ends ``alpha < beta``.

    Parameters
    ----------
    alpha, beta : ndarray (broadcastable)
        May hold ``-inf`` (alpha) and ``+inf`` (beta).

    Returns
    -------
    ndarray
        Accurate in both tails: an interval above the mean is mirrored so that
        both ends are in the lower tail, where :func:`scipy.special.log_ndtr`
        keeps full relative precision.
    """
    flip = alpha > 0
    lo = np.where(flip, -beta, alpha)
    hi = np.where(flip, -alpha, beta)
    log_hi = log_ndtr(hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        return log_hi + np.log(-np.expm1(log_ndtr(lo) - log_hi))


def _phi_ratio(z, logp):
    """``phi(z) / P`` and ``z phi(z) / P`` (0 at infinite ends)."""
    ratio = np.exp(-0.5 * z * z - _LOG_SQRT_2PI - np.maximum(logp, _MOMENT_LOG_FLOOR))
    with np.errstate(invalid="ignore"):
        z_ratio = np.where(np.isfinite(z), z * ratio, 0.0)
    return ratio, z_ratio


def interval_e_step(lower, upper, c, logw, mu, var) -> Stats:
    """E-step on intervals for every restart: the statistics :func:`.em.m_step` needs.

    Parameters
    ----------
    lower, upper : ndarray, shape (m,)
        Interval ends (shared by every row).
    c : ndarray, shape (m,) or (r, m)
        Counts, shared or one vector per row (bootstrap replicates).
    logw, mu, var : ndarray, shape (r, k)

    Returns
    -------
    Stats
        ``loglik`` (r,) is the interval log-likelihood; ``nk``, ``sd``, ``sdd``
        (r, k) are the responsibility-weighted sums of 1 and of the truncated
        first and second moments of ``X - mu`` over each interval.
    """
    r, k = mu.shape
    sd = np.sqrt(var)
    loglik = np.zeros(r)
    nk, s1, s2 = (np.zeros((r, k)) for _ in range(3))
    step = max(64, _CHUNK_ELEMENTS // max(1, r * k))
    for start in range(0, lower.shape[-1], step):
        cs = c[..., start:start + step]
        alpha = (lower[None, None, start:start + step] - mu[:, :, None]) / sd[:, :, None]
        beta = (upper[None, None, start:start + step] - mu[:, :, None]) / sd[:, :, None]
        logp = log_interval_mass(alpha, beta)
        lj = logw[:, :, None] + logp
        top = lj.max(axis=1)
        top = np.where(np.isfinite(top), top, 0.0)
        resp = np.exp(lj - top[:, None, :])
        total = resp.sum(axis=1)
        with np.errstate(divide="ignore"):
            row_loglik = top + np.log(total)
        loglik += np.einsum("rn,n->r" if cs.ndim == 1 else "rn,rn->r", row_loglik, cs)  # no BLAS threads: same bits on any thread count
        with np.errstate(divide="ignore", invalid="ignore"):
            resp *= np.where(total > 0, cs / total, 0.0)[:, None, :]
        pa, apa = _phi_ratio(alpha, logp)
        pb, bpb = _phi_ratio(beta, logp)
        nk += resp.sum(axis=2)
        s1 += sd * np.einsum("rkn,rkn->rk", resp, pa - pb)
        s2 += var * np.einsum("rkn,rkn->rk", resp, np.maximum(1.0 + apa - bpb, 0.0))
    return Stats(loglik, nk, s1, s2)


def _interval_log_masses(lower, upper, mixture: Mixture):
    """log(w_j P_ij), shape (m, k), in the data's units."""
    alpha = (lower[:, None] - mixture.means[None, :]) / mixture.sds[None, :]
    beta = (upper[:, None] - mixture.means[None, :]) / mixture.sds[None, :]
    with np.errstate(divide="ignore"):
        return np.log(mixture.weights)[None, :] + log_interval_mass(alpha, beta)


def interval_loglik(lower, upper, counts, mixture: Mixture) -> float:
    """Interval log-likelihood ``sum_i c_i log P(lower_i <= X < upper_i)`` of a mixture.

    Parameters
    ----------
    lower, upper, counts : ndarray, shape (m,)
    mixture : Mixture

    Returns
    -------
    float
    """
    lj = _interval_log_masses(np.asarray(lower, float), np.asarray(upper, float), mixture)
    top = lj.max(axis=1)
    return float(np.dot(counts, top + np.log(np.exp(lj - top[:, None]).sum(axis=1))))


def interval_posterior(lower, upper, mixture: Mixture) -> np.ndarray:
    """Posterior probability of each component given that the value lies in its interval.

    Returns
    -------
    ndarray, shape (m, k)
        Rows sum to 1.
    """
    lj = _interval_log_masses(np.asarray(lower, float), np.asarray(upper, float), mixture)
    lj -= lj.max(axis=1, keepdims=True)
    p = np.exp(lj)
    return p / p.sum(axis=1, keepdims=True)


def interval_e_step_on(lower, upper):
    """:func:`interval_e_step` bound to the given intervals, as :func:`.em.run_batch` calls it.

    The returned callable takes ``(x, c, logw, mu, var)`` and ignores ``x``
    (the representative values, used only for starts and labels).
    """
    def e_step(x, c, logw, mu, var):
        return interval_e_step(lower, upper, c, logw, mu, var)

    return e_step


def interval_plan(sample: Sample, model: FittedModel, method: str, seed: int,
                  settings: FitSettings):
    """The bootstrap plan of a model fitted to intervals (path ``"intervals"``).

    Resampling draws counts over the distinct observed intervals with their
    observed shares (path ``"intervals"``). The parametric bootstrap records
    values simulated from the fit as the data were recorded: counts over the
    observed intervals, the empty cells between them and the cells beyond
    (:func:`.recording_cells.recording_cells`, path ``"recording cells"``),
    with the fit's probabilities. When observed intervals overlap there is
    no such tiling; the counts are then drawn over the observed intervals
    with the fit's probabilities renormalised over them (path
    ``"observed intervals"``, which a note names as an approximation).

    Returns
    -------
    ReplicatePlan
        In the standardised units of :class:`_Standardised`.
    """
    from .replicates import ReplicatePlan

    data = _Standardised(sample, settings)
    mix = model.mixture
    reference = (mix.weights.copy(), (mix.means - data.center) / data.scale,
                 np.maximum((mix.sds / data.scale) ** 2, data.var_floor))
    support, lower, upper, path = data.x, data.lower, data.upper, "intervals"
    if method == "resample":
        p = data.c / data.n
    else:
        cells = recording_cells(sample.values, sample.lower, sample.upper, mix, sample.n, settings.max_bins)
        if cells is None:
            path = "observed intervals"
            p = np.exp(_interval_log_masses(sample.lower, sample.upper, mix))
            p = p.sum(axis=1) / p.sum()
        else:
            path, p = "recording cells", cells.probabilities
            support, lower, upper = ((a - data.center) / data.scale
                                     for a in (cells.values, cells.lower, cells.upper))
    return ReplicatePlan(method=method, path=path, support=support, probabilities=p,
                         n=int(round(sample.n)), k=mix.k, shared=model.widths == "shared",
                         reference=reference, var_floor=data.var_floor, center=data.center,
                         scale=data.scale, grid_step=None, grid_origin=float(data.x[0]),
                         seed=int(seed), settings=settings, lower=lower, upper=upper)


class _IntervalData:
    """Intervals in the units EM works in, with representative values, counts and the floor."""

    def __init__(self, x, c, lower, upper, var_floor):
        self.x, self.c, self.lower, self.upper = x, c, lower, upper
        self.n = float(c.sum())
        self.var_floor = var_floor
        self.e_step = interval_e_step_on(lower, upper)

    def trial_points(self, shared):
        """The interval likelihood at parameter rows, as :func:`.newton.newton_polish_batch` evaluates it."""
        def points(w, mu, sd):
            return IntervalTrialPoints(self.lower, self.upper, self.c, w, mu, sd, shared)

        return points


class _Standardised(_IntervalData):
    """Interval data in standard units (mean 0, sd 1 of the representative values)."""

    def __init__(self, sample: Sample, settings: FitSettings):
        center, scale = weighted_mean_sd(sample.values, sample.counts)
        self.center, self.scale = center, scale
        x = (sample.values - center) / scale
        spread = min(1.0, _robust_spread(x, sample.counts))
        super().__init__(x, sample.counts, (sample.lower - center) / scale,
                         (sample.upper - center) / scale, (settings.min_sd_fraction * spread) ** 2)


def fit_intervals(sample: Sample, k: int, widths: str, rng: np.random.Generator,
                  settings: FitSettings = FitSettings(), cancel=None) -> FittedModel:
    """Fit a k-component mixture to interval data by the interval likelihood.

    Parameters
    ----------
    sample : Sample
        From :func:`prepare_intervals` (``sample.lower`` set).
    k : int
    widths : {"separate", "shared"}
    rng : numpy.random.Generator
        Used for the starts only.
    settings : FitSettings
        ``restarts``, ``screen``, ``screen_steps``, ``tol``, the collapse rule
        and ``agree_tol`` apply as on the exact path.
    cancel : object with ``is_set()``, optional

    Returns
    -------
    FittedModel
        ``likelihood == "intervals"``; ``loglik`` is the interval
        log-likelihood (a sum of log probabilities, so it does not depend on
        the units) and BIC, AIC and ICL are computed from it.
    """
    if not sample.is_intervals:
        raise InputError("fit_intervals needs interval data; make it with prepare_intervals().")
    data = _Standardised(sample, settings)
    result = _restarts(data, k, widths == "shared", rng, settings, cancel)
    degenerate = degenerate_fits(result, data.var_floor, settings)
    best = _best_index(result.loglik, degenerate)
    agreeing = _count_agreeing(result.loglik, best, data.n, settings.agree_tol)
    # As on the exact path: values beyond the far-out fences that the collapsed components hold.
    suspects = _suspect_values(data, sample, result, best, settings) if degenerate[best] else ()
    return _finish(data, sample, result, best, k, widths, agreeing, int(result.loglik.size),
                   collapsed=bool(degenerate[best]), suspects=suspects)


def histogram_bins(x, c, bins: int, step: float | None = None, width: float | None = None):
    """Non-empty bins of a fine histogram of sorted values, aligned to their grid.

    Parameters
    ----------
    x : ndarray, shape (n,)
        Sorted values.
    c : ndarray, shape (n,)
        Their counts.
    bins : int
        About how many bins span the range (when ``width`` is not given).
    step : float, optional
        Grid step of the values: the bin edges then lie halfway between grid
        points and each bin holds a whole number of grid cells, so no recorded
        value sits on an edge and each bin is an exact interval of the data.
    width : float, optional
        Wanted bin width instead (rounded up to whole grid cells); only the
        non-empty bins are returned, so far-out values cost a bin each, not
        the range between them.

    Returns
    -------
    lower, upper, counts : ndarray, shape (m,)
        Edges and counts of the ``m`` non-empty bins.
    """
    lo, hi = float(x[0]), float(x[-1])
    if width is not None:
        return _sparse_bins(x, c, width, step)
    if step is not None and step > 0:
        cells = int(round((hi - lo) / step)) + 1
        per_bin = max(1, -(-cells // bins))
        width = per_bin * step
        edges = lo - 0.5 * step + width * np.arange(-(-cells // per_bin) + 1)
    else:
        edges = np.linspace(lo, hi, bins + 1)
        edges[-1] = np.nextafter(hi, np.inf)  # [a, b): the largest value inside the last bin
    cum = np.concatenate([[0.0], np.cumsum(c)])
    counts = np.diff(cum[np.searchsorted(x, edges, side="left")])
    keep = counts > 0
    return edges[:-1][keep], edges[1:][keep], counts[keep]


def _sparse_bins(x, c, width, step):
    """The non-empty bins of the given width (whole grid cells when ``step``), found value by value."""
    if step is not None and step > 0:
        width = max(1, int(np.ceil(width / step - 1e-9))) * step
        origin = float(x[0]) - 0.5 * step   # edges halfway between grid points
    else:
        origin = float(x[0])
    index = np.floor((x - origin) / width).astype(np.int64)
    starts = np.flatnonzero(np.r_[True, np.diff(index) > 0])
    lower = origin + index[starts] * width
    return lower, lower + width, np.add.reduceat(c, starts)


def _restarts(data, k, shared, rng, settings, cancel):
    """Screened starts, EM on all of them side by side, then certified Newton steps on the interval likelihood."""
    from .fitting import _run

    starts = _screened_starts(data, k, shared, rng, settings, cancel)
    return _run(data.x, data.c, data, k, shared, starts, settings, cancel,
                e_step_fn=data.e_step, points=data.trial_points(shared))


def _screened_starts(data, k, shared, rng, settings, cancel):
    """Starts on the representative values, screened by short interval-EM runs."""
    wanted = settings.restarts
    w, m, v = make_starts(data.x, data.c, k, wanted * settings.screen, rng, data.var_floor)
    if shared:
        v = np.repeat(np.average(v, axis=1, weights=w)[:, None], k, axis=1)
    if k == 1 or w.shape[0] <= wanted:
        return w, m, v
    short = run_batch(data.x, data.c, w, m, v, var_floor=data.var_floor, shared=shared,
                      cancel=cancel, e_step_fn=data.e_step,
                      settings=EMSettings(tol=1e-6, max_iter=settings.screen_steps))
    score = np.where(np.isfinite(short.loglik), short.loglik, -np.inf)
    keep = np.sort(np.argsort(-score, kind="stable")[:wanted])
    return short.weights[keep], short.means[keep], short.variances[keep]


def _finish(data, sample, result, best, k, widths, agreeing, restarts, collapsed, suspects=()):
    scale = data.scale
    mixture = Mixture(weights=result.weights[best],
                      means=data.center + scale * result.means[best],
                      sds=scale * np.sqrt(result.variances[best]))
    loglik = float(result.loglik[best])
    posterior = interval_posterior(sample.lower, sample.upper, mixture)
    entropy = criteria.posterior_entropy(posterior, sample.counts)
    converged = bool(result.converged[best])
    notes = []
    if not converged:
        notes.append(f"The interval fit did not meet the convergence rule within its step limits "
                     f"({int(result.iterations[best])} EM and Newton steps); treat this model with caution.")
    if collapsed:
        notes.append("Every restart ended with a component squeezed inside one interval "
                     "(a spurious maximum); this model is not a credible description.")
    if suspects:
        notes.append(outlier_note(suspects))
    return model_with_criteria(mixture, k, widths, loglik, data.n, entropy, converged=converged,
                               iterations=int(result.iterations[best]), restarts=restarts,
                               agreeing=agreeing, collapsed=collapsed, notes=notes,
                               likelihood="intervals", suspects=suspects)
