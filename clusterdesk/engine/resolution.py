"""The step of the grid that measured values were recorded on.

Instruments and forms record to a resolution (1 mm, 0.1 cm, whole minutes).
Knowing the step ``h`` matters to the fit: rounded values carry at least the
variance of a uniform error of width ``h`` (``h**2 / 12``, Sheppard 1898), and
without a floor of that size an unequal-width mixture can put a zero-width
spike on a tied value.
"""

from __future__ import annotations

import numpy as np

__all__ = ["detect_grid_step"]


def detect_grid_step(values, *, rel_tol: float = 1e-6, max_points: int = 200_000):
    """Return the grid step of the values, or None when they are not on a grid.

    The candidate step is the smallest gap between distinct values; it is
    accepted when every distinct value lies within ``rel_tol`` steps of a
    whole multiple of the step from the smallest value, up to float noise
    (so 0.1-step data stored as binary floats are recognised).

    Parameters
    ----------
    values : array_like, shape (n,)
        Finite values, in any order.
    rel_tol : float, default 1e-6
        Allowed distance from the grid, as a fraction of the step, on top of
        the float rounding of the values themselves.
    max_points : int, default 200000
        At most this many distinct values are checked (evenly chosen).

    Returns
    -------
    float or None
        The step, rounded to 12 significant digits, or None for values with
        fewer than three distinct entries or not on a grid.
    """
    u = np.unique(np.asarray(values, dtype=np.float64))
    if u.size < 3:
        return None
    gaps = np.diff(u)
    step = float(gaps.min())
    if step <= 0 or not np.isfinite(step):
        return None
    # Gaps of float-noise size (e.g. 0.3 vs 0.30000000000000004) would make a
    # false tiny step: merge values closer than the noise first.
    noise = 64 * np.finfo(float).eps * max(abs(u[0]), abs(u[-1]), 1e-300)
    if step <= noise:
        u = u[np.r_[True, gaps > noise]]
        if u.size < 3:
            return None
        step = float(np.diff(u).min())
    if u.size > max_points:
        u = u[np.linspace(0, u.size - 1, max_points).astype(np.int64)]
    ratio = (u - u[0]) / step
    off = np.abs(ratio - np.round(ratio))
    allowed = rel_tol + 64 * np.finfo(float).eps * (np.abs(u) / step + ratio)
    if np.all(off <= allowed):
        return float(f"{step:.12g}")
    return None
