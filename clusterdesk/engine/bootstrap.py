"""Bootstrap intervals for a fitted mixture: resampling the data or simulating from the fit.

Each replicate refits the chosen model (same number of components, same
width variant) from the reference fit, with its labels matched to the
reference's by posterior agreement (:mod:`.labels`); replicates are fitted in
batches side by side and the batches spread over worker threads
(:mod:`.replicates`, :mod:`.parallel`).

Intervals are percentile intervals (Efron & Tibshirani 1993, An Introduction
to the Bootstrap, §13.3) and standard errors are the standard deviation of
the replicates (their eq. 6.6), both from the replicates that converged
without collapsing; how many others there were is part of the result.
"""

from __future__ import annotations

import functools
import math
import numbers
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .fitting import FitSettings, FittedModel
from .grouped import interval_loglik
from .labels import match_to_reference, posterior_agreement
from .mixture import Mixture, cut_point_between
from .parallel import check_seed, check_workers, index_batches, run_batches
from .replicates import draw_replicates, plan_replicates, refit_replicates
from .validation import Sample

__all__ = ["BootstrapResult", "bootstrap_model", "percentile_interval", "bootstrap_se",
           "replicate_cut_points", "cut_point_intervals", "METHODS", "CUT_POINT_CAUTION"]

METHODS = ("resample", "parametric")
MIN_REPLICATES = 10
MAX_REPLICATES = 100_000
CUT_POINT_CAUTION = ("A fitted cut point is a statistical estimate, not a validated diagnostic "
                     "or acceptance limit; defer to validated methods, local regulations and "
                     "licensed practice.")
_LOGLIK_MATCH = 1e-7


def _frozen(a) -> np.ndarray:
    a = np.array(a)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class BootstrapResult:
    """Bootstrap replicates of a fitted mixture and the intervals they give.

    Components are in the reference fit's order (ascending mean); ``B_ok``
    is the number of usable replicates.  Arrays are read-only.

    Attributes
    ----------
    method : {"resample", "parametric"}
    path : str
        One of "values", "fine histogram", "grid", "simulated values",
        "intervals", "recording cells", "observed intervals".
        How replicate data were drawn (see :mod:`clusterdesk.engine.replicates`).
    support_size : int
        Distinct values, bins or grid cells the counts were drawn over (the
        sample size for simulated values).
    replicates : int
        Replicates requested.
    level : float
        Confidence level of the intervals, e.g. 0.95.
    seed : int
    reference : Mixture
        The fit being bootstrapped.
    widths : {"separate", "shared"}
    n_ok, n_failed, n_collapsed : int
        Replicates used; replicates that did not converge (and did not
        collapse); replicates that collapsed (a component at the variance
        floor, with too few values or a spike, the rule of the fits).
    n_relabelled : int
        Usable replicates whose components were matched to the reference in
        another order than the refit's own.
    ok_replicates : ndarray of int, shape (B_ok,)
        Numbers of the usable replicates.
    weights, means, sds : ndarray, shape (B_ok, k)
    cut_points : ndarray, shape (B_ok, k-1)
        Cut point between reference components j and j+1 in each replicate;
        NaN where the two densities do not cross between their means.
    weight_interval, mean_interval, sd_interval : ndarray, shape (k, 2)
        Lower and upper percentile limits.
    cut_point_interval : ndarray, shape (k-1, 2)
        From the replicates with a cut point (see ``cut_points_missing``);
        NaN where withheld (see ``cut_points_withheld``).
    weight_se, mean_se, sd_se : ndarray, shape (k,)
    cut_point_se : ndarray, shape (k-1,)
        NaN where withheld.
    cut_points_missing : ndarray of int, shape (k-1,)
        Usable replicates without that cut point.
    cut_points_withheld : ndarray of bool, shape (k-1,)
        No interval or standard error is given for that cut point: the fit
        itself has none, or more usable replicates lack it than the
        interval's tails may leave out (see :func:`cut_point_intervals`).
    notes : tuple of str
        Plain-words remarks: the path, failures, relabelling, cautions.
    """

    method: str
    path: str
    support_size: int
    replicates: int
    level: float
    seed: int
    reference: Mixture
    widths: str
    n_ok: int
    n_failed: int
    n_collapsed: int
    n_relabelled: int
    ok_replicates: np.ndarray
    weights: np.ndarray
    means: np.ndarray
    sds: np.ndarray
    cut_points: np.ndarray
    weight_interval: np.ndarray
    mean_interval: np.ndarray
    sd_interval: np.ndarray
    cut_point_interval: np.ndarray
    weight_se: np.ndarray
    mean_se: np.ndarray
    sd_se: np.ndarray
    cut_point_se: np.ndarray
    cut_points_missing: np.ndarray
    cut_points_withheld: np.ndarray
    notes: tuple = ()

    @property
    def k(self) -> int:
        """Number of components."""
        return self.reference.k

    def describe(self) -> str:
        """One line: method, level, usable replicates, e.g. for a table caption."""
        how = "resampling the values" if self.method == "resample" else "simulating from the fit"
        return (f"{self.level:.0%} percentile intervals from {self.n_ok} of {self.replicates} "
                f"bootstrap replicates, {how}")

    def table_header(self) -> tuple:
        """Column names of :meth:`table_rows`."""
        return ("Quantity", "Estimate", "Lower", "Upper", "Standard error")

    def table_rows(self) -> list:
        """One row per weight, mean, standard deviation and cut point (components from 1)."""
        ref = self.reference
        rows = []
        for name, est, interval, se in (("weight", ref.weights, self.weight_interval, self.weight_se),
                                        ("mean", ref.means, self.mean_interval, self.mean_se),
                                        ("sd", ref.sds, self.sd_interval, self.sd_se)):
            for j in range(self.k):
                rows.append((f"{name} {j + 1}", float(est[j]), float(interval[j, 0]),
                             float(interval[j, 1]), float(se[j])))
        cuts = ref.cut_points() if self.k > 1 else np.empty(0)
        for j in range(self.k - 1):
            rows.append((f"cut point {j + 1}-{j + 2}", float(cuts[j]),
                         float(self.cut_point_interval[j, 0]),
                         float(self.cut_point_interval[j, 1]), float(self.cut_point_se[j])))
        return rows


