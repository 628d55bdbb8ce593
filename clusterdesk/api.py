"""The Python API: scan a range of models, or fit one.

These are thin, documented doors into :mod:`clusterdesk.engine`; the analysis
object, the command line and the window all end up here.
"""

from __future__ import annotations

from .engine.fitting import FitSettings, FittedModel, fit_model
from .engine.scan import ScanResult, model_rng, scan_models
from .engine.validation import check_component_range, check_widths, prepare_sample
from .errors import InputError

__all__ = ["scan", "fit"]


def scan(values, *, counts=None, kmin=1, kmax=6, widths="separate", restarts=10, seed=0,
         progress=None, cancel=None) -> ScanResult:
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

    Returns
    -------
    ScanResult
        ``.ranking`` (best first), ``.best``, ``.model(k, widths)``, ``.evidence``.

    Raises
    ------
    InputError
        Values or settings that cannot be analysed, with what to try.
    """
    return scan_models(values, counts=counts, kmin=kmin, kmax=kmax, widths=widths,
                       restarts=restarts, seed=seed, progress=progress, cancel=cancel)


def fit(values, k, *, counts=None, widths="separate", restarts=10, seed=0, cancel=None) -> FittedModel:
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

    Returns
    -------
    FittedModel
        ``.mixture`` (weights, means, sds), ``.loglik``, ``.bic``, ``.converged``, ...
        The same model as ``scan(..., seed=seed).model(k, widths)``.
    """
    sample = prepare_sample(values, counts)
    variants = check_widths(widths)
    if len(variants) != 1:
        raise InputError("fit() takes one width variant: 'separate' or 'shared'; use scan() for both.")
    check_component_range(k, k, sample)
    if not isinstance(restarts, int) or restarts < 1:
        raise InputError(f"restarts must be a whole number >= 1, got {restarts!r}.")
    return fit_model(sample, k, variants[0], model_rng(seed, k, variants[0]),
                     FitSettings(restarts=restarts), cancel)
