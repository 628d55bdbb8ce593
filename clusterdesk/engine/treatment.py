"""Exact values or intervals: which likelihood a sample is fitted with.

A value recorded to a resolution ``h`` is only known to lie in
``[x - h/2, x + h/2)``; a tally class of width ``h`` holds values anywhere in
it; a reading below a detection limit lies below it.  Where the recorded
value sits in its interval is ``value_at``: ``"middle"`` for rounded readings
(the usual), ``"lower"`` for a class named by its lower end (a length class
"12 cm" holding 12.0 to 12.99, interval ``[x, x + h)``), ``"upper"`` for one
named by its upper end (``[x - h, x)``).  The *treatment* says
whether the fit uses the likelihood of exact values (densities) or of
intervals (:mod:`.grouped`).

``"auto"`` (the default) decides from the data:

* censored readings (an interval end at infinity) need intervals;
* a value/count table on a grid is a tally: intervals of the class width;
* values on a grid whose step is coarse against their spread are intervals
  (the step at least ``COARSE_FRACTION`` of the robust standard deviation:
  below that the rounding variance ``h**2 / 12`` is under 4e-5 of the
  variance and both likelihoods give the same fit);
* otherwise the values are exact.

``"exact"`` and ``"intervals"`` force one treatment.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..grid import grid_step
from .fitting import _robust_spread
from .grouped import prepare_intervals
from .validation import Sample, prepare_sample, weighted_mean_sd

__all__ = ["Treatment", "TREATMENTS", "VALUE_POSITIONS", "COARSE_FRACTION", "resolve_treatment",
           "check_value_at", "interval_offsets", "with_censored"]

TREATMENTS = ("auto", "exact", "intervals")
#: Where a recorded value sits in its interval, and how the outputs say it.
VALUE_POSITIONS = {"middle": "each value in the middle of its interval",
                   "lower": "each value the lower end of its interval",
                   "upper": "each value the upper end of its interval"}
#: A grid step at least this fraction of the robust spread is "coarse" (our choice, see above).
COARSE_FRACTION = 0.02


@dataclass(frozen=True)
class Treatment:
    """Which likelihood a fit used, and why.

    Attributes
    ----------
    requested : {"auto", "exact", "intervals"}
    used : {"exact", "intervals"}
    resolution : float or None
        Width of the intervals (the grid step or class width) on the values'
        scale; None for exact values or intervals given end by end.
    censored : int
        Observations with an open-ended interval (e.g. below a detection limit).
    reason : str
        One sentence in plain words.
    value_at : {"middle", "lower", "upper"} or None
        Where each recorded value sits in its interval (see the module
        notes); None for exact values, or intervals given end by end
        without saying.
    """

    requested: str
    used: str
    resolution: float | None
    censored: int
    reason: str
    value_at: str | None = None

    def describe(self) -> str:
        """A line for tables, reports and the window."""
        if self.used == "exact":
            what = "Likelihood of exact values"
        elif self.resolution is not None:
            what = f"Likelihood of intervals of width {self.resolution:g}"
        else:
            what = "Likelihood of intervals"
        if self.used == "intervals" and self.value_at is not None:
            what += f", {VALUE_POSITIONS[self.value_at]}"
        how = "chosen automatically" if self.requested == "auto" else "as requested"
        return f"{what} ({how}): {self.reason}"

    def as_dict(self) -> dict:
        """Plain JSON types, for summaries and saved analyses."""
        return {"requested": self.requested, "used": self.used, "resolution": self.resolution,
                "value_at": self.value_at, "censored": self.censored, "reason": self.reason}


def check_treatment(treatment) -> str:
    """``"auto"``, ``"exact"`` or ``"intervals"``; anything else is an :class:`InputError`."""
    if treatment not in TREATMENTS:
        raise InputError(f"Unknown treatment {treatment!r}; use 'auto' (decide from the "
                         "resolution), 'exact' (values as exact) or 'intervals' (each value "
                         "known only to lie within its resolution).")
    return treatment


def check_value_at(value_at) -> str:
    """``"middle"``, ``"lower"`` or ``"upper"``; anything else is an :class:`InputError`."""
    if value_at not in VALUE_POSITIONS:
        raise InputError(f"Unknown position {value_at!r} of a value in its interval; use 'middle' "
                         "(rounded readings), 'lower' (a class named by its lower end, e.g. 12 for "
                         "12.0 to 12.99) or 'upper' (named by its upper end).")
    return value_at


def interval_offsets(value_at: str, step: float) -> tuple[float, float]:
    """The interval of a value ``x`` recorded to ``step`` is ``[x + lo, x + hi)``; returns ``(lo, hi)``."""
    return {"middle": (-0.5 * step, 0.5 * step), "lower": (0.0, step),
            "upper": (-step, 0.0)}[check_value_at(value_at)]


def with_censored(values, counts, bounds, limits, sides, limit_counts) -> dict:
    """Values known to intervals, joined by readings beyond a limit as open intervals.

    Parameters
    ----------
    values, counts : ndarray, shape (n,); counts may be None (one each)
    bounds : tuple (lower, upper) of ndarray, each shape (n,)
        The values' intervals.
    limits, sides, limit_counts : ndarray, shape (m,)
        Censored readings: side -1 lies below its limit ``(-inf, limit)``,
        +1 above it ``(limit, inf)``.

    Returns
    -------
    dict
        ``values``, ``counts`` and ``bounds`` for :func:`resolve_treatment`.
    """
    lower, upper = bounds
    below = np.asarray(sides) < 0
    kept_counts = np.ones(np.size(values)) if counts is None else counts
    return {"values": np.concatenate([values, limits]),
            "counts": np.concatenate([kept_counts, limit_counts]),
            "bounds": (np.concatenate([lower, np.where(below, -np.inf, limits)]),
                       np.concatenate([upper, np.where(below, limits, np.inf)]))}


def resolve_treatment(values, counts=None, *, treatment="auto", resolution=None,
                      bounds=None, value_at=None) -> tuple[Sample, Treatment]:
    """Decide the treatment and prepare the sample for it.

    Parameters
    ----------
    values : array_like, shape (n,)
    counts : array_like, shape (n,), optional
    treatment : {"auto", "exact", "intervals"}, default "auto"
    resolution : float, optional
        Recording step (or class width) of the values; default: detected
        (:func:`clusterdesk.grid.grid_step`).
    bounds : tuple (lower, upper) of array_like, each shape (n,), optional
        Each value's interval given end by end (e.g. after a log transform, or
        ``-inf`` for a reading below a detection limit); takes precedence over
        ``resolution`` for the intervals.  Under ``"exact"`` they are not used.
    value_at : {"middle", "lower", "upper"}, optional
        Where each value sits in its interval of width ``resolution``
        (default "middle"); with ``bounds``, only said in the treatment's
        description (the bounds already hold it).

    Returns
    -------
    sample : Sample
        Exact values, or intervals (``sample.lower`` set).
    treatment : Treatment
    """
    check_treatment(treatment)
    step = _check_resolution(resolution)
    if value_at is not None:
        check_value_at(value_at)
    position = value_at if value_at is not None or bounds is not None else "middle"
    sample = prepare_sample(values, counts)  # validated and sorted once
    if treatment == "exact":
        return _exact_sample(sample), Treatment(
            "exact", "exact", None, 0, "each value is taken at face value.")
    if bounds is None and step is None:
        step = grid_step(sample.values)
    censored = 0 if bounds is None else _count_censored(bounds, counts)
    if bounds is None and step is None:
        if treatment == "intervals":
            raise InputError("No recording grid was found in the values, so their intervals are "
                             "unknown; give the resolution (e.g. 0.1) or use the exact treatment.")
        return _exact_sample(sample), Treatment(
            "auto", "exact", None, 0, "no recording grid was found, so the values are taken as exact.")
    if treatment == "auto":
        use, reason = _auto_choice(sample, counts is not None, step, bounds, censored)
        if not use:
            return _exact_sample(sample), Treatment("auto", "exact", None, 0, reason)
    else:
        reason = "each value is known only to lie within its interval."
    if bounds is not None:
        grouped = prepare_intervals(values, counts, bounds[0], bounds[1])
    else:
        v, n = _tied(sample)
        lo, hi = interval_offsets(position, step)
        grouped = prepare_intervals(v, n, v + lo, v + hi)
    return grouped, Treatment(treatment, "intervals", None if bounds is not None else step,
                              censored, reason, position)


def _check_resolution(resolution):
    if resolution is None:
        return None
    try:
        step = float(resolution)
    except (TypeError, ValueError):
        step = float("nan")
    if not (np.isfinite(step) and step > 0):
        raise InputError(f"The resolution must be a positive number (the recording step, e.g. "
                         f"0.1), got {resolution!r}.")
    return step


def _count_censored(bounds, counts):
    lower, upper = (np.asarray(b, dtype=np.float64) for b in bounds)
    open_end = np.isinf(lower) | np.isinf(upper)
    if counts is None:
        return int(open_end.sum())
    return int(np.round(np.asarray(counts, dtype=np.float64)[open_end].sum()))


def _auto_choice(sample, tally, step, bounds, censored):
    if censored:
        return True, (f"{censored} readings lie beyond a limit (censored), which only the "
                      "likelihood of intervals can use.")
    width = step
    if bounds is not None:
        lower, upper = (np.asarray(b, dtype=np.float64) for b in bounds)
        width = float(np.median(upper - lower))
    if tally:
        return True, ("a value/count table: each count is a class of width "
                      f"{width:.4g}, so each value is an interval.")
    spread = _robust_sd(*_tied(sample))  # on the distinct values: 10^7 readings cost ~0.4 s otherwise
    share = width / spread if spread > 0 else np.inf
    if share >= COARSE_FRACTION:
        return True, (f"the values lie on a grid (intervals {width:.4g} wide, {100 * share:.2g} % "
                      "of the robust spread), coarse enough for rounding to matter.")
    return False, (f"the values lie on a grid of step {width:.4g}, fine against their spread "
                   f"({100 * share:.2g} % of the robust spread), so they are taken as exact.")


def _robust_sd(x, c):
    """The robust spread the fit's variance floor uses, in the values' units."""
    center, sd = weighted_mean_sd(x, c)
    return sd * _robust_spread((x - center) / sd, c) if sd > 0 else 0.0


def _tied(sample: Sample):
    """Distinct values and their total counts (the sample is sorted, so ties are neighbours)."""
    x, c = sample.values, sample.counts
    first = np.flatnonzero(np.r_[True, x[1:] != x[:-1]])
    return x[first], np.add.reduceat(c, first)


def _exact_sample(sample: Sample) -> Sample:
    """Exact values with ties gathered into counts: the same likelihood, a cost set by the distinct values."""
    if sample.n_distinct == sample.values.size:
        return sample
    v, n = _tied(sample)
    v.setflags(write=False)
    n.setflags(write=False)
    return Sample(values=v, counts=n, n=sample.n, n_distinct=sample.n_distinct)
