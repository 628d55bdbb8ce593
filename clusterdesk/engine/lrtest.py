"""Is there one component more?  A likelihood-ratio test of k against k+1 by parametric bootstrap.

The statistic ``-2 log lambda = 2 (logL_{k+1} - logL_k)`` does not follow its
usual chi-squared distribution for mixtures (the null hypothesis lies on the
boundary of the larger model), so its null distribution is simulated:
samples of the same size are drawn from the fitted k-component mixture, both
models are refitted to each, and the p-value is the share of simulated
statistics at least as large as the observed one,
``(1 + #{LR* >= LR}) / (1 + B)`` (McLachlan 1987, Applied Statistics
36:318-324).  The observed and the simulated fits use the same fitting
machinery (:func:`.fitting.fit_model`) with the same number of restarts, so
the test is calibrated as a whole procedure.
"""

from __future__ import annotations

import functools
import numbers
import time
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .fitting import FitSettings, FittedModel, fit_model
from .parallel import check_seed, check_workers, index_batches, replicate_rng, run_batches
from .resolution import detect_grid_step
from .scan import model_rng
from .validation import Sample, check_component_range, check_widths, prepare_sample

__all__ = ["LikelihoodRatioResult", "likelihood_ratio_test", "PURPOSE_TEST"]

PURPOSE_TEST = 0x5EED03
# Samples per batch: about a second of work, at most 8. Each sample has its own
# stream and its own fits, so the batching never changes the result.
_MAX_BATCH = 8
_BATCH_SECONDS = 1.0
MIN_REPLICATES = 19
# Worker processes take about a second to start; below this much serial work they do not pay.
_PROCESS_WORTH_SECONDS = 3.0


@dataclass(frozen=True, eq=False)
class LikelihoodRatioResult:
    """Bootstrap likelihood-ratio test of ``k`` against ``k + 1`` components.

    Attributes
    ----------
    k : int
        Components under the null hypothesis.
    widths : {"separate", "shared"}
    statistic : float
        ``2 (logL_{k+1} - logL_k)`` on the data (0 when the larger fit did no better).
    p_value : float
        ``(1 + #{simulated >= statistic}) / (1 + replicates)``; the smallest
        possible value is ``1 / (1 + replicates)``.
    replicates : int
        Simulated samples.
    simulated : ndarray, shape (replicates,)
        The statistic on each simulated sample (read-only).
    null_model, alternative_model : FittedModel
        The k and k+1 component fits to the data.
    n_collapsed : int
        Simulated samples where either fit collapsed (kept in the p-value:
        they are part of the procedure's null distribution).
    n_unconverged : int
        Simulated samples where either fit stopped before converging (kept).
    restarts : int
    seed : int
    notes : tuple of str
    """

    k: int
    widths: str
    statistic: float
    p_value: float
    replicates: int
    simulated: np.ndarray
    null_model: FittedModel
    alternative_model: FittedModel
    n_collapsed: int
    n_unconverged: int
    restarts: int
    seed: int
    notes: tuple = ()

    def describe(self) -> str:
        """One sentence with the statistic and the p-value."""
        return (f"{self.k} against {self.k + 1} components: likelihood-ratio statistic "
                f"{self.statistic:.2f}, bootstrap p-value {self.p_value:.3g} "
                f"({self.replicates} simulated samples).")


def _statistic(null: FittedModel, alternative: FittedModel) -> float:
    return max(0.0, 2.0 * (alternative.loglik - null.loglik))


def _simulated_sample(null: FittedModel, n: int, grid, rng) -> Sample:
    """``n`` values from the null fit, rounded to the data's grid when they were recorded on one."""
    values = null.mixture.sample(rng, n)
    if grid is None:
        return prepare_sample(values)
    origin, step = grid
    rounded = origin + np.round((values - origin) / step) * step
    distinct, counts = np.unique(rounded, return_counts=True)
    return prepare_sample(distinct, counts)


def _batch_task(null, n, grid, k, widths, settings, seed, indices, *, cancel=None):
    """Simulate and refit the samples of one batch; returns (statistics, collapsed, unconverged).

    Sample ``b`` and the starts of its fits come from its own stream, so the
    batch a sample falls in, and the worker that runs it, do not matter.
    """
    stats = np.empty(len(indices))
    collapsed = np.zeros(len(indices), dtype=bool)
    unconverged = np.zeros(len(indices), dtype=bool)
    for i, b in enumerate(indices):
        rng = replicate_rng(seed, PURPOSE_TEST, b)
        sample = _simulated_sample(null, n, grid, rng)
        fits = [fit_model(sample, kk, widths, rng, settings, cancel) for kk in (k, k + 1)]
        stats[i] = _statistic(*fits)
        collapsed[i] = any(f.collapsed for f in fits)
        unconverged[i] = not all(f.converged for f in fits)
    return stats, collapsed, unconverged


