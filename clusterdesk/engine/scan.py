"""Fit a range of component counts and width variants, and rank the models.

Ranking is by BIC (Schwarz 1978), lower first. Each model gets its own random
stream derived from ``(seed, k, width variant)``, so a model's fit does not
depend on which other models were scanned, or in which order.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from . import criteria
from .fitting import FitSettings, FittedModel, fit_model
from .outliers import outlier_note
from .parallel import blas_one_thread, process_workers, run_batches, start_fork_server, worker_cancel_token
from .treatment import Treatment, resolve_treatment
from .validation import check_component_range, check_seed, check_widths
from ..errors import Cancelled, InputError

__all__ = ["RankingRow", "ScanResult", "scan_models", "model_rng"]

_WIDTHS_CODE = {"separate": 0, "shared": 1}


@dataclass(frozen=True)
class RankingRow:
    """One model's line in the ranking (best first).

    Attributes
    ----------
    rank : int
        1 for the model with the lowest BIC.
    k : int
    widths : {"separate", "shared"}
    loglik : float
    n_params : int
    bic, aic, icl : float
    delta_bic : float
        BIC minus the best model's BIC (0 for the best).
    bic_weight : float
        ``exp(-delta_bic / 2)`` normalised over the scanned models.
    converged : bool
    restarts : int
    restarts_agreeing : int
    min_weight : float
        Smallest component weight.
    iterations : int
    collapsed : bool
    likelihood : {"exact", "intervals"}
        The likelihood the model's log-likelihood and criteria are of.
    bin_width : float or None
        Width of the histogram the model was first found on, in the values'
        units (None: fitted on the values directly); see ``FittedModel.bin_width``.
    """

    rank: int
    k: int
    widths: str
    loglik: float
    n_params: int
    bic: float
    aic: float
    icl: float
    delta_bic: float
    bic_weight: float
    converged: bool
    restarts: int
    restarts_agreeing: int
    min_weight: float
    iterations: int
    collapsed: bool
    likelihood: str = "exact"
    bin_width: float | None = None


@dataclass(frozen=True)
class ScanResult:
    """Every model of a scan, and their ranking by BIC.

    Attributes
    ----------
    models : tuple of FittedModel
        In scan order (by width variant, then k).
    ranking : tuple of RankingRow
        Best (lowest BIC) first. A collapsed model ranks after every
        credible one, whatever its BIC.
    n : float
        Sample size.
    seed : int
    treatment : Treatment or None
        Exact values or intervals, and why (see :mod:`.treatment`).
    notes : tuple of str
        Plain-words remarks on the scan as a whole, e.g. values far outside
        the rest of the sample on which models collapsed (:mod:`.outliers`).
    suspect_values : tuple of float
        Those values, ascending; empty when there are none.
    """

    models: tuple
    ranking: tuple
    n: float
    seed: int
    treatment: Treatment | None = None
    notes: tuple = ()
    suspect_values: tuple = ()

    @property
    def best(self) -> FittedModel:
        """The model of the first ranking row."""
        top = self.ranking[0]
        return self.model(top.k, top.widths)

    @property
    def evidence(self) -> str:
        """Kass & Raftery wording of the BIC gap between the best and the runner-up."""
        credible = [row for row in self.ranking[1:] if not row.collapsed]
        if not credible or self.ranking[0].collapsed:
            return ""
        return criteria.evidence_wording(credible[0].delta_bic)

    def model(self, k: int, widths: str = "separate") -> FittedModel:
        """The fitted model with ``k`` components and the given width variant."""
        for m in self.models:
            if m.k == k and m.widths == widths:
                return m
        scanned = ", ".join(f"{m.k} ({m.widths})" for m in self.models)
        raise InputError(f"No model with {k} components and {widths} widths was scanned; "
                         f"scanned: {scanned}.")


def model_rng(seed: int, k: int, widths: str) -> np.random.Generator:
    """The random stream of one model: independent of scan order and range."""
    return np.random.default_rng(np.random.SeedSequence([int(seed), int(k), _WIDTHS_CODE[widths]]))


def scan_models(values, *, counts=None, kmin=1, kmax=6, widths="separate", restarts=10, seed=0,
                progress=None, cancel=None, settings: FitSettings | None = None,
                treatment="auto", resolution=None, bounds=None, workers=None, prepared=None,
                value_at=None) -> ScanResult:
    """Fit every component count from kmin to kmax for each width variant and rank them.

    Parameters
    ----------
    values : array_like, shape (n,)
    counts : array_like, shape (n,), optional
        Counts of each value (a value/count table).
    kmin, kmax : int, default 1 and 6
    widths : {"separate", "shared", "both"}, default "separate"
    restarts : int, default 10
    seed : int, default 0
    progress : callable(done, total), optional
        Called after each fitted model.
    cancel : object with ``is_set()``, optional
        A set token stops the scan with :class:`~clusterdesk.errors.Cancelled`.
    settings : FitSettings, optional
        Overrides the numerical settings (``restarts`` still applies).
    treatment : {"auto", "exact", "intervals"}, default "auto"
    resolution : float, optional
    bounds : tuple (lower, upper) of array_like, optional
    value_at : {"middle", "lower", "upper"}, optional
        Exact values or intervals: see :func:`.treatment.resolve_treatment`.
    workers : int, optional
        Worker processes for samples large enough to be fitted on a histogram
        first (more distinct values than ``settings.bin_above``), where one
        model takes seconds; default the cores available (at most 2) where
        starting processes is safe, else 1 (see :func:`.parallel.process_workers`:
        a script passes ``workers`` itself, from under ``if __name__ ==
        "__main__":``). Smaller samples are fitted in this thread (a model
        takes milliseconds, less than starting a process). The result is the
        same, bit for bit, whatever the number.
    prepared : callable() -> (Sample, Treatment), optional
        Called instead of :func:`.treatment.resolve_treatment` (with the
        values, counts, treatment, resolution and bounds) by a caller that
        keeps the prepared sample (preparing 10^7 values takes a few tenths
        of a second); ``values`` then only tells how many there are.

    Returns
    -------
    ScanResult
    """
    variants = check_widths(widths)
    check_seed(seed)
    settings = _with_restarts(settings, restarts)
    workers = process_workers(workers)
    if workers > 1 and _length(values) > settings.bin_above:
        start_fork_server(__name__)  # likely fitted in processes: their server imports while we prepare
    if prepared is not None:
        sample, used = prepared()
    else:
        sample, used = resolve_treatment(values, counts, treatment=treatment, resolution=resolution,
                                         bounds=bounds, value_at=value_at)
    check_component_range(kmin, kmax, sample)
    jobs = [(w, k) for w in variants for k in range(kmin, kmax + 1)]
    if workers > 1 and len(jobs) > 1 and not sample.is_intervals and sample.n_distinct > settings.bin_above:
        models = _fit_in_processes(sample, jobs, seed, settings, workers, progress, cancel)
    else:
        models = []
        with blas_one_thread():  # as in the worker processes: the same numbers whatever the workers
            for done, (w, k) in enumerate(jobs, start=1):
                if cancel is not None and cancel.is_set():
                    raise Cancelled("The scan was cancelled before it finished; no results were kept.")
                models.append(fit_model(sample, k, w, model_rng(seed, k, w), settings, cancel))
                if progress is not None:
                    progress(done, len(jobs))
    suspects = tuple(sorted({v for m in models for v in m.suspect_values}))
    notes = (outlier_note(suspects),) if suspects else ()
    return ScanResult(models=tuple(models), ranking=rank_models(models), n=sample.n, seed=int(seed),
                      treatment=used, notes=notes, suspect_values=suspects)


def _length(values) -> int:
    """How many values were given (0 when that is not known without converting them)."""
    try:
        return len(values)
    except TypeError:
        return 0


def _fit_in_processes(sample, jobs, seed, settings, workers, progress, cancel):
    """Fit the models in worker processes, the costliest first; returned in the order of ``jobs``.

    Cost grows with the number of parameters (separate widths, many
    components), so those start first and the cheap ones fill the gaps.
    """
    order = sorted(range(len(jobs)), key=lambda i: -criteria.n_parameters(jobs[i][1], jobs[i][0]))
    task = functools.partial(_fit_jobs, sample, tuple(jobs), int(seed), settings)
    parts = run_batches(task, [np.array([i]) for i in order], workers=workers, progress=progress,
                        cancel=cancel, what="scan", processes=True)
    models = [None] * len(jobs)
    for i, part in zip(order, parts):
        models[i] = part[0]
    return models


def _fit_jobs(sample, jobs, seed, settings, batch):
    """Fit the models ``jobs[i]`` for i in ``batch`` (in a worker process)."""
    cancel = worker_cancel_token()
    return [fit_model(sample, jobs[i][1], jobs[i][0], model_rng(seed, jobs[i][1], jobs[i][0]),
                      settings, cancel) for i in batch]


def _with_restarts(settings, restarts):
    if not isinstance(restarts, (int, np.integer)) or isinstance(restarts, bool) or restarts < 1:
        raise InputError(f"restarts must be a whole number >= 1, got {restarts!r}.")
    settings = settings or FitSettings()
    if settings.restarts != restarts:
        settings = FitSettings(**{**settings.__dict__, "restarts": int(restarts)})
    return settings


def rank_models(models) -> tuple:
    """Rank fitted models by BIC, credible (non-collapsed) models first."""
    order = sorted(range(len(models)), key=lambda i: (models[i].collapsed, models[i].bic,
                                                       models[i].k, models[i].widths))
    bics = np.array([m.bic for m in models])
    best_bic = bics[order[0]]
    # Collapsed models describe spurious maxima: they get no share of the weight.
    credible = np.array([not m.collapsed for m in models])
    weights = np.zeros(len(models))
    if credible.any():
        weights[credible] = criteria.bic_weights(bics[credible])
    else:
        weights = criteria.bic_weights(bics)
    rows = []
    for rank, i in enumerate(order, start=1):
        m = models[i]
        rows.append(RankingRow(rank=rank, k=m.k, widths=m.widths, loglik=m.loglik,
                               n_params=m.n_params, bic=m.bic, aic=m.aic, icl=m.icl,
                               delta_bic=float(m.bic - best_bic), bic_weight=float(weights[i]),
                               converged=m.converged, restarts=m.restarts,
                               restarts_agreeing=m.restarts_agreeing, min_weight=m.min_weight,
                               iterations=m.iterations, collapsed=m.collapsed,
                               likelihood=m.likelihood, bin_width=m.bin_width))
    return tuple(rows)
