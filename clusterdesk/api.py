"""The Python API: scan a range of models, fit one, bootstrap it, test k against k+1.

These are thin, documented doors into :mod:`clusterdesk.engine`; the analysis
object, the command line and the window all end up here.
"""

from __future__ import annotations

from .engine.bootstrap import BootstrapResult, bootstrap_model
from .engine.fitting import FitSettings, FittedModel, fit_model
from .engine.lrtest import likelihood_ratio_test  # the engine function is the public door
from .engine.scan import ScanResult, model_rng, scan_models
from .engine.treatment import resolve_treatment
from .engine.validation import check_component_range, check_seed, check_widths
from .errors import InputError

__all__ = ["scan", "fit", "bootstrap", "likelihood_ratio_test"]


def scan(values, *, counts=None, kmin=1, kmax=6, widths="separate", restarts=10, seed=0,
         progress=None, cancel=None, treatment="auto", resolution=None, bounds=None,
         workers=None, value_at=None) -> ScanResult:
    """Fit mixtures of kmin..kmax normal components and rank them by BIC.

    Parameters
    ----------
    values : array_like, shape (n,)
        One column of measurements (finite numbers).
    counts : array_like, shape (n,), optional
        How many times each value was seen (value/count tables). Whole numbers >= 0.
    kmin, kmax : int, default 1 and 6
        Range of component counts.
    widths : {"separate", "shared", "both"}, default "separate"
        Each component its own standard deviation, one shared by all, or both variants.
    restarts : int, default 10
        Starting points per model, fitted side by side.
    seed : int, default 0
        Same seed, same result, bit for bit.
    progress : callable(done, total), optional
        Called after each model is fitted.
    cancel : object with ``is_set()``, optional
        E.g. a :class:`threading.Event`; when set, the scan raises
        :class:`~clusterdesk.errors.Cancelled` and returns nothing.
    treatment : {"auto", "exact", "intervals"}, default "auto"
        Fit the likelihood of exact values, or of intervals: each value known
        only to lie within its recording resolution (``[x - h/2, x + h/2)``),
        each count a class of that width. ``"auto"`` uses intervals for
        value/count tables on a grid, censored readings and values on a grid
        that is coarse against their spread; ``result.treatment`` says which
        was used and why.
    resolution : float, optional
        Recording step (or class width) of the values; default: detected.
    bounds : tuple (lower, upper) of array_like, each shape (n,), optional
        Each value's interval end by end (``-inf`` for a reading below a
        detection limit); used with ``"auto"`` and ``"intervals"``.
    value_at : {"middle", "lower", "upper"}, optional
        Where each value sits in its interval of width ``resolution``:
        "middle" (default; rounded readings), "lower" (a class named by its
        lower end, e.g. a length class 12 holding 12.0 to 12.99: ``[x, x + h)``)
        or "upper" (``[x - h, x)``).
    workers : int, optional
        Worker processes for large samples (many distinct values, where one
        model takes seconds). Default: the cores available (at most 2) in the
        window, the ``clusterdesk`` command and interactive sessions; 1 in a
        script, which may ask for more with ``workers=2`` from under
        ``if __name__ == "__main__":`` (Python's rule for process pools). The
        result is the same, bit for bit, whatever the number.

    Returns
    -------
    ScanResult
        ``.ranking`` (best first), ``.best``, ``.model(k, widths)``, ``.evidence``,
        ``.treatment``.

    Raises
    ------
    InputError
        Values or settings that cannot be analysed, with what to try.
    """
    return scan_models(values, counts=counts, kmin=kmin, kmax=kmax, widths=widths,
                       restarts=restarts, seed=seed, progress=progress, cancel=cancel,
                       treatment=treatment, resolution=resolution, bounds=bounds, workers=workers,
                       value_at=value_at)


def fit(values, k, *, counts=None, widths="separate", restarts=10, seed=0, cancel=None,
        treatment="auto", resolution=None, bounds=None, value_at=None) -> FittedModel:
    """Fit one mixture of ``k`` normal components.

    Parameters
    ----------
    values : array_like, shape (n,)
    k : int
        Number of components.
    counts : array_like, shape (n,), optional
    widths : {"separate", "shared"}, default "separate"
    restarts : int, default 10
    seed : int, default 0
    cancel : object with ``is_set()``, optional
    treatment, resolution, bounds, value_at
        Exact values or intervals, as for :func:`scan`.

    Returns
    -------
    FittedModel
        ``.mixture`` (weights, means, sds), ``.loglik``, ``.bic``, ``.converged``,
        ``.likelihood`` ("exact" or "intervals"), ...
        The same model as ``scan(..., seed=seed).model(k, widths)``.
    """
    sample, _ = resolve_treatment(values, counts, treatment=treatment, resolution=resolution,
                                  bounds=bounds, value_at=value_at)
    variants = check_widths(widths)
    if len(variants) != 1:
        raise InputError("fit() takes one width variant: 'separate' or 'shared'; use scan() for both.")
    check_component_range(k, k, sample)
    check_seed(seed)
    if not isinstance(restarts, int) or restarts < 1:
        raise InputError(f"restarts must be a whole number >= 1, got {restarts!r}.")
    return fit_model(sample, k, variants[0], model_rng(seed, k, variants[0]),
                     FitSettings(restarts=restarts), cancel)


def bootstrap(values, model, *, counts=None, replicates=200, method="resample", level=0.95, seed=0,
              progress=None, cancel=None, workers=None, resolution=None, bounds=None,
              value_at=None) -> BootstrapResult:
    """Bootstrap intervals for the weights, means, standard deviations and cut points of a fit.

    Parameters
    ----------
    values : array_like, shape (n,)
        The values the model was fitted to.
    model : FittedModel
        From :func:`fit` or :func:`scan`; its number of components and width
        variant are refitted to every replicate, starting from the fit.
    counts : array_like, shape (n,), optional
        The counts the model was fitted with.
    replicates : int, default 200
        Bootstrap replicates (10 to 100000).
    method : {"resample", "parametric"}, default "resample"
        Resample the values with replacement, or simulate from the fitted mixture.
    level : float, default 0.95
        Confidence level of the percentile intervals.
    seed : int, default 0
        Same seed, same result, bit for bit, whatever the number of workers.
    progress : callable(done, total), optional
        Called after each batch of replicates.
    cancel : object with ``is_set()``, optional
        When set, raises :class:`~clusterdesk.errors.Cancelled`.
    workers : int, optional
        Worker threads; default the cores available, at most 2.
    resolution, bounds, value_at : optional
        For a model fitted to intervals (``model.likelihood == "intervals"``):
        the same resolution, interval ends and position the scan was given.

    Returns
    -------
    BootstrapResult
        Replicate arrays, ``*_interval`` (k, 2), ``*_se`` (k,), the counts of
        failed and collapsed replicates, and notes (which path was used).
    """
    treatment = "intervals" if getattr(model, "likelihood", "exact") == "intervals" else "exact"
    sample, _ = resolve_treatment(values, counts, treatment=treatment, resolution=resolution,
                                  bounds=bounds, value_at=value_at)
    return bootstrap_model(sample, model, replicates=replicates, method=method, level=level,
                           seed=seed, workers=workers, progress=progress, cancel=cancel)

