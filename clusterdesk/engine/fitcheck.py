"""Goodness of fit: Q-Q points and the Kolmogorov-Smirnov distance to the fitted mixture.

The Kolmogorov-Smirnov distance is the largest gap between the data's
distribution function and the mixture's, ``D = sup |F_n(x) - F(x)|``.  Its
p-value from the Kolmogorov distribution (``scipy.stats.kstwo``) assumes a
distribution fixed in advance; for a mixture fitted to the same values it is
too large, as for the normal distribution with estimated parameters
(Lilliefors 1967, JASA 62:399-402), so a large p-value is weak reassurance and
the wording says "no clear sign of misfit", never "fits".  A parametric
bootstrap of ``D`` with the model refitted to every simulated sample gives a
p-value that allows for the fitting (:func:`fit_check_bootstrap`).

Values recorded on a coarse grid have ties that a continuous distribution
cannot have; there the distance is measured against the mixture rounded to
the same grid (cell probabilities), which is what rounded values can follow.

Readings the fit used as censored (below a detection limit, above a
reporting limit) belong to the data's distribution too: a reading below a
limit ``L`` lies below every value at or above ``L``. The empirical
distribution counts them there, over all ``n`` readings, and the distance is
taken only at values where every censored reading is known to lie on one
side; leaving them out would compare the kept values (a share of the sample)
with a mixture fitted to the whole, and show a misfit that is not there.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import numbers
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr

from ..errors import InputError
from .fitting import FittedModel
from .mixture import Mixture
from .treatment import interval_offsets
from .parallel import check_seed, check_workers, index_batches, run_batches
from .replicates import draw_replicates, plan_replicates, refit_replicates
from .resolution import detect_grid_step
from .validation import Sample, prepare_sample

__all__ = ["FitCheck", "goodness_of_fit", "fit_check_bootstrap", "ks_distance"]


@dataclass(frozen=True, eq=False)
class FitCheck:
    """How closely the data follow a fitted mixture.

    Attributes
    ----------
    plotting_positions : ndarray, shape (m,)
        ``(i - 0.5) / n`` for each distinct value, ``i`` its mid-rank (counts included).
    theoretical : ndarray, shape (m,)
        Mixture quantiles at the plotting positions (Q-Q plot, x axis).
    observed : ndarray, shape (m,)
        The distinct values, ascending (Q-Q plot, y axis).
    ks_distance : float
        ``sup |F_n - F|`` against the continuous mixture.
    ks_location : float
        A value where the largest gap of the verdict (``verdict_distance``) occurs.
    ks_p_value : float
        Kolmogorov p-value of the distance used for the verdict (optimistic
        for a fitted model, see the module notes).
    grid_step : float or None
        Recording step of the values, if they lie on a grid.
    rounded : bool
        The verdict compares with the mixture rounded to that grid (values
        with ties on a grid); ``verdict_distance`` is then that distance.
    verdict_distance : float
    n : float
        Number of readings (sum of counts), censored ones included.
    bootstrap_p_value : float
        Share of refitted simulated samples with a distance at least as large
        (``(1 + #) / (1 + B)``); NaN when not computed.
    bootstrap_replicates : int
    verdict : str
        Plain words for a report.
    censored : float
        Readings beyond a limit counted in the data's distribution (0 when none).
    """

    plotting_positions: np.ndarray
    theoretical: np.ndarray
    observed: np.ndarray
    ks_distance: float
    ks_location: float
    ks_p_value: float
    grid_step: float | None
    rounded: bool
    verdict_distance: float
    n: float
    bootstrap_p_value: float = math.nan
    bootstrap_replicates: int = 0
    verdict: str = ""
    censored: float = 0.0


def ks_distance(cum_before, cum_after, cdf_lower, cdf_upper):
    """Largest gap between an empirical and a model distribution function, row by row.

    Parameters
    ----------
    cum_before, cum_after : ndarray, shape (..., m)
        Empirical distribution just below and at each distinct value, ascending.
    cdf_lower, cdf_upper : ndarray, shape (..., m)
        Model distribution function compared with them: both ``F(x)`` for a
        continuous model; ``F(x - h/2)`` and ``F(x + h/2)`` for one rounded to
        a grid of step ``h``.

    Returns
    -------
    distance : ndarray, shape (...)
    position : ndarray of int, shape (...)
        Index of the value where it occurs.
    """
    gaps = np.maximum(np.abs(cum_after - cdf_upper), np.abs(cdf_lower - cum_before))
    return gaps.max(axis=-1), gaps.argmax(axis=-1)


def _empirical(sample: Sample, censored=None):
    """Distinct values, their counts, the empirical distribution below and at each, and where it is known.

    Returns
    -------
    x, c : ndarray, shape (m,)
    before, after : ndarray, shape (m,)
        ``F_n(x-)`` and ``F_n(x)`` over every reading, censored ones included.
    known : ndarray of bool, shape (m,)
        No censored reading could lie on either side of ``x``.
    n : float
        All readings.
    """
    starts = np.flatnonzero(np.r_[True, np.diff(sample.values) > 0])
    x = sample.values[starts]
    c = np.add.reduceat(sample.counts, starts)
    after = np.cumsum(c)
    below_x = np.zeros_like(after)
    known = np.ones(x.size, dtype=bool)
    n = sample.n
    if censored is not None:
        limits, sides, counts = (np.asarray(a, dtype=np.float64) for a in censored)
        n += float(counts.sum())
        below, above = sides < 0, sides > 0
        order = np.argsort(limits[below])
        cum = np.r_[0.0, np.cumsum(counts[below][order])]
        below_x = cum[np.searchsorted(limits[below][order], x, side="right")]  # readings < L <= x
        if below.any():
            known &= x >= limits[below].max()
        if above.any():
            known &= x <= limits[above].min()
    after = (after + below_x) / n
    before = after - c / n
    return x, c, before, after, known, n


def goodness_of_fit(mixture: Mixture, values, counts=None, *, censored=None, step=None,
                    value_at="middle") -> FitCheck:
    """Q-Q points, Kolmogorov-Smirnov distance and a verdict for a mixture on values.

    Parameters
    ----------
    mixture : Mixture
    values : array_like, shape (n,)
    counts : array_like, shape (n,), optional
    censored : tuple (limits, sides, counts) of array_like, optional
        Readings the fit used as censored: side -1 below its limit, +1 above
        it, with their counts (see the module notes).
    step : float, optional
        Recording step of the values; default: detected from them.
    value_at : {"middle", "lower", "upper"}, default "middle"
        Where each value sits in its recording cell, for the comparison with
        the rounded mixture.

    Returns
    -------
    FitCheck
        With NaN distances and no verdict of misfit when no value has every
        censored reading on one known side.
    """
    if not isinstance(mixture, Mixture):
        raise InputError(f"goodness_of_fit() needs a Mixture; got {type(mixture).__name__}.")
    sample = prepare_sample(values, counts)
    x, c, before, after, known, n = _empirical(sample, censored)
    positions = after - 0.5 * c / n
    step = detect_grid_step(x) if step is None else float(step)
    rounded = step is not None and sample.n > x.size
    cdf = mixture.cdf(x)
    censored_n = n - sample.n
    base = dict(plotting_positions=_frozen(positions), theoretical=_frozen(mixture.quantile(positions)),
                observed=_frozen(x), grid_step=step, rounded=rounded, n=n, censored=censored_n)
    if not known.any():
        check = FitCheck(ks_distance=math.nan, ks_location=math.nan, ks_p_value=math.nan,
                         verdict_distance=math.nan, **base)
        return dataclasses.replace(check, verdict=verdict(check))
    k = known
    distance, where = ks_distance(before[k], after[k], cdf[k], cdf[k])
    used = distance
    if rounded:
        lo, hi = interval_offsets(value_at, step)
        used, where = ks_distance(before[k], after[k], mixture.cdf(x[k] + lo), mixture.cdf(x[k] + hi))
    from scipy.stats import kstwo  # imported here: scipy.stats takes half a second to import

    p_value = float(kstwo.sf(float(used), int(round(n))))
    check = FitCheck(ks_distance=float(distance), ks_location=float(x[k][where]), ks_p_value=p_value,
                     verdict_distance=float(used), **base)
    return dataclasses.replace(check, verdict=verdict(check))


def _frozen(a):
    a = np.array(a, dtype=np.float64)
    a.setflags(write=False)
    return a


def verdict(check: FitCheck) -> str:
    """Plain-words reading of a fit check (our wording).

    Uses the bootstrap p-value when there is one, else the Kolmogorov
    p-value, which is optimistic for a fitted model: at most 0.01 "clear sign
    of misfit", at most 0.05 "some sign of misfit", otherwise "no clear sign
    of misfit" (conventional 1% and 5% levels, common practice).
    """
    if math.isnan(check.verdict_distance):
        return (f"No fit check: the {check.censored:,.0f} readings beyond a limit could lie on either side "
                "of every kept value, so the data's distribution is not known at any of them.")
    booted = check.bootstrap_replicates > 0
    p = check.bootstrap_p_value if booted else check.ks_p_value
    against = "the fitted mixture rounded to the recording step" if check.rounded else "the fitted mixture"
    gap = (f"the largest gap between the data's distribution and {against} is "
           f"{check.verdict_distance:.3f}, near {check.ks_location:.4g}")
    shown = "p > 0.99" if p > 0.99 else f"p = {p:.3g}"
    source = (f"bootstrap {shown} from {check.bootstrap_replicates} refitted simulated samples"
              if booted else f"Kolmogorov-Smirnov {shown}")
    if p <= 0.01:
        words = f"Clear sign of misfit: {gap} ({source})."
    elif p <= 0.05:
        words = f"Some sign of misfit: {gap} ({source})."
    else:
        words = f"No clear sign of misfit: {gap} ({source})."
    if p <= 0.05:
        words += (" Look at the Q-Q plot there; another number of components or the other "
                  "width variant may describe the data better.")
    if check.censored:
        words += (f" The {check.censored:,.0f} readings beyond a limit count in the data's distribution "
                  "where they are known to lie.")
    if not booted:
        words += (" The p-value is optimistic because the mixture was fitted to these same values: "
                  "weak reassurance when large, and a small one understates the misfit.")
    return words


def _replicate_distances(plan, indices, *, cancel=None):
    """Kolmogorov-Smirnov distance of each simulated sample to its own refit."""
    x, c = draw_replicates(plan, indices)
    fit = refit_replicates(plan, indices, x, c, cancel)
    if plan.support is None:
        x = np.sort(x, axis=1)
        c = np.broadcast_to(c, x.shape)
    else:
        c = np.asarray(c)
    after = np.cumsum(c, axis=-1) / plan.n
    before = after - c / plan.n
    xs = np.broadcast_to(x, after.shape)
    lower, upper = _row_cdf(xs, fit, plan, -1), _row_cdf(xs, fit, plan, +1)
    return ks_distance(before, after, lower, upper)[0]


def _row_cdf(x, fit, plan, side):
    """Each row's refitted mixture distribution at its values (moved half a cell on a grid)."""
    if plan.path == "grid":
        x = x + side * 0.5 * plan.grid_step
    z = (x[:, :, None] - fit.means[:, None, :]) / np.sqrt(fit.variances)[:, None, :]
    return np.einsum("rmk,rk->rm", ndtr(z), fit.weights)


def _observed_on_support(sample, plan, mixture_std):
    """The data's distance measured as the replicates' is: on the plan's support points."""
    z = (sample.values - plan.center) / plan.scale
    if plan.support is not None:
        if plan.path == "fine histogram":
            edges = 0.5 * (plan.support[1:] + plan.support[:-1])
            z = plan.support[np.searchsorted(edges, z)]
        else:  # grid: the values lie on it up to rounding
            cell = np.round((z - plan.support[0]) / plan.grid_step).astype(np.int64)
            z = plan.support[np.clip(cell, 0, plan.support.size - 1)]
    z, where = np.unique(z, return_inverse=True)  # ties merged: F_n jumps once per point
    c = np.bincount(where.ravel(), weights=sample.counts, minlength=z.size)
    after = np.cumsum(c) / sample.n
    before = after - c / sample.n
    shift = 0.5 * plan.grid_step if plan.path == "grid" else 0.0
    return float(ks_distance(before, after, mixture_std.cdf(z - shift), mixture_std.cdf(z + shift))[0])


def fit_check_bootstrap(values, model: FittedModel, *, counts=None, replicates=99, seed=0,
                        workers=None, progress=None, cancel=None) -> FitCheck:
    """:func:`goodness_of_fit` with a parametric-bootstrap p-value for the distance.

    Samples of the same size are simulated from the fit, the model (same k
    and widths) is refitted to each from the fit, and the distance of each
    sample to its own refit is compared with the data's.

    Parameters
    ----------
    values : array_like, shape (n,)
    model : FittedModel
        Fitted to these values.
    counts : array_like, shape (n,), optional
    replicates : int, default 99
    seed : int, default 0
    workers, progress, cancel
        As for :func:`clusterdesk.bootstrap`.

    Returns
    -------
    FitCheck
        With ``bootstrap_p_value`` and ``bootstrap_replicates`` set.
    """
    if not isinstance(model, FittedModel):
        raise InputError(f"fit_check_bootstrap() needs a fitted model; got {type(model).__name__}.")
    if (isinstance(replicates, bool) or not isinstance(replicates, numbers.Integral)
            or not 19 <= replicates <= 100_000):
        raise InputError(f"replicates must be a whole number from 19 to 100000; got {replicates!r}.")
    seed, workers = check_seed(seed), check_workers(workers)
    sample = prepare_sample(values, counts)
    plan = plan_replicates(sample, model, "parametric", seed)
    observed = _observed_on_support(sample, plan, plan.reference_mixture())
    parts = run_batches(functools.partial(_replicate_distances, plan, cancel=cancel),
                        index_batches(replicates, plan.batch_size), workers=workers,
                        progress=progress, cancel=cancel, what="fit check")
    simulated = np.concatenate(parts)
    p_value = (1.0 + np.count_nonzero(simulated >= observed)) / (1.0 + replicates)
    check = goodness_of_fit(model.mixture, values, counts)
    check = dataclasses.replace(check, bootstrap_p_value=float(p_value),
                                bootstrap_replicates=int(replicates))
    # Replicates whose refit failed or collapsed stay in: they are part of the procedure.
    return dataclasses.replace(check, verdict=verdict(check))
