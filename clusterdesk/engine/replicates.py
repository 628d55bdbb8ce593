"""Bootstrap replicates: how their data are drawn, and their refits side by side.

Every replicate is refitted from the reference fit (same number of components,
same width variant) by EM on a whole batch at once, then finished with
certified Newton steps where EM did not converge, and judged by the collapse
rule of :mod:`.fitting`.  Work is in the standardised units of the reference
sample (:func:`.fitting.standardise`).

How a replicate's data are drawn (the *path*, reported with the result):

``"values"``
    Resampling, few distinct values: multinomial counts of ``n`` draws over
    the distinct values, which is resampling the values with replacement
    (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 6), so a
    batch of replicates is a batch of count vectors on the same values.
``"fine histogram"``
    Many distinct values (more than ``FitSettings.bin_above``): multinomial
    counts over a fine histogram of the values, which has the same
    distribution as resampling the raw values and then binning them.  For the
    parametric bootstrap the bin probabilities are those of the fitted
    mixture.  At least ``FitSettings.replicate_bins`` bins span the range and
    at least ``_BINS_PER_SD`` the narrowest component's
    standard deviation, so binning adds under 1/4800 of its variance
    (Sheppard's ``h**2 / 12``).  Replicates are refitted by the bins'
    midpoints; that small shift is then taken out: the sample's own bin
    counts are refitted the same way once, and the difference between the
    fit of the exact likelihood and that midpoint fit (the *binning offset*)
    is added to every replicate's refit, so the replicates scatter about the
    exact fit rather than about a midpoint fit.
``"grid"``
    Parametric bootstrap of values recorded on a grid (a resolution): counts
    over the grid cells with the fitted mixture's cell probabilities, so the
    simulated samples are rounded as the data were.
``"simulated values"``
    Parametric bootstrap of a small sample off any grid: ``n`` values drawn
    from the fitted mixture for every replicate, one row each.
``"intervals"``
    Resampling a model fitted to intervals (:mod:`.grouped`): multinomial
    counts over the distinct intervals with their observed shares, refitted
    by the interval likelihood; there is no Newton endgame on this path.
``"recording cells"``
    Parametric bootstrap of a model fitted to intervals: counts over the
    observed intervals, the empty cells between them and the cells beyond
    (:mod:`.recording_cells`), with the fit's probabilities, refitted as
    ``"intervals"``.
``"observed intervals"``
    The same when the observed intervals overlap and cannot be extended to a
    tiling: counts over the observed intervals only, with the fit's
    probabilities renormalised over them (an approximation, noted).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .em import EMSettings, run_batch
from .fitting import FitSettings, degenerate_fits, standardise
from .grouped import INTERVAL_MAX_ITER, interval_e_step_on, interval_plan
from .mixture import Mixture
from .newton import newton_polish
from .parallel import replicate_rng
from .recording_cells import cell_probabilities
from .resolution import detect_grid_step
from .validation import Sample

__all__ = ["ReplicatePlan", "RefitBatch", "plan_replicates", "draw_replicates", "refit_replicates",
           "binning_offset", "PURPOSE_RESAMPLE", "PURPOSE_PARAMETRIC"]

PURPOSE_RESAMPLE = 0x5EED01
PURPOSE_PARAMETRIC = 0x5EED02
_BINS_PER_SD = 20
_BATCH_ELEMENTS = 1 << 21     # replicates x values x components per batch (bounds memory)
_MAX_BATCH = 64


@dataclass(frozen=True)
class ReplicatePlan:
    """Everything needed to draw and refit replicates, in standardised units.

    Attributes
    ----------
    method : {"resample", "parametric"}
    path : str
        See the module docstring: "values", "fine histogram", "grid",
        "simulated values", "intervals", "recording cells" or "observed intervals".
    support : ndarray, shape (m,) or None
        Points the replicate counts are drawn over (None for simulated values).
    probabilities : ndarray, shape (m,) or None
        Probability of each support point.
    n : int
        Values per replicate (the sample size).
    k : int
    shared : bool
        One width for all components.
    reference : tuple of ndarray, each shape (k,)
        Weights, means and variances of the reference fit.
    var_floor : float
        Variance floor of the refits.
    center, scale : float
        ``original = center + scale * standardised``.
    grid_step : float or None
        Standardised grid step used to round simulated values, if any.
    grid_origin : float
        A standardised point of that grid (the smallest value).
    seed : int
    settings : FitSettings
    lower, upper : ndarray, shape (m,), or None
        Standardised ends of the support intervals when the model was fitted
        to intervals (path ``"intervals"``): counts are drawn over the
        intervals and refitted by the interval likelihood (:mod:`.grouped`).
    binning_offset : tuple of ndarray, each shape (k,), or None
        Path ``"fine histogram"``: weights, means and variances (standardised,
        the reference's order) to add to each replicate's midpoint refit; see
        :func:`binning_offset`. None on the other paths, or when the sample's
        own midpoint refit failed or moved too far to be a small correction.
    """

    method: str
    path: str
    support: np.ndarray | None
    probabilities: np.ndarray | None
    n: int
    k: int
    shared: bool
    reference: tuple
    var_floor: float
    center: float
    scale: float
    grid_step: float | None
    grid_origin: float
    seed: int
    settings: FitSettings
    lower: np.ndarray | None = None
    upper: np.ndarray | None = None
    binning_offset: tuple | None = None

    @property
    def support_size(self) -> int:
        """Number of support points (values per row for simulated values)."""
        return self.n if self.support is None else int(self.support.size)

    @property
    def batch_size(self) -> int:
        """Replicates per batch: fixed by the problem size, never by the number of workers."""
        rows = _BATCH_ELEMENTS // max(1, self.support_size * self.k)
        return int(min(_MAX_BATCH, max(4, rows)))

    def reference_mixture(self) -> Mixture:
        """The reference fit in standardised units."""
        return _mixture(self.reference)


def _mixture(parameters) -> Mixture:
    w, mu, var = parameters
    return Mixture(w, mu, np.sqrt(var))


@dataclass(frozen=True)
class RefitBatch:
    """Refits of one batch of replicates (standardised units, fit's own labels).

    Attributes
    ----------
    indices : ndarray of int, shape (r,)
    weights, means, variances : ndarray, shape (r, k)
    nk : ndarray, shape (r, k)
        Expected count in each component.
    loglik : ndarray, shape (r,)
    converged : ndarray of bool, shape (r,)
    collapsed : ndarray of bool, shape (r,)
        The collapse rule of :func:`.fitting.degenerate_fits` holds.
    """

    indices: np.ndarray
    weights: np.ndarray
    means: np.ndarray
    variances: np.ndarray
    nk: np.ndarray
    loglik: np.ndarray
    converged: np.ndarray
    collapsed: np.ndarray


def plan_replicates(sample: Sample, model, method: str, seed: int,
                    settings: FitSettings = FitSettings()) -> ReplicatePlan:
    """Choose how replicates of ``model`` on ``sample`` are drawn (see the module notes).

    Parameters
    ----------
    sample : Sample
        The validated values the model was fitted to.
    model : FittedModel
    method : {"resample", "parametric"}
    seed : int
    settings : FitSettings

    Returns
    -------
    ReplicatePlan
    """
    if sample.is_intervals:
        return interval_plan(sample, model, method, seed, settings)
    data = standardise(sample, settings)
    mix = model.mixture
    reference = (mix.weights.copy(), (mix.means - data.center) / data.scale,
                 np.maximum((mix.sds / data.scale) ** 2, data.var_floor))
    common = dict(method=method, n=int(round(sample.n)), k=mix.k, shared=model.widths == "shared",
                  reference=reference, center=data.center, scale=data.scale, seed=int(seed),
                  settings=settings, grid_origin=float(data.x[0]))
    min_sd = float(np.sqrt(reference[2].min()))
    if method == "resample":
        plan = _resample_plan(sample, data, min_sd, settings, common)
    else:
        plan = _parametric_plan(sample, data, min_sd, settings, common)
    if plan.path == "fine histogram":
        plan = replace(plan, binning_offset=binning_offset(plan))
    return plan


#: A binning offset larger than this (weights; means in standard deviations;
#: variances relative) is not a small correction: the plan then goes without.
#: The plans' bins (at least 20 per standard deviation) shift variances by
#: under 0.03 %; bins of half a standard deviation shift them by about 2 %.
_OFFSET_LIMIT = 0.05


def binning_offset(plan: ReplicatePlan):
    """The reference fit minus its refit by the bins' midpoints on the sample's own bin counts.

    Fitting bin midpoints instead of values widens each component's variance
    by about ``h**2 / 12`` (Sheppard 1898) and shifts the other parameters
    slightly. The replicates of the fine histogram are fitted that way, so
    their refits scatter about the midpoint fit of the sample, not about its
    exact fit; adding this difference to each of them recentres them (to
    first order, the shift is the same for every replicate, as they all lie
    close to the reference).

    Parameters
    ----------
    plan : ReplicatePlan
        A plan on path ``"fine histogram"`` (its bin probabilities times
        ``n`` are the sample's bin counts for resampling, the fit's expected
        counts for the parametric bootstrap).

    Returns
    -------
    tuple (weights, means, variances) of ndarray, each shape (k,), or None
        None when the midpoint refit did not converge, collapsed, or moved a
        weight, a mean (in standard deviations) or a variance (relatively) by
        more than 5 %.
    """
    counts = (plan.probabilities * plan.n)[None, :]
    fit = refit_replicates(plan, np.array([0]), plan.support, counts)
    if fit.collapsed[0] or not fit.converged[0]:
        return None
    w, mu, var = plan.reference
    offset = (w - fit.weights[0], mu - fit.means[0], var - fit.variances[0])
    sd = np.sqrt(var)
    moved = max(np.abs(offset[0]).max(), (np.abs(offset[1]) / sd).max(), (np.abs(offset[2]) / var).max())
    return offset if moved <= _OFFSET_LIMIT else None


def _resample_plan(sample, data, min_sd, settings, common) -> ReplicatePlan:
    """Counts over the distinct values, or over a fine histogram when there are many."""
    if sample.n_distinct <= settings.bin_above:
        support, counts = _distinct(data.x, data.c)
        return ReplicatePlan(path="values", support=support, probabilities=counts / counts.sum(),
                             var_floor=data.var_floor, grid_step=None, **common)
    edges = _edges(data.x[0], data.x[-1], min_sd, settings)
    counts = np.histogram(data.x, bins=edges, weights=data.c)[0]
    return _binned_plan(edges, counts, data.var_floor, common)


def _parametric_plan(sample, data, min_sd, settings, common) -> ReplicatePlan:
    """Grid cells for rounded values, simulated values for small samples, else a fine histogram.

    The support spans the data and the fit's central ``1 - 2e-3/n`` probability.
    """
    ref_mix = _mixture(common["reference"])
    tail = min(1e-3, 1e-3 / common["n"])
    lo = min(data.x[0], float(ref_mix.quantile(tail)))
    hi = max(data.x[-1], float(ref_mix.quantile(1.0 - tail)))
    step = detect_grid_step(sample.values)
    grid_step = None if step is None else step / data.scale
    if grid_step is not None:
        first = data.x[0] + grid_step * math.floor((lo - data.x[0]) / grid_step)
        cells = int(math.ceil((hi - first) / grid_step)) + 1
        if cells <= settings.max_bins:
            points = first + grid_step * np.arange(cells)
            edges = np.concatenate([points - 0.5 * grid_step, [points[-1] + 0.5 * grid_step]])
            return ReplicatePlan(path="grid", support=points,
                                 probabilities=cell_probabilities(ref_mix, edges),
                                 var_floor=data.var_floor, grid_step=grid_step, **common)
    if common["n"] <= settings.bin_above:
        return ReplicatePlan(path="simulated values", support=None, probabilities=None,
                             var_floor=data.var_floor, grid_step=grid_step, **common)
    edges = _edges(lo, hi, min_sd, settings)
    return _binned_plan(edges, cell_probabilities(ref_mix, edges), data.var_floor, common)


def _distinct(x, c):
    starts = np.flatnonzero(np.r_[True, np.diff(x) > 0])
    return x[starts], np.add.reduceat(c, starts)


def _edges(lo, hi, min_sd, settings):
    wanted = math.ceil(_BINS_PER_SD * (hi - lo) / min_sd)
    bins = int(min(settings.max_bins, max(settings.replicate_bins, wanted)))
    return np.linspace(lo, hi, bins + 1)


def _binned_plan(edges, weights, var_floor, common):
    """A plan over the non-empty bins; the bin width sets the floor as in fitting's binned stage."""
    keep = weights > 0
    centres = 0.5 * (edges[1:] + edges[:-1])
    width = edges[1] - edges[0]
    probabilities = weights[keep] / weights[keep].sum()
    return ReplicatePlan(path="fine histogram", support=centres[keep], probabilities=probabilities,
                         var_floor=max(var_floor, width * width), grid_step=None, **common)


def draw_replicates(plan: ReplicatePlan, indices):
    """The data of the given replicates.

    Parameters
    ----------
    plan : ReplicatePlan
    indices : ndarray of int, shape (r,)
        Replicate numbers; replicate ``b`` always gets the same data for the
        same seed (its own stream, :func:`.parallel.replicate_rng`).

    Returns
    -------
    x : ndarray, shape (m,) or (r, n)
        The support (shared), or one row of simulated values per replicate.
    c : ndarray, shape (r, m) or (n,)
        Counts per replicate over the support, or ones for simulated values.
    """
    purpose = PURPOSE_RESAMPLE if plan.method == "resample" else PURPOSE_PARAMETRIC
    rngs = [replicate_rng(plan.seed, purpose, b) for b in indices]
    if plan.support is not None:
        counts = np.array([rng.multinomial(plan.n, plan.probabilities) for rng in rngs],
                          dtype=np.float64)
        return plan.support, counts
    mixture = plan.reference_mixture()
    values = np.array([mixture.sample(rng, plan.n) for rng in rngs])
    if plan.grid_step is not None:
        origin = plan.grid_origin
        values = origin + np.round((values - origin) / plan.grid_step) * plan.grid_step
    return values, np.ones(plan.n)


def refit_replicates(plan: ReplicatePlan, indices, x, c, cancel=None) -> RefitBatch:
    """Refit a batch of replicates from the reference fit, side by side.

    EM (SQUAREM, :func:`.em.run_batch`) runs on every replicate at once to the
    final tolerance ``settings.tol``; replicates that reach the iteration cap
    are finished with certified Newton steps (:func:`.newton.newton_polish`).

    Parameters
    ----------
    plan : ReplicatePlan
    indices : ndarray of int, shape (r,)
    x, c : ndarray
        From :func:`draw_replicates`.
    cancel : object with ``is_set()``, optional

    Returns
    -------
    RefitBatch
    """
    r = len(indices)
    w0, m0, v0 = (np.tile(a, (r, 1)) for a in plan.reference)
    settings = plan.settings
    em = EMSettings(tol=settings.tol, max_iter=settings.em.max_iter)
    if plan.lower is not None:
        em = EMSettings(tol=settings.tol, max_iter=INTERVAL_MAX_ITER)
    result = run_batch(x, c, w0, m0, v0, n=float(plan.n), var_floor=plan.var_floor,
                       shared=plan.shared, settings=em, cancel=cancel,
                       e_step_fn=None if plan.lower is None else interval_e_step_on(plan.lower, plan.upper))
    for i in np.flatnonzero(~result.converged if plan.lower is None else []):
        _polish(result, i, x, c, plan, cancel)
    collapsed = degenerate_fits(result, plan.var_floor, settings)
    return RefitBatch(indices=np.asarray(indices), weights=result.weights, means=result.means,
                      variances=result.variances, nk=result.nk, loglik=result.loglik,
                      converged=result.converged, collapsed=collapsed)


def _polish(result, i, x, c, plan, cancel):
    """Newton steps for replicate ``i`` of the batch where EM ran out of iterations."""
    n = float(plan.n)
    if not np.isfinite(result.loglik[i]) or np.any(result.nk[i] < 1e-6 * n):
        return  # a dead component: degenerate, nothing to certify
    xi = x[i] if x.ndim == 2 else x
    ci = c[i] if c.ndim == 2 else c
    used = ci > 0
    end = newton_polish(xi[used], ci[used], result.weights[i], result.means[i],
                        result.variances[i], shared=plan.shared, var_floor=plan.var_floor,
                        tol_abs=plan.settings.tol * n, max_steps=plan.settings.newton_steps,
                        cancel=cancel)
    if end.loglik >= result.loglik[i]:
        result.weights[i], result.means[i], result.variances[i] = (
            end.weights, end.means, end.variances)
        result.loglik[i], result.nk[i] = end.loglik, end.nk
    result.converged[i] = end.converged
