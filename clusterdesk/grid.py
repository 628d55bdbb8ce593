"""The step of the grid that recorded values sit on (the measurement resolution).

Instruments and forms record to a resolution (1 mm, 0.1 cm, whole minutes).
Knowing the step ``h`` matters twice: the reader reports it
(:attr:`clusterdesk.io.Measurements.resolution`), and the fit uses it, since
rounded values carry at least the variance of a uniform error of width ``h``
(``h**2 / 12``, Sheppard 1898); without a floor of that size an unequal-width
mixture can put a zero-width spike on a tied value.

This module is pure numpy and sits at the bottom of the package, so that
:mod:`clusterdesk.io` and :mod:`clusterdesk.engine` share one implementation.

The values are taken to be written with a few decimals: the step is found on
the decimal grid of ``10**-k`` for the smallest ``k`` that holds every value
(up to float noise), as the greatest common divisor of the values' distances
on that grid.  In the usual case the work is one pass over the values: an
evenly spread sample fixes the decimals and shows a divisor of 1, and the
pass checks every value against that grid, gathering on the way the range
that the float-noise allowance depends on.  Otherwise the range is found
first, and the divisor taken from the sample is confirmed (or lowered) over
all values.  Ten million values cost a few vectorised passes, never a sort.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["MAX_DECIMALS", "grid_step"]

#: Values with more decimals than this (beyond the leading digit of the largest
#: value, when it is below 1) are taken as continuous.
MAX_DECIMALS = 8
_SAMPLE = 20_000  # values looked at to guess the decimals and the divisor
_BLOCK = 1 << 16  # values per vectorised step (half a megabyte of float64)
_GRID_TOLERANCE = 1e-6  # allowed distance from the grid, in grid steps
_NOISE = 4e-16  # float rounding allowed, relative to the largest value
_MOST_DECIMALS = 300  # 10.0**k stays finite
_FINER_NOISE = 0.01  # a finer grid is looked at only while float rounding stays below this part of its step
_UNDECIDED = object()


def _tolerance(largest: float, scale: float) -> float:
    return _GRID_TOLERANCE + _NOISE * largest * scale


def _off_grid(x: np.ndarray, scale: float, tolerance: float) -> bool:
    """Tell whether some value times ``scale`` is farther than ``tolerance`` from an integer."""
    s = x * scale
    s -= np.rint(s)
    return bool(s.max() > tolerance or s.min() < -tolerance)


def _divisor(grid: np.ndarray, smallest: float, known: int) -> int:
    """gcd(known, distances of ``grid`` from ``smallest``), for integer-valued floats ``grid`` (changed in place).

    Exact: the distances are int64, and only those that ``known`` does not
    divide (a libdivide floor division, no float remainder) enter the gcd.
    """
    grid -= smallest
    q = grid.astype(np.int64)
    if known:
        multiple = q // known
        multiple *= known
        q = q[multiple != q]
        if q.size == 0:
            return known
    return int(np.gcd.reduce(q, initial=known))


def _step_on_grid(x: np.ndarray, sample: np.ndarray, scale: float, smallest: float, tolerance: float) -> int | None:
    """The gcd of the grid distances from ``smallest``, or None if a value is off the grid."""
    step = _divisor(np.rint(sample * scale), smallest, 0)
    scaled = np.empty(min(_BLOCK, x.size))
    grid = np.empty_like(scaled)
    for a in range(0, x.size, _BLOCK):
        block = x[a : a + _BLOCK]
        s, g = scaled[: block.size], grid[: block.size]
        np.multiply(block, scale, out=s)
        np.rint(s, out=g)
        s -= g
        if s.max() > tolerance or s.min() < -tolerance:
            return None
        if step != 1:
            step = _divisor(g, smallest, step)
    return step


def _most_decimals(largest: float) -> int:
    return min(MAX_DECIMALS + max(0, -math.floor(math.log10(largest))), _MOST_DECIMALS)


def _first_decimals(sample: np.ndarray, largest: float, below: int) -> int | None:
    """The fewest decimals ``k < below`` that hold every sampled value, or None."""
    for decimals in range(below):
        if not _off_grid(sample, 10.0**decimals, _tolerance(largest, 10.0**decimals)):
            return decimals
    return None


def _one_pass(x: np.ndarray, sample: np.ndarray):
    """The usual case in one pass over the values: the sample fixes the decimals, and their divisor is 1.

    Returns the step, None (no grid), or ``_UNDECIDED`` when the case is not
    the usual one (then :func:`_exact` decides, with the range known first).
    The range (for the float-noise allowance) is gathered during the pass
    and the sample's verdict checked again with it afterwards, so that the
    answer is exactly the one :func:`_exact` gives.
    """
    largest = float(np.max(np.abs(sample)))
    if not math.isfinite(largest) or largest == 0.0:
        return _UNDECIDED
    decimals = _first_decimals(sample, largest, _most_decimals(largest) + 1)
    if decimals is None:
        return _UNDECIDED
    scale = 10.0**decimals
    if largest * scale >= 2.0**52 or _divisor(np.rint(sample * scale), float(np.rint(sample.min() * scale)), 0) != 1:
        return _UNDECIDED
    low, high, off = math.inf, -math.inf, 0.0
    scaled = np.empty(min(_BLOCK, x.size))
    grid = np.empty_like(scaled)
    for a in range(0, x.size, _BLOCK):
        block = x[a : a + _BLOCK]
        s, g = scaled[: block.size], grid[: block.size]
        block_low, block_high = float(block.min()), float(block.max())
        if not (math.isfinite(block_low) and math.isfinite(block_high)):
            return None
        low, high = min(low, block_low), max(high, block_high)
        np.multiply(block, scale, out=s)
        np.rint(s, out=g)
        s -= g
        off = max(off, float(s.max()), -float(s.min()))
        if not off <= _tolerance(max(abs(low), abs(high)), scale):  # also when nan
            return _UNDECIDED
    if low == high:
        return None
    largest_all = max(abs(low), abs(high))
    if largest_all > largest and (
        _most_decimals(largest_all) < decimals or _first_decimals(sample, largest_all, decimals) is not None
    ):
        return _UNDECIDED
    if not off <= _tolerance(largest_all, scale):
        return _UNDECIDED
    if abs(float(np.rint(high * scale)) - float(np.rint(low * scale))) >= 2.0**62:
        return None
    return round(1.0 / scale, decimals)


def _exact(x: np.ndarray, sample: np.ndarray) -> float | None:
    """The step, with the range of the values found first (any case)."""
    low, high = float(x.min()), float(x.max())
    if not (math.isfinite(low) and math.isfinite(high)) or low == high:
        return None
    largest = max(abs(low), abs(high))
    for decimals in range(_most_decimals(largest) + 1):
        scale = 10.0**decimals
        tolerance = _tolerance(largest, scale)
        if _off_grid(sample, scale, tolerance):
            continue
        smallest = float(np.rint(low * scale))
        if abs(float(np.rint(high * scale)) - smallest) >= 2.0**62:
            return None
        step = _step_on_grid(x, sample, scale, smallest, tolerance)
        if step:
            return round(step / scale, decimals)
        if step is not None and _NOISE * largest * scale * 10.0 > _FINER_NOISE:
            return None
        # step 0: every value sits on one grid point, too coarse to tell them
        # apart (values near 1e-8 on the grid of 1): look finer, as long as
        # float rounding cannot be mistaken for the finer grid.
    return None


def grid_step(values) -> float | None:
    """Find the step of the grid the values sit on (the measurement resolution).

    The step is the greatest common divisor of the values' distances on the
    decimal grid ``10**-k`` of the fewest decimals ``k`` that holds them all,
    so values in half units give 0.5, tenths give 0.1 and whole numbers give 1
    (or 2, 5, 10 ... when all distances share that factor).  Float noise such
    as ``0.30000000000000004`` is tolerated (1e-6 of a grid step, plus the
    float rounding of the largest value).  At most eight decimals are looked
    for (more when every value is below 1: eight beyond the leading digit of
    the largest, so 5e-10 steps are found in values near 1e-8); a grid so
    coarse that every value sits on one of its points gives way to finer ones.

    Parameters
    ----------
    values : array_like of float, shape (n,)
        Finite values in any order (float64 input is not copied).

    Returns
    -------
    float or None
        The step, rounded to its ``k`` decimals; None for continuous data
        (no grid within the decimals looked for), fewer than two distinct
        values, no values, or values that are not all finite.
    """
    x = np.asarray(values, dtype=np.float64).reshape(-1)
    if x.size < 2:
        return None
    sample = x[:: max(1, x.size // _SAMPLE)]
    step = _one_pass(x, sample)
    return _exact(x, sample) if step is _UNDECIDED else step
