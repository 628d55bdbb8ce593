"""Checks on the values and counts handed to the engine.

Every failure is an :class:`~clusterdesk.errors.InputError` whose message says
what was wrong and what to try, so that front ends can show it as it is.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError

__all__ = ["Sample", "prepare_sample", "weighted_mean_sd", "check_component_range", "check_widths", "WIDTHS_CHOICES"]

WIDTHS_CHOICES = ("separate", "shared")


@dataclass(frozen=True)
class Sample:
    """Validated values with their counts, sorted by value.

    Attributes
    ----------
    values : ndarray, shape (m,)
        Distinct-or-not values, float64, ascending.
    counts : ndarray, shape (m,)
        Positive weights (1 for plain values), float64.
    n : float
        Total count (the sample size used by BIC).
    n_distinct : int
        Number of distinct values (of distinct intervals, for interval data).
    lower, upper : ndarray, shape (m,), or None
        For interval data (:func:`.grouped.prepare_intervals`): each value is
        only known to lie in ``[lower, upper)``; ``-inf``/``inf`` ends mark
        censored readings. None for exact values.
    """

    values: np.ndarray
    counts: np.ndarray
    n: float
    n_distinct: int
    lower: np.ndarray | None = None
    upper: np.ndarray | None = None

    @property
    def is_intervals(self) -> bool:
        """Whether the likelihood is that of intervals rather than exact values."""
        return self.lower is not None


def prepare_sample(values, counts=None) -> Sample:
    """Validate values (and optional counts) and return them sorted.

    Parameters
    ----------
    values : array_like, shape (m,)
        Measurements. Must be finite, at least two distinct values.
    counts : array_like, shape (m,), optional
        How many times each value was observed (a value/count table).
        Non-negative whole numbers; zero-count rows are dropped.

    Returns
    -------
    Sample

    Raises
    ------
    InputError
        For empty input, non-finite values, bad counts or a constant sample.
    """
    try:
        x = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"The values could not be read as numbers ({exc}); pass a one-dimensional "
            "sequence of numbers."
        ) from None
    x = np.ravel(x) if x.ndim == 0 else x
    if x.ndim != 1:
        raise InputError(
            f"Expected one column of values, got an array of shape {x.shape}; pass a "
            "one-dimensional sequence (one measurement per entry)."
        )
    if x.size == 0:
        raise InputError("There are no values to analyse; pass at least two measurements.")
    bad = ~np.isfinite(x)
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"{int(bad.sum())} of the {x.size} values are not finite (NaN or infinity), "
            f"the first at position {first}; remove them or let the file reader exclude them."
        )
    if counts is None:
        c = np.ones_like(x)
    else:
        c = _check_counts(counts, x.size)
        keep = c > 0
        x, c = x[keep], c[keep]
        if x.size == 0:
            raise InputError("Every count is zero, so there is nothing to analyse.")
    if counts is None:
        x = np.sort(x)  # every count is one: sorting the values alone is enough (and faster)
    else:
        order = np.argsort(x, kind="stable")
        x, c = x[order], c[order]
    n_distinct = int(np.count_nonzero(np.diff(x)) + 1)
    if n_distinct < 2:
        raise InputError(
            f"All {c.sum():g} values equal {x[0]:g}, so there is no spread to model; "
            "check that the right column was chosen."
        )
    x.setflags(write=False)
    c.setflags(write=False)
    return Sample(values=x, counts=c, n=float(c.sum()), n_distinct=n_distinct)


def _check_counts(counts, size: int) -> np.ndarray:
    try:
        c = np.asarray(counts, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError("The counts could not be read as numbers; pass whole numbers >= 0.") from None
    if c.shape != (size,):
        raise InputError(
            f"There are {size} values but counts has shape {c.shape}; pass one count per value."
        )
    if not np.all(np.isfinite(c)):
        raise InputError("Some counts are not finite (NaN or infinity); every count must be a whole number >= 0.")
    if np.any(c < 0):
        raise InputError(
            f"{int(np.sum(c < 0))} counts are negative; a count says how many times a value "
            "was seen and must be a whole number >= 0."
        )
    frac = np.abs(c - np.round(c)) > 1e-9 * np.maximum(1.0, np.abs(c))
    if frac.any():
        first = float(c[np.flatnonzero(frac)[0]])
        raise InputError(
            f"Counts must be whole numbers, but {int(frac.sum())} are not (e.g. {first:g}); "
            "check that the count column holds tallies, not measurements."
        )
    return np.round(c)


def check_widths(widths: str) -> tuple[str, ...]:
    """Turn ``"separate"``, ``"shared"`` or ``"both"`` into a tuple of variants."""
    if widths == "both":
        return WIDTHS_CHOICES
    if widths in WIDTHS_CHOICES:
        return (widths,)
    raise InputError(
        f"Unknown widths setting {widths!r}; use 'separate' (each component its own "
        "standard deviation), 'shared' (one standard deviation for all) or 'both'."
    )


def check_component_range(kmin: int, kmax: int, sample: Sample) -> None:
    """Check a range of component counts against what the sample supports.

    A component needs at least two distinct values to have a spread, and the
    model must have fewer free parameters than there are observations.
    """
    for name, k in (("kmin", kmin), ("kmax", kmax)):
        if not isinstance(k, (int, np.integer)) or isinstance(k, bool) or k < 1:
            what = "the number of components" if kmin == kmax else f"{name} (a number of components)"
            raise InputError(f"{what} must be a whole number >= 1, got {k!r}; a mixture has at "
                             "least one component.")
    if kmin > kmax:
        raise InputError(f"kmin ({kmin}) is larger than kmax ({kmax}); swap them or widen the range.")
    limit = max_components(sample)
    if kmax > limit:
        raise InputError(
            f"{kmax} components cannot be fitted to {sample.n:g} values with "
            f"{sample.n_distinct} distinct values; each component needs at least two distinct "
            f"values and the model needs fewer parameters than observations, so use kmax <= {limit}."
        )


def max_components(sample: Sample) -> int:
    """Largest component count the sample can support (at least 1)."""
    by_distinct = sample.n_distinct // 2
    by_params = int((sample.n - 1) // 3) + 1  # 3k - 1 parameters < n
    return max(1, min(by_distinct, by_params))


def weighted_mean_sd(x, c) -> tuple[float, float]:
    """Weighted mean and (population) standard deviation without over- or underflow.

    Values are scaled by their largest magnitude before squaring, so samples
    around 1e-200 or 1e150 give the right spread.

    Parameters
    ----------
    x, c : ndarray, shape (n,)
        Values and positive counts.

    Returns
    -------
    mean, sd : float
    """
    n = float(c.sum())
    big = float(np.max(np.abs(x)))
    if big == 0.0:
        return 0.0, 0.0
    mean = big * float(np.dot(c, x / big) / n)
    d = x - mean
    reach = float(np.max(np.abs(d)))
    if reach == 0.0:
        return mean, 0.0
    return mean, reach * float(np.sqrt(np.dot(c, (d / reach) ** 2) / n))


def check_seed(seed) -> int:
    """A seed must be a whole number >= 0 (the same seed gives the same result)."""
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise InputError(f"The seed must be a whole number >= 0, got {seed!r}; the same seed "
                         "gives the same result, bit for bit.")
    return int(seed)