def percentile_interval(samples, level: float) -> np.ndarray:
    """Percentile interval of each column, from its finite entries.

    Parameters
    ----------
    samples : array_like, shape (B, p)
        Bootstrap replicates of ``p`` quantities; NaN entries are left out.
    level : float
        Confidence level in (0, 1).

    Returns
    -------
    ndarray, shape (p, 2)
        With ``alpha = (1 - level) / 2`` and ``B`` finite entries, the limits
        are the ``j``-th smallest and the ``(B + 1 - j)``-th smallest entries,
        ``j = floor((B + 1) alpha)`` (Efron & Tibshirani 1993, §12.5 and
        §13.3, from memory: with B = 999 and level 0.95, the 25th and 975th).
        When ``j`` is 0 (too few replicates for the level) the smallest and
        largest are used; NaN for a column without finite entries.
    """
    a = np.asarray(samples, dtype=np.float64)
    alpha = 0.5 * (1.0 - level)
    out = np.full((a.shape[1], 2), np.nan)
    for col in range(a.shape[1]):
        values = np.sort(a[np.isfinite(a[:, col]), col])
        b = values.size
        if b == 0:
            continue
        j = max(1, int(math.floor((b + 1) * alpha + 1e-9)))
        out[col] = values[j - 1], values[b - j]
    return out


def bootstrap_se(samples) -> np.ndarray:
    """Bootstrap standard error of each column, ``sqrt(sum (t_b - mean t)^2 / (B - 1))``.

    From the finite entries of each column (Efron & Tibshirani 1993, eq. 6.6);
    NaN for a column with fewer than two.

    Returns
    -------
    ndarray, shape (p,)
    """
    a = np.asarray(samples, dtype=np.float64)
    out = np.full(a.shape[1], np.nan)
    for col in range(a.shape[1]):
        values = a[np.isfinite(a[:, col]), col]
        if values.size >= 2:
            out[col] = float(np.std(values, ddof=1))
    return out


