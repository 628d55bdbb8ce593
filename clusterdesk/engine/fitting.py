"""Fit one mixture model (k components, one width variant) to a sample.

The steps, in order:

1. standardise the values (mean 0, standard deviation 1) so that tiny and
   huge scales behave alike;
2. choose the variance floor: a small fraction of a robust spread, and never
   below the variance of rounding (h**2 / 12, Sheppard 1898) when the values
   lie on a grid of step h;
3. make the starts and run EM on all restarts side by side, then certified
   Newton steps; when the sample has many distinct values, first on a
   histogram of the values aligned to their recording grid, each bin fitted
   as an interval (the likelihood of :mod:`.grouped`, whose cost does not
   grow with n), on finer bins when a component is narrow, then polish the
   best distinct solutions on the raw values, so the reported fit is a
   maximum of the exact likelihood (:mod:`.histogram_stage`);
4. apply the collapse rule: a restart that ends with a component at the
   variance floor, with fewer than ``min_count`` expected observations, or
   with a spike (a small component far narrower than the widest, see
   :func:`has_spike`) is a degenerate solution of the unbounded likelihood; the best non-degenerate
   restart is reported (McLachlan & Peel 2000, Finite Mixture Models, §3.10,
   from memory: prefer the largest local maximum that is not spurious), and
   the model is flagged ``collapsed`` only when every restart degenerated.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import criteria
from ..errors import Cancelled
from .em import EMSettings, run_batch
from .newton import newton_polish_batch
from .outliers import far_out_fences, held_values, outlier_note
from .mixture import Mixture
from .resolution import detect_grid_step
from .starts import make_starts
from .validation import Sample, weighted_mean_sd

__all__ = ["FitSettings", "FittedModel", "fit_model", "degenerate_fits", "has_spike", "standardise"]


@dataclass(frozen=True)
class FitSettings:
    """How one model is fitted.

    Parameters
    ----------
    restarts : int, default 10
        Starting points per model.
    em : EMSettings
        Tolerance, iteration cap and acceleration of the EM phase, which
        hands over to Newton steps once its gains per cycle are small.
    tol : float, default 1e-10
        Final convergence: certified remaining log-likelihood gain per unit of count.
    newton_steps : int, default 500
        Cap on Newton trial points per restart (on the values themselves).
    binned_newton_steps : int, default 2000
        The same cap on the histogram, where a step costs little: walking a
        flat ridge to its end there leaves the polish on the raw values a
        short walk.
    screen : int, default 3
        ``screen * restarts`` starts are made; short EM runs of
        ``screen_steps`` steps keep the best ``restarts`` for full fits.
    screen_steps : int, default 30
    spike_weight, spike_sd_ratio : float, default 0.01 and 0.05
        A component with less weight than ``spike_weight`` and a standard
        deviation below ``spike_sd_ratio`` times the widest is a spike
        (see :func:`has_spike`); a restart ending with one is degenerate.
    min_sd_fraction : float, default 1e-3
        Variance floor as a fraction of the sample's robust spread (squared).
    min_count : float, default 2.0
        A component expected to hold fewer observations than this has collapsed.
    bin_above : int, default 4000
        Samples with more distinct values than this are first fitted on a
        histogram of ``bins`` bins, then polished on the raw values.
    bins : int, default 128
        About how many bins span the sample's range; see ``bins_per_spread``.
    bins_per_spread : int, default 16
        The bin width is at most the robust spread (interquartile range / 1.349)
        divided by this, so far-out values (which only add a non-empty bin
        each) do not coarsen the bins of the bulk. These first bins are
        coarse on purpose: they are fitted by the likelihood of intervals,
        which has no midpoint bias at any width, and a component narrower
        than 10 of them sends the candidates on to bins of 1/20 of its
        standard deviation (``bins_per_narrowest_sd``). Measured on the
        large-sample benchmark's values (k = 1..8, both width variants, one
        thread, the variants taking turns): at 10^7 values 12.7 and 13.6 s of
        CPU, against 11.1 and 13.7 s for 512 bins of 1/64 of the spread
        fitted by their midpoints (and 38 s for 512 bins fitted as intervals);
        at 10^6 values about 12.3 s against 6.3 s. The polished
        log-likelihoods were the same (within 0.001) for every model with up
        to four components and for the shared-width models; the overfitted
        separate-width models (five to eight components) ended on other local
        maxima (4.1 lower to 2.7 higher).
    bins_likelihood : {"intervals", "midpoints"}, default "intervals"
        How the histogram stage fits its bins: each bin as the interval of
        values it holds (the likelihood of :mod:`.grouped`, with EM and
        Newton steps on it), or each bin as its count of values at its
        midpoint (a proxy whose variances are inflated by about
        ``width**2 / 12``, Sheppard 1898). Either way the candidates are
        then polished on the raw values.
    bins_per_narrowest_sd : int, default 20
        When the best histogram solution has a component narrower than 10 bin
        widths, the histogram stage is run again from its candidates on bins
        of this fraction of that component's standard deviation (at most
        ``max_bins`` non-empty bins), up to three times, so that every
        component is fitted on bins small against it. When every candidate
        then collapses on the raw values, the restarts set aside on the
        coarse bins (a component at their floor of one bin width) take the
        same path. The width used is reported (``FittedModel.bin_width``).
    max_bins : int, default 16384
        Most non-empty bins of any histogram, here and in the bootstrap
        (the width is doubled until they fit).
    replicate_bins : int, default 2048
        Fewest bins that span the bootstrap's fine histogram (see
        :mod:`.replicates`).
    polish : int, default 3
        How many distinct histogram solutions are polished on the raw values
        at most: the best, and the next ones only when their histogram
        log-likelihood is within ``polish_within`` of the best.
    polish_within : float, default 1.0
        Log-likelihood (absolute) within which a histogram solution may still
        overtake the best one once polished. Further ones are not polished:
        each polish step costs a pass over every distinct value. On the large-
        sample benchmark's data (10^5 and 10^6 values, k = 1..8, both width
        variants) the best histogram solution polished to the best raw one
        for every model.
    agree_tol : float, default 1e-6
        Restarts whose log-likelihood is within ``agree_tol * n`` of the best
        count as having reached it.
    """

    restarts: int = 10
    em: EMSettings = EMSettings(tol=1e-6, max_iter=600)
    tol: float = 1e-10
    newton_steps: int = 500
    binned_newton_steps: int = 2000
    screen: int = 3
    screen_steps: int = 30
    spike_weight: float = 0.01
    spike_sd_ratio: float = 0.05
    min_sd_fraction: float = 1e-3
    min_count: float = 2.0
    bin_above: int = 4000
    bins: int = 128
    bins_per_spread: int = 16
    bins_per_narrowest_sd: int = 20
    max_bins: int = 16384
    replicate_bins: int = 2048
    bins_likelihood: str = "intervals"
    polish: int = 3
    polish_within: float = 1.0
    agree_tol: float = 1e-6

    def __post_init__(self):
        if self.bins_likelihood not in ("intervals", "midpoints"):
            raise ValueError(f"bins_likelihood must be 'intervals' or 'midpoints', not "
                             f"{self.bins_likelihood!r}.")


@dataclass(frozen=True)
class FittedModel:
    """One fitted mixture model and what is known about the fit.

    Attributes
    ----------
    mixture : Mixture
        Weights, means and standard deviations, components sorted by mean.
    k : int
    widths : {"separate", "shared"}
    loglik : float
        Maximised log-likelihood of the values (densities in the values' units).
    n : float
        Sample size (sum of counts).
    n_params : int
        Free parameters: 3k-1 (separate widths) or 2k (shared width).
    bic, aic, icl : float
        Criteria, lower is better.
    entropy : float
        Entropy of the posterior probabilities, ``-sum c_i r_ij ln r_ij``.
    converged : bool
        The chosen restart met the convergence rule within the iteration cap.
    iterations : int
        EM map evaluations used by the chosen restart (histogram stage included).
    restarts : int
        Starts tried.
    restarts_agreeing : int
        Starts that reached the chosen log-likelihood (a trust signal).
    collapsed : bool
        Every restart ended degenerate; the numbers describe a spurious fit.
    notes : tuple of str
        Plain-words remarks on the fit (no convergence, collapse, ...).
    likelihood : {"exact", "intervals"}, default "exact"
        Which likelihood was maximised: of exact values (densities), or of
        intervals (probabilities of ``[a, b)``, :mod:`.grouped`).
    suspect_values : tuple of float
        When the model collapsed onto values far outside the rest of the
        sample, those values (see :mod:`.outliers`); empty otherwise.
    bin_width : float or None, default None
        When the model was found on a histogram first and then polished on
        the values themselves: the width of its bins, in the values' units
        (None when fitted on the values directly).
    """

    mixture: Mixture
    k: int
    widths: str
    loglik: float
    n: float
    n_params: int
    bic: float
    aic: float
    icl: float
    entropy: float
    converged: bool
    iterations: int
    restarts: int
    restarts_agreeing: int
    collapsed: bool
    notes: tuple = ()
    likelihood: str = "exact"
    suspect_values: tuple = ()
    bin_width: float | None = None

    @property
    def min_weight(self) -> float:
        """Smallest component weight."""
        return float(self.mixture.weights.min())


@dataclass(frozen=True)
class _Standardised:
    x: np.ndarray
    c: np.ndarray
    n: float
    center: float
    scale: float
    var_floor: float
    step: float | None = None  # grid step of the values, standardised (None: no grid)
    spread: float = 1.0  # robust spread (interquartile range / 1.349), standardised


def standardise(sample: Sample, settings: FitSettings) -> _Standardised:
    """Centre and scale the sample; set the variance floor in standard units."""
    x, c, n = sample.values, sample.counts, sample.n
    center, scale = weighted_mean_sd(x, c)
    z = (x - center) / scale
    spread = _robust_spread(z, c)
    floor_sd = settings.min_sd_fraction * min(1.0, spread)
    step = detect_grid_step(x)
    if step is not None:
        floor_sd = max(floor_sd, step / scale / np.sqrt(12.0))
    return _Standardised(z, c, n, center, scale, floor_sd**2, None if step is None else step / scale, spread)


def _robust_spread(z, c):
    cum = np.cumsum(c) / c.sum()
    q1, q3 = z[np.searchsorted(cum, 0.25)], z[min(np.searchsorted(cum, 0.75), z.size - 1)]
    iqr = (q3 - q1) / 1.349
    return float(iqr) if iqr > 0 else 1.0


def fit_model(sample: Sample, k: int, widths: str, rng: np.random.Generator,
              settings: FitSettings = FitSettings(), cancel=None) -> FittedModel:
    """Fit a k-component mixture with the given width variant.

    Parameters
    ----------
    sample : Sample
        Validated values and counts.
    k : int
        Number of components (checked by the caller against the sample).
    widths : {"separate", "shared"}
    rng : numpy.random.Generator
        Used for the starts only.
    settings : FitSettings
    cancel : object with ``is_set()``, optional

    Returns
    -------
    FittedModel
    """
    if sample.is_intervals:
        from .grouped import fit_intervals  # interval data: the likelihood of McLachlan & Jones

        return fit_intervals(sample, k, widths, rng, settings, cancel)
    data = standardise(sample, settings)
    shared = widths == "shared"
    bin_width = None
    if sample.n_distinct > settings.bin_above:
        from .histogram_stage import fit_binned_then_polish  # many distinct values: bins first

        result, agreeing, used, bin_width = fit_binned_then_polish(data, k, shared, rng, settings, cancel)
    else:
        starts = _screened_starts(data.x, data.c, k, shared, rng, data.var_floor, settings, cancel)
        result = _run(data.x, data.c, data, k, shared, starts, settings, cancel)
        agreeing, used = None, 0
    degenerate = degenerate_fits(result, data.var_floor, settings)
    best = _best_index(result.loglik, degenerate)
    if agreeing is None:
        agreeing = _count_agreeing(result.loglik, best, data.n, settings.agree_tol)
    restarts = int(result.loglik.size) if used == 0 else used
    suspects = _suspect_values(data, sample, result, best, settings) if degenerate[best] else ()
    return _finish(data, sample, result, best, k, widths, agreeing, restarts,
                   collapsed=bool(degenerate[best]), suspects=suspects,
                   bin_width=None if bin_width is None else bin_width * data.scale)


def _suspect_values(data, sample, result, best, settings):
    """Values beyond the far-out fences that the collapsed components of ``best`` hold."""
    weights, variances, nk = result.weights[best], result.variances[best], result.nk[best]
    culprits = _degenerate_components(weights, variances, nk, data.var_floor, settings)
    if not culprits.any() or not np.all(np.isfinite(variances)):
        return ()
    held = held_values(sample.values, weights, data.center + data.scale * result.means[best],
                       data.scale * np.sqrt(variances), culprits)
    lower, upper = far_out_fences(sample.values, sample.counts)
    if held.size == 0 or np.any((held >= lower) & (held <= upper)):
        return ()
    return tuple(float(v) for v in held)


def _screened_starts(x, c, k, shared, rng, var_floor, settings, cancel, e_step_fn=None):
    """Short EM runs from ``screen`` times as many starts; keep the best ``restarts``.

    The "short runs" strategy of Biernacki, Celeux & Govaert (2003, Comput.
    Statist. Data Anal. 41:561-575): a few EM cycles tell promising starts from
    hopeless ones at a fraction of the cost of full runs.
    """
    wanted = settings.restarts
    w, m, v = make_starts(x, c, k, wanted * settings.screen, rng, var_floor)
    if k == 1 or w.shape[0] <= wanted:
        return w, m, v
    if shared:
        v = np.repeat(np.average(v, axis=1, weights=w)[:, None], k, axis=1)
    short = run_batch(x, c, w, m, v, var_floor=var_floor, shared=shared, cancel=cancel,
                      settings=EMSettings(tol=1e-6, max_iter=settings.screen_steps), e_step_fn=e_step_fn)
    keep = np.sort(np.argsort(-np.where(np.isfinite(short.loglik), short.loglik, -np.inf),
                              kind="stable")[:wanted])
    return short.weights[keep], short.means[keep], short.variances[keep]


def _run(x, c, data, k, shared, starts, settings, cancel, var_floor=None, max_steps=None,
         e_step_fn=None, points=None):
    """EM on every start side by side, then certified Newton steps on all of them side by side.

    ``e_step_fn`` and ``points`` choose another likelihood (intervals:
    :mod:`.grouped`); by default the one of exact values ``x`` with counts ``c``.
    """
    floor = data.var_floor if var_floor is None else var_floor
    max_steps = settings.newton_steps if max_steps is None else max_steps
    w0, m0, v0 = starts
    if shared:
        v0 = np.repeat(np.average(v0, axis=1, weights=w0)[:, None], k, axis=1)
    n = float(c.sum())
    result = run_batch(x, c, w0, m0, v0, n=n, var_floor=floor, shared=shared,
                       settings=settings.em, cancel=cancel, e_step_fn=e_step_fn)
    if cancel is not None and cancel.is_set():
        raise Cancelled("The fit was cancelled.")
    # A restart with a dead component is degenerate: nothing to certify.
    alive = np.flatnonzero(np.isfinite(result.loglik) & np.all(result.nk >= 1e-6 * n, axis=1))
    ends = newton_polish_batch(x, c, result.weights[alive], result.means[alive], result.variances[alive],
                               shared=shared, var_floor=floor, tol_abs=settings.tol * n,
                               max_steps=max_steps, cancel=cancel, points=points) if alive.size else []
    if cancel is not None and cancel.is_set():
        raise Cancelled("The fit was cancelled.")
    for i, end in zip(alive, ends):
        if end.loglik >= result.loglik[i]:
            result.weights[i], result.means[i], result.variances[i] = (
                end.weights, end.means, end.variances)
            result.loglik[i], result.nk[i] = end.loglik, end.nk
        result.converged[i] = end.converged
        result.iterations[i] += end.steps
    return result


def degenerate_fits(result, var_floor, settings):
    """Rows (restarts or bootstrap replicates) that ended on a spurious maximum.

    The collapse rule: a component at the variance floor, with fewer than
    ``settings.min_count`` expected observations, a spike (:func:`has_spike`),
    or a log-likelihood that is not finite.

    Parameters
    ----------
    result : BatchResult-like
        With ``weights``, ``variances``, ``nk`` of shape (r, k) and ``loglik`` (r,).
    var_floor : float
        The variance floor the rows were fitted with.
    settings : FitSettings

    Returns
    -------
    ndarray of bool, shape (r,)
    """
    return np.any(_degenerate_components(result.weights, result.variances, result.nk,
                                         var_floor, settings), axis=-1) \
        | ~np.isfinite(result.loglik)


def _degenerate_components(weights, variances, nk, var_floor, settings):
    """Components, shape (..., k), that trigger the collapse rule: floor, too few, spike."""
    at_floor = variances <= var_floor * (1.0 + 1e-6)
    too_small = nk < settings.min_count
    return at_floor | too_small | _spikes(weights, np.sqrt(variances), settings)


def has_spike(weights, sds, settings: "FitSettings"):
    """Whether a fit has a spike: a small component much narrower than the widest.

    A component holding less than ``settings.spike_weight`` of the sample with
    a standard deviation under ``settings.spike_sd_ratio`` times the largest
    one is "a component with a relatively small mixing proportion and a
    relatively small variance, fitting a small number of points lying close
    together" (the description of spurious maximisers in McLachlan & Peel
    2000, §3.10, quoted from memory).

    Parameters
    ----------
    weights, sds : ndarray, shape (..., k)

    Returns
    -------
    ndarray of bool, shape (...)
    """
    return np.any(_spikes(weights, sds, settings), axis=-1)


def _spikes(weights, sds, settings):
    widest = sds.max(axis=-1, keepdims=True)
    return (weights < settings.spike_weight) & (sds < settings.spike_sd_ratio * widest)


def _best_index(loglik, degenerate):
    candidates = np.where(degenerate, -np.inf, loglik)
    if np.isfinite(candidates).any():
        return int(np.argmax(candidates))
    return int(np.argmax(np.where(np.isfinite(loglik), loglik, -np.inf)))


def _count_agreeing(loglik, best, n, tol):
    return int(np.sum(np.abs(loglik - loglik[best]) <= tol * n + 1e-9))


def _finish(data, sample, result, best, k, widths, agreeing, restarts, collapsed, suspects=(), bin_width=None):
    scale = data.scale
    mixture = Mixture(weights=result.weights[best],
                      means=data.center + scale * result.means[best],
                      sds=scale * np.sqrt(result.variances[best]))
    loglik = float(result.loglik[best]) - data.n * np.log(scale)
    entropy = criteria.posterior_entropy(mixture.posterior(sample.values), sample.counts)
    notes = []
    converged = bool(result.converged[best])
    if not converged:
        notes.append(f"The fit did not meet the convergence rule within its step limits "
                     f"({int(result.iterations[best])} EM and Newton steps); treat this model "
                     "with caution.")
    if collapsed:
        notes.append("Every restart ended with a component squeezed onto a few values "
                     "(a spurious maximum); this model is not a credible description.")
    if suspects:
        notes.append(outlier_note(suspects))
    return model_with_criteria(mixture, k, widths, loglik, data.n, entropy, converged=converged,
                               iterations=int(result.iterations[best]), restarts=restarts,
                               agreeing=agreeing, collapsed=collapsed, notes=notes,
                               suspects=suspects, bin_width=bin_width)


def model_with_criteria(mixture, k, widths, loglik, n, entropy, *, converged, iterations, restarts,
                        agreeing, collapsed, notes, likelihood="exact", suspects=(),
                        bin_width=None) -> FittedModel:
    """A :class:`FittedModel` with its parameter count, BIC, AIC and ICL computed."""
    n_params = criteria.n_parameters(k, widths)
    bic = criteria.bic(loglik, n_params, n)
    return FittedModel(mixture=mixture, k=k, widths=widths, loglik=loglik, n=n,
                       n_params=n_params, bic=bic, aic=criteria.aic(loglik, n_params),
                       icl=criteria.icl(bic, entropy), entropy=entropy, converged=converged,
                       iterations=iterations, restarts=restarts, restarts_agreeing=agreeing,
                       collapsed=collapsed, notes=tuple(notes), likelihood=likelihood,
                       suspect_values=tuple(suspects), bin_width=bin_width)
