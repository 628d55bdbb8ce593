"""Histogram bins for the main plot (plain numpy, no Qt).

The default is the Freedman-Diaconis rule, width ``2 IQR n^(-1/3)``
(Freedman & Diaconis 1981, Z. Wahrscheinlichkeitstheorie verw. Gebiete
57:453-476), with counts taken as weights. When the values sit on a grid (a
recorded resolution) on the analysis scale, the width is rounded to a whole
number of grid steps and the edges fall half-way between grid points, so that
every bar holds the same number of possible values (no comb pattern from
rounding).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["BIN_RULES", "bin_edges", "weighted_histogram"]

#: Rules offered in the window, in the order shown.
BIN_RULES = ("Freedman-Diaconis", "Scott", "Sturges", "fixed number")
_MAX_BINS = 400


def _weighted_quantiles(values, weights, probabilities, unweighted=False):
    if unweighted:  # a partition, not a sort: a million values in milliseconds
        return np.quantile(values, probabilities, method="inverted_cdf")
    order = np.argsort(values, kind="stable")
    x, w = values[order], weights[order]
    cum = np.cumsum(w)
    positions = np.asarray(probabilities) * cum[-1]
    index = np.minimum(np.searchsorted(cum, positions, side="left"), x.size - 1)
    return x[index]


def _rule_width(values, weights, rule, unweighted=False) -> float:
    n = float(weights.sum())
    span = float(values.max() - values.min())
    if rule == "Sturges":
        return span / (math.ceil(math.log2(n)) + 1) if n > 1 else span
    if rule == "Scott":
        mean = float(np.dot(weights, values) / n)
        sd = math.sqrt(float(np.dot(weights, (values - mean) ** 2) / n))
        return 3.49 * sd * n ** (-1 / 3)  # Scott 1979, Biometrika 66:605-610
    q1, q3 = _weighted_quantiles(values, weights, [0.25, 0.75], unweighted)
    return 2.0 * float(q3 - q1) * n ** (-1 / 3)


def bin_edges(values, counts=None, *, rule="Freedman-Diaconis", bins=30, grid_step=None) -> np.ndarray:
    """Edges of the histogram bars.

    Parameters
    ----------
    values : array_like, shape (n,)
        Finite values on the analysis scale.
    counts : array_like, shape (n,), optional
        Weight of each value (a value/count table).
    rule : {"Freedman-Diaconis", "Scott", "Sturges", "fixed number"}
        How the bar width is chosen.
    bins : int, default 30
        Number of bars for ``"fixed number"``.
    grid_step : float, optional
        Step of the grid the values lie on (the resolution, on the analysis
        scale); widths are then whole multiples of it.

    Returns
    -------
    ndarray, shape (m + 1,)
        Increasing edges of ``m`` bars, 1 <= m <= 400.
    """
    x = np.asarray(values, dtype=np.float64)
    w = np.ones_like(x) if counts is None else np.asarray(counts, dtype=np.float64)
    lo, hi = float(x.min()), float(x.max())
    step = grid_step if grid_step and grid_step > 0 else None
    if rule == "fixed number":
        width = (hi - lo) / max(int(bins), 1)
    else:
        width = _rule_width(x, w, rule, unweighted=counts is None)
    if step is not None:
        width = max(step, round(width / step) * step) if width > 0 else step
        lo, hi = lo - step / 2, hi + step / 2
    if not width > 0 or not math.isfinite(width):  # every value the same, or a zero IQR
        width = (hi - lo) / 10 if hi > lo else max(abs(lo) * 0.01, 0.5)
    count = min(max(int(math.ceil((hi - lo) / width - 1e-9)), 1), _MAX_BINS)
    if count == _MAX_BINS:
        width = (hi - lo) / count
    edges = lo + width * np.arange(count + 1)
    if edges[-1] < hi:
        edges = np.append(edges, edges[-1] + width)
    if edges.size == 2 and edges[0] == edges[1]:
        edges = np.array([lo - 0.5, lo + 0.5])
    return edges


def weighted_histogram(values, counts, edges) -> np.ndarray:
    """Density of each bar (area one), shape (len(edges) - 1,)."""
    heights, _ = np.histogram(values, bins=edges, weights=counts, density=True)
    return heights