def replicate_cut_points(weights, means, sds) -> np.ndarray:
    """Cut point between components j and j+1 (reference order) of every replicate.

    Parameters
    ----------
    weights, means, sds : ndarray, shape (B, k)

    Returns
    -------
    ndarray, shape (B, k-1); NaN where the pair does not cross between its means.
    """
    w, m, s = (np.asarray(a, dtype=np.float64) for a in (weights, means, sds))
    if w.shape[1] < 2:
        return np.empty((w.shape[0], 0))
    return np.asarray(cut_point_between(w[:, :-1], m[:, :-1], s[:, :-1], w[:, 1:], m[:, 1:], s[:, 1:]),
                      dtype=np.float64).reshape(w.shape[0], -1)


def cut_point_intervals(cuts, reference_cuts, level: float):
    """Percentile intervals and standard errors of the cut points, withheld where they would mislead.

    A replicate whose two components do not cross between their means has no
    cut point there (NaN). The interval from the replicates that do have one
    describes the cut point *given that it exists*. It is withheld (NaN, with
    the standard error) when the fit itself has no such cut point, or when
    more than ``(1 - level)`` of the usable replicates lack it: then even an
    interval spanning every replicate that has the cut point would hold it
    with probability below ``level``, so no interval at that level exists.
    (Our rule, from the coverage arithmetic of a percentile interval.)

    Parameters
    ----------
    cuts : array_like, shape (B, k-1)
        Cut points of the usable replicates (:func:`replicate_cut_points`).
    reference_cuts : array_like, shape (k-1,)
        The fit's own cut points (:meth:`.mixture.Mixture.cut_points`).
    level : float
        Confidence level in (0, 1).

    Returns
    -------
    interval : ndarray, shape (k-1, 2)
    se : ndarray, shape (k-1,)
    missing : ndarray of int, shape (k-1,)
        Replicates without the cut point.
    withheld : ndarray of bool, shape (k-1,)
    """
    cuts = np.asarray(cuts, dtype=np.float64).reshape(len(cuts), -1)
    missing = np.sum(~np.isfinite(cuts), axis=0).astype(np.int64)
    withheld = ~np.isfinite(np.asarray(reference_cuts, dtype=np.float64)) | (
        missing > (1.0 - level) * cuts.shape[0] + 1e-9)
    interval = percentile_interval(cuts, level).reshape(-1, 2)
    se = bootstrap_se(cuts)
    interval[withheld] = np.nan
    se[withheld] = np.nan
    return interval, se, missing, withheld


def _check_arguments(model, sample, replicates, method, level):
    if not isinstance(model, FittedModel):
        raise InputError(f"bootstrap() needs a fitted model from clusterdesk.fit or scan; "
                         f"got {type(model).__name__}.")
    if method not in METHODS:
        raise InputError(f"Unknown bootstrap method {method!r}; use 'resample' (resample the "
                         "values) or 'parametric' (simulate from the fitted mixture).")
    if (isinstance(replicates, bool) or not isinstance(replicates, numbers.Integral)
            or not MIN_REPLICATES <= replicates <= MAX_REPLICATES):
        raise InputError(f"replicates must be a whole number from {MIN_REPLICATES} to "
                         f"{MAX_REPLICATES}; got {replicates!r}. 200 or more suit 95% intervals.")
    if isinstance(level, bool) or not isinstance(level, numbers.Real) or not 0.0 < level < 1.0:
        raise InputError(f"level must be a confidence level between 0 and 1, e.g. 0.95; got {level!r}.")
    if model.collapsed:
        raise InputError("This model collapsed (every restart squeezed a component onto a few "
                         "values), so its intervals would mean nothing; bootstrap a credible model.")
    if model.n != sample.n:
        raise InputError(f"The model was fitted to {model.n:g} values but {sample.n:g} were given; "
                         "pass the same values (and counts) the model was fitted to.")
    if model.likelihood != ("intervals" if sample.is_intervals else "exact"):
        raise InputError(f"The model was fitted with the {model.likelihood} likelihood but the data "
                         "were given in the other treatment; pass them as they were fitted.")
    if sample.is_intervals:
        loglik = interval_loglik(sample.lower, sample.upper, sample.counts, model.mixture)
    else:
        loglik = model.mixture.loglik(sample.values, sample.counts)
    if abs(loglik - model.loglik) > _LOGLIK_MATCH * (abs(model.loglik) + sample.n):
        raise InputError("The model does not belong to these values (its log-likelihood on them "
                         "differs from the fitted one); pass the values it was fitted to.")


