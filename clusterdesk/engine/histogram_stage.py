"""The large-sample path of one fit: restarts on a histogram, finer bins for narrow components, polish on the raw values.

When a sample has many distinct values (``FitSettings.bin_above``), the
restarts of :func:`.fitting.fit_model` first run on a histogram aligned to
the values' recording grid (:func:`.grouped.histogram_bins`), so each bin is
an exact interval of the data, fitted by the likelihood of intervals (EM and
certified Newton steps, :mod:`.interval_derivatives`) or, on request, by its
midpoint. The cost of a step depends on the bins, not on n. A component
spanning under 10 bins sends the candidates to finer bins (up to
:data:`_REFINEMENTS` rounds); the best distinct candidates are then polished
on the raw values, so the reported fit is a maximum of the exact likelihood.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .fitting import _best_index, _count_agreeing, _run, _screened_starts, degenerate_fits

__all__ = ["fit_binned_then_polish", "distinct_candidates"]

#: Rounds of finer bins at most for a narrow component (each at 1/20 of its sd).
_REFINEMENTS = 3


def fit_binned_then_polish(data, k, shared, rng, settings, cancel):
    """Restarts on the histogram, finer bins while needed, the best distinct candidates polished on the raw values.

    The histogram stage only finds candidates; the bins' variance floor (one
    bin width) keeps a component wider than one bin.

    Parameters
    ----------
    data : fitting._Standardised
        The sample in standard units.
    k : int
    shared : bool
        One width for all components.
    rng : numpy.random.Generator
        For the starts.
    settings : FitSettings
    cancel : object with ``is_set()``, optional

    Returns
    -------
    polished : em.BatchResult
        The candidates after certified steps on the raw values.
    agreeing : int
        Restarts whose histogram log-likelihood agreed with the best's.
    tried : int
        Restarts run on the first histogram.
    width : float
        Width of the bins the polished candidates came from (standard units).
    """
    width = min((data.x[-1] - data.x[0]) / settings.bins, data.spread / settings.bins_per_spread)
    bins = _histogram(data, width, settings)
    floor_b = max(data.var_floor, bins.width ** 2)
    starts = _screened_starts(bins.mid, bins.counts, k, shared, rng, floor_b, settings, cancel,
                              e_step_fn=bins.e_step)
    binned = _run(bins.mid, bins.counts, data, k, shared, starts, settings, cancel, var_floor=floor_b,
                  max_steps=settings.binned_newton_steps, e_step_fn=bins.e_step, points=bins.points(shared))
    degenerate = degenerate_fits(binned, floor_b, settings)
    best = _best_index(binned.loglik, degenerate)
    agreeing = _count_agreeing(binned.loglik, best, data.n, settings.agree_tol)
    tried = int(binned.loglik.size)
    picks = distinct_candidates(binned.loglik, degenerate, data.n, settings)
    polished, width = _refine_then_polish(data, k, shared, settings, cancel, bins.width, binned, degenerate,
                                          picks)
    if degenerate_fits(polished, data.var_floor, settings).all():
        # Every polished candidate collapsed.  On coarse bins a real narrow
        # component and a spurious one both sit at the floor of one bin
        # width, so the restarts set aside there get their turn on finer bins.
        rest = np.setdiff1d(np.flatnonzero(np.isfinite(binned.loglik)), picks)
        if rest.size:
            again, again_width = _refine_then_polish(data, k, shared, settings, cancel, bins.width, binned,
                                                     degenerate, rest)
            if not degenerate_fits(again, data.var_floor, settings).all():
                polished, width = again, again_width
    return polished, agreeing, tried, width


def _refine_then_polish(data, k, shared, settings, cancel, width, binned, degenerate, carried):
    """Restarts ``carried`` of a histogram fit on finer bins while a component spans under 10 bins, then on the raw values.

    All of ``carried`` go to the first finer bins; later rounds and the raw
    values take their distinct candidates (:func:`distinct_candidates`).

    Returns
    -------
    polished : BatchResult
        The candidates polished on the raw values.
    width : float
        Width of the bins the candidates came from (standard units).
    """
    for _ in range(_REFINEMENTS):
        best = carried[_best_index(binned.loglik[carried], degenerate[carried])]
        narrowest = float(np.sqrt(binned.variances[best].min()))
        if width <= 0.1 * narrowest:
            break
        # a component spans under 10 bins (on coarse bins it may sit at their
        # floor of one bin width): the candidates once more on finer bins
        fine = _histogram(data, narrowest / settings.bins_per_narrowest_sd, settings)
        if fine.width >= width:
            break
        floor_f = max(data.var_floor, fine.width ** 2)
        refined = _run(fine.mid, fine.counts, data, k, shared,
                       (binned.weights[carried], binned.means[carried], binned.variances[carried]),
                       settings, cancel, var_floor=floor_f,
                       max_steps=settings.binned_newton_steps, e_step_fn=fine.e_step,
                       points=fine.points(shared))
        refined_degenerate = degenerate_fits(refined, floor_f, settings)
        if refined_degenerate.all() and not degenerate[carried].all():
            # On the finer bins every candidate collapsed: small components
            # narrowed onto a few bins, which finer bins only let them do
            # more.  The credible candidates of the coarser bins are polished.
            break
        refined.iterations += binned.iterations[carried]
        binned, width, degenerate = refined, fine.width, refined_degenerate
        carried = distinct_candidates(binned.loglik, degenerate, data.n, settings)
    picks = carried[distinct_candidates(binned.loglik[carried], degenerate[carried], data.n, settings)]
    polished = _run(data.x, data.c, data, k, shared,
                    (binned.weights[picks], binned.means[picks], binned.variances[picks]),
                    settings, cancel)
    polished.iterations += binned.iterations[picks]
    return polished, width


@dataclass(frozen=True)
class _Bins:
    """The non-empty bins of a histogram stage and the likelihood they are fitted by."""

    lower: np.ndarray
    upper: np.ndarray
    counts: np.ndarray
    width: float
    intervals: bool

    @property
    def mid(self):
        return 0.5 * (self.lower + self.upper)

    @property
    def e_step(self):
        from .grouped import interval_e_step_on

        return interval_e_step_on(self.lower, self.upper) if self.intervals else None

    def points(self, shared):
        """Trial points of the interval likelihood for :func:`.newton.newton_polish_batch` (None: midpoints)."""
        if not self.intervals:
            return None
        from .interval_derivatives import IntervalTrialPoints

        def points(w, mu, sd):
            return IntervalTrialPoints(self.lower, self.upper, self.counts, w, mu, sd, shared)

        return points


def _histogram(data, width, settings) -> _Bins:
    """The non-empty bins of about the given width.

    Bins are aligned to the values' grid (:func:`.grouped.histogram_bins`);
    the width is doubled until at most ``settings.max_bins`` bins are non-empty.
    """
    from .grouped import histogram_bins

    while True:
        lower, upper, counts = histogram_bins(data.x, data.c, settings.bins, data.step, width=width)
        if counts.size <= settings.max_bins:
            return _Bins(lower, upper, counts, float(upper[0] - lower[0]),
                         settings.bins_likelihood == "intervals")
        width *= 2.0


def distinct_candidates(loglik, degenerate, n, settings):
    """Up to ``settings.polish`` restarts with distinct log-likelihoods, best first.

    After the first, only restarts within ``settings.polish_within`` of its
    log-likelihood: one far below it would not overtake it on the raw values.

    Degenerate restarts are polished only when no restart is credible: the
    collapse rule sets them aside anyway, and on the raw values Newton steps
    would chase their unbounded likelihood (a spike narrowing onto a few
    values) to the step limit.
    """
    order = np.lexsort((-loglik, degenerate))
    picks = []
    for i in order:
        if not np.isfinite(loglik[i]) or (picks and degenerate[i]):
            continue
        if picks and loglik[i] < loglik[picks[0]] - settings.polish_within:
            break
        if all(abs(loglik[i] - loglik[j]) > settings.agree_tol * n for j in picks):
            picks.append(int(i))
        if len(picks) == settings.polish:
            break
    return np.array(picks or [int(order[0])])