def _check_replicates(replicates):
    if (isinstance(replicates, bool) or not isinstance(replicates, numbers.Integral)
            or not MIN_REPLICATES <= replicates <= 100_000):
        raise InputError(f"replicates must be a whole number from {MIN_REPLICATES} to 100000; "
                         f"got {replicates!r}. 99 gives p-values in steps of 0.01.")
    return int(replicates)


def _check_restarts(restarts):
    if isinstance(restarts, bool) or not isinstance(restarts, numbers.Integral) or restarts < 1:
        raise InputError(f"restarts must be a whole number >= 1, got {restarts!r}.")
    return int(restarts)


def likelihood_ratio_test(values, k, *, counts=None, widths="separate", replicates=99, restarts=5,
                          seed=0, workers=None, progress=None, cancel=None) -> LikelihoodRatioResult:
    """Test ``k`` components against ``k + 1`` by a parametric bootstrap of the likelihood ratio.

    Parameters
    ----------
    values : array_like, shape (n,)
    k : int
        Components under the null hypothesis (>= 1).
    counts : array_like, shape (n,), optional
    widths : {"separate", "shared"}, default "separate"
    replicates : int, default 99
        Simulated samples (at least 19).
    restarts : int, default 5
        Restarts of every fit, observed and simulated alike.
    seed : int, default 0
        Same seed, same result, whatever the number of workers.
    workers : int, optional
        Workers; default the cores available, at most 2.  Long tests run them
        as processes (the fits hold the GIL), short ones as threads.
    progress : callable(done, total), optional
        Called after each batch of simulated samples.
    cancel : object with ``is_set()``, optional

    Returns
    -------
    LikelihoodRatioResult

    Raises
    ------
    InputError
        Bad values or settings, or more components than the sample supports.
    """
    sample = prepare_sample(values, counts)
    variants = check_widths(widths)
    if len(variants) != 1:
        raise InputError("The test takes one width variant: 'separate' or 'shared'.")
    (widths,) = variants
    check_component_range(k, k + 1, sample)
    replicates, restarts = _check_replicates(replicates), _check_restarts(restarts)
    seed, workers = check_seed(seed), check_workers(workers)
    settings = FitSettings(restarts=restarts)
    started = time.perf_counter()
    null = fit_model(sample, k, widths, model_rng(seed, k, widths), settings, cancel)
    alternative = fit_model(sample, k + 1, widths, model_rng(seed, k + 1, widths), settings, cancel)
    # The observed fits forecast the cost of each simulated pair; only speed depends on it.
    per_sample = time.perf_counter() - started
    processes = workers > 1 and replicates * per_sample > _PROCESS_WORTH_SECONDS
    batch = int(min(_MAX_BATCH, max(1, _BATCH_SECONDS // max(per_sample, 1e-9))))
    step = detect_grid_step(sample.values)
    grid = None if step is None else (float(sample.values[0]), step)
    task = functools.partial(_batch_task, null, int(round(sample.n)), grid, k, widths, settings,
                             seed, cancel=None if processes else cancel)
    parts = run_batches(task, index_batches(replicates, batch), workers=workers,
                        progress=progress, cancel=cancel, what="likelihood-ratio test",
                        processes=processes)
    simulated, collapsed, unconverged = (np.concatenate(a) for a in zip(*parts))
    observed = _statistic(null, alternative)
    p_value = (1.0 + np.count_nonzero(simulated >= observed)) / (1.0 + replicates)
    simulated.setflags(write=False)
    notes = _notes(null, alternative, int(collapsed.sum()), int(unconverged.sum()), grid)
    return LikelihoodRatioResult(
        k=int(k), widths=widths, statistic=observed, p_value=float(p_value), replicates=replicates,
        simulated=simulated, null_model=null, alternative_model=alternative,
        n_collapsed=int(collapsed.sum()), n_unconverged=int(unconverged.sum()),
        restarts=restarts, seed=seed, notes=tuple(notes))


def _notes(null, alternative, n_collapsed, n_unconverged, grid):
    notes = []
    if grid is not None:
        notes.append(f"Simulated values were rounded to the data's recording step ({grid[1]:g}).")
    if n_collapsed:
        notes.append(f"In {n_collapsed} simulated samples a fit collapsed; they are kept in the "
                     "p-value, as part of the procedure's null distribution.")
    if n_unconverged:
        notes.append(f"In {n_unconverged} simulated samples a fit stopped before converging.")
    for model in (null, alternative):
        notes.extend(f"{model.k} components: {note}" for note in model.notes)
    return notes