def _batch_task(plan, indices, *, cancel=None):
    """Draw, refit and relabel one batch; parameters in original units, reference order."""
    x, c = draw_replicates(plan, indices)
    fit = refit_replicates(plan, indices, x, c, cancel)
    agreement = posterior_agreement(x, c, plan.reference, (fit.weights, fit.means, fit.variances))
    order = match_to_reference(agreement)
    relabelled = np.any(order != np.arange(plan.k), axis=1)
    w, mu, var = (np.take_along_axis(a, order, axis=1)
                  for a in (fit.weights, fit.means, fit.variances))
    if plan.binning_offset is not None:  # midpoint refits recentred on the exact fit (replicates.binning_offset)
        w, mu, var = (a + d for a, d in zip((w, mu, var), plan.binning_offset))
    return dict(weights=w, means=plan.center + plan.scale * mu, sds=plan.scale * np.sqrt(var),
                converged=fit.converged, collapsed=fit.collapsed, relabelled=relabelled)


def bootstrap_model(sample: Sample, model: FittedModel, *, replicates: int = 200,
                    method: str = "resample", level: float = 0.95, seed: int = 0,
                    workers=None, progress=None, cancel=None,
                    settings: FitSettings | None = None) -> BootstrapResult:
    """Bootstrap a fitted mixture and summarise the replicates.

    Parameters
    ----------
    sample : Sample
        The validated values (and counts) the model was fitted to.
    model : FittedModel
    replicates : int, default 200
        Number of bootstrap replicates, 10 to 100000.
    method : {"resample", "parametric"}, default "resample"
    level : float, default 0.95
    seed : int, default 0
        Same seed, same result, bit for bit, whatever the number of workers.
    workers : int, optional
        Worker threads; default the cores available, at most 2.
    progress : callable(done, total), optional
        Called after each batch with the replicates done so far.
    cancel : object with ``is_set()``, optional
        When set, raises :class:`~clusterdesk.errors.Cancelled`.
    settings : FitSettings, optional
        Numerical settings (tolerance, collapse rule, binning threshold).

    Returns
    -------
    BootstrapResult
    """
    _check_arguments(model, sample, replicates, method, level)
    seed = check_seed(seed)
    workers = check_workers(workers)
    settings = settings or FitSettings()
    plan = plan_replicates(sample, model, method, seed, settings)
    batches = index_batches(int(replicates), plan.batch_size)
    parts = run_batches(functools.partial(_batch_task, plan, cancel=cancel), batches,
                        workers=workers, progress=progress, cancel=cancel)
    joined = {key: np.concatenate([p[key] for p in parts]) for key in parts[0]}
    return _summarise(joined, model, plan, int(replicates), float(level))


def _summarise(joined, model, plan, replicates, level) -> BootstrapResult:
    collapsed = joined["collapsed"]
    failed = ~collapsed & ~joined["converged"]
    ok = ~collapsed & ~failed
    w, m, s = (joined[key][ok] for key in ("weights", "means", "sds"))
    cuts = replicate_cut_points(w, m, s)
    reference_cuts = model.mixture.cut_points() if model.mixture.k > 1 else np.empty(0)
    cut_interval, cut_se, missing, withheld = cut_point_intervals(cuts, reference_cuts, level)
    counts = dict(n_ok=int(ok.sum()), n_failed=int(failed.sum()), n_collapsed=int(collapsed.sum()),
                  n_relabelled=int(joined["relabelled"][ok].sum()))
    notes = _notes(plan, replicates, missing=missing, withheld=withheld,
                   fitted_cuts=np.isfinite(reference_cuts), level=level, **counts)
    return BootstrapResult(
        method=plan.method, path=plan.path, support_size=plan.support_size,
        replicates=replicates, level=level, seed=plan.seed, reference=model.mixture,
        widths=model.widths, **counts,
        ok_replicates=_frozen(np.flatnonzero(ok)), weights=_frozen(w), means=_frozen(m),
        sds=_frozen(s), cut_points=_frozen(cuts),
        weight_interval=_frozen(percentile_interval(w, level)),
        mean_interval=_frozen(percentile_interval(m, level)),
        sd_interval=_frozen(percentile_interval(s, level)),
        cut_point_interval=_frozen(cut_interval),
        weight_se=_frozen(bootstrap_se(w)), mean_se=_frozen(bootstrap_se(m)),
        sd_se=_frozen(bootstrap_se(s)), cut_point_se=_frozen(cut_se),
        cut_points_missing=_frozen(missing), cut_points_withheld=_frozen(withheld), notes=tuple(notes))


_PATH_WORDS = {
    "values": "multinomial counts over the {size} distinct values",
    "fine histogram": "multinomial counts over a fine histogram of {size} non-empty bins "
                      "(the sample has many distinct values)",
    "grid": "counts over {size} cells of the values' recording grid",
    "simulated values": "{size} values simulated from the fit for each replicate",
    "intervals": "multinomial counts over the {size} distinct intervals, each replicate refitted "
                 "by the likelihood of intervals",
    "recording cells": "values simulated from the fit and recorded as the data were, i.e. counts over "
                       "{size} cells (the observed intervals, the empty cells between them and beyond), "
                       "each replicate refitted by the likelihood of intervals",
    "observed intervals": "counts over the {size} observed intervals only (they overlap, so there is "
                          "no single way to record a simulated value; an approximation that understates "
                          "the spread), each replicate refitted by the likelihood of intervals",
}


def _replicates(count: int) -> str:
    return f"{count} replicate{'' if count == 1 else 's'}"


def _notes(plan, replicates, *, n_ok, n_failed, n_collapsed, n_relabelled, missing, withheld, fitted_cuts,
           level):
    how = "Resampling" if plan.method == "resample" else "Parametric bootstrap"
    notes = [f"{how}: " + _PATH_WORDS[plan.path].format(size=plan.support_size) + "."]
    if plan.binning_offset is not None:
        shift = 100.0 * float(np.max(np.abs(plan.binning_offset[2]) / plan.reference[2]))
        size = "under 0.01 %" if shift < 0.01 else f"at most {shift:.2g} %"
        notes.append("Replicates were refitted to the bins' midpoints and shifted by the difference "
                     f"that fitting midpoints makes on the sample itself ({size} of a component's "
                     "variance), so they centre on the fit of the exact values.")
    lost = []
    if n_failed:
        lost.append(f"{n_failed} did not converge")
    if n_collapsed:
        lost.append(f"{n_collapsed} lost a component (collapsed)")
    if lost:
        notes.append(f"Of {replicates} replicates, {' and '.join(lost)}; the intervals use the other {n_ok}.")
    if n_relabelled:
        notes.append(f"{_replicates(n_relabelled)} came out with their components in another order; "
                     "they were matched to the fitted components by the values each one explains.")
    for j, count in enumerate(missing):
        pair, cut = f"components {j + 1} and {j + 2}", f"cut point {j + 1}-{j + 2}"
        if not fitted_cuts[j]:
            notes.append(f"In the fit, {pair} do not cross between their means, so there is no {cut} "
                         "and no interval for it.")
        elif withheld[j]:
            notes.append(f"In {count} of {n_ok} usable replicates {pair} do not cross between their "
                         f"means: more than the {1.0 - level:.0%} an interval at {level:.0%} may leave out, "
                         f"so no interval or standard error is given for {cut}; the boundary between "
                         "them is not stable.")
        elif count:
            notes.append(f"In {_replicates(count)} {pair} do not cross between their means; "
                         f"the interval of {cut} uses the others.")
    if n_ok and math.floor((n_ok + 1) * 0.5 * (1.0 - level) + 1e-9) < 1:
        notes.append(f"{n_ok} usable replicates are too few for {level:.0%} intervals; the limits "
                     "are the smallest and largest replicate values. Use more replicates.")
    if n_ok < 2:
        notes.append("Fewer than two replicates were usable, so no standard errors are given.")
    if plan.k > 1:
        notes.append(CUT_POINT_CAUTION)
    return notes
