"""Every interval a value could have been recorded as: the support of a parametric bootstrap of intervals.

A parametric bootstrap simulates samples from the fitted mixture and records
them the way the data were recorded (Efron & Tibshirani 1993, An
Introduction to the Bootstrap, §6.5, the parametric bootstrap). For values
known only to an interval (rounded readings, tally classes, censored
readings) a simulated value may fall where no observed value fell: into an
empty grid cell between observed ones, or beyond the data. Drawing only over
the observed intervals would simulate a truncated, distorted version of the
fit, and an estimate could then fall outside its own interval. The cells
here tile the whole line:

* the observed intervals (censored ones included, e.g. ``(-inf, limit)``);
* the gaps between them: a gap whose length is a whole number of the most
  common interval width (the recording step) is cut into cells of that
  width, since a value there would have been recorded as one of them;
  another gap is one cell;
* beyond the data, cells of the step out to the fit's central
  ``1 - 2e-3/n`` probability (as the exact path's recording grid,
  :mod:`.replicates`), the tails folded into the end cells.

Observed intervals that overlap (values recorded at two resolutions) give no
single way of recording a simulated value; :func:`recording_cells` then
returns None and the caller keeps to the observed intervals, saying so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .mixture import Mixture

__all__ = ["RecordingCells", "recording_cells", "cell_probabilities"]

_WHOLE_STEPS_TOL = 1e-6


@dataclass(frozen=True)
class RecordingCells:
    """Cells that tile the line, in the data's units, sorted.

    Attributes
    ----------
    values : ndarray, shape (m,)
        A representative value of each cell: the observed one for observed
        cells, the middle for added cells.
    lower, upper : ndarray, shape (m,)
        Cell ends; ``upper[i] == lower[i + 1]``.
    probabilities : ndarray, shape (m,)
        The mixture's probability of each cell (tails beyond the end cells
        folded into them); sums to 1 up to rounding.
    added : int
        Cells that hold no observed value.
    """

    values: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    probabilities: np.ndarray
    added: int


def recording_cells(values, lower, upper, mixture: Mixture, n: float, max_cells: int) -> RecordingCells | None:
    """The observed intervals, the gaps between them and the stretches beyond, as recording cells.

    Parameters
    ----------
    values, lower, upper : ndarray, shape (m,)
        The observed intervals and their representative values (e.g. a
        :class:`~.validation.Sample` made by :func:`.grouped.prepare_intervals`).
    mixture : Mixture
        The fit, in the data's units.
    n : float
        Sample size (sets how far beyond the data the cells reach).
    max_cells : int
        When cutting gaps and tails into steps would exceed this, each gap and
        tail is one cell instead.

    Returns
    -------
    RecordingCells or None
        None when observed intervals overlap.
    """
    order = np.lexsort((upper, lower))
    x, a, b = (np.asarray(arr, dtype=np.float64)[order] for arr in (values, lower, upper))
    if np.any(a[1:] < b[:-1]):
        return None
    step = _most_common_width(b - a)
    tail = min(1e-3, 1e-3 / max(float(n), 1.0))
    reach_lo, reach_hi = float(mixture.quantile(tail)), float(mixture.quantile(1.0 - tail))
    stretches = [(b[i], a[i + 1]) for i in np.flatnonzero(a[1:] > b[:-1])]
    if np.isfinite(a[0]) and reach_lo < a[0]:
        start = a[0] - step * math.ceil((a[0] - reach_lo) / step) if step else reach_lo
        stretches.append((start, a[0]))
    if np.isfinite(b[-1]) and reach_hi > b[-1]:
        end = b[-1] + step * math.ceil((reach_hi - b[-1]) / step) if step else reach_hi
        stretches.append((b[-1], end))
    pieces = [_cut(s, e, step) for s, e in stretches]
    if a.size + sum(p.size - 1 for p in pieces) > max_cells:
        pieces = [np.array([s, e]) for s, e in stretches]
    new_lower = np.concatenate([a] + [p[:-1] for p in pieces])
    new_upper = np.concatenate([b] + [p[1:] for p in pieces])
    new_values = np.concatenate([x] + [0.5 * (p[:-1] + p[1:]) for p in pieces])
    order = np.argsort(new_lower, kind="stable")
    lo, hi, mid = new_lower[order], new_upper[order], new_values[order]
    probabilities = cell_probabilities(mixture, np.r_[lo, hi[-1]])  # the cells tile: their ends are edges
    return RecordingCells(values=mid, lower=lo, upper=hi, probabilities=probabilities, added=int(lo.size - a.size))


def _most_common_width(widths) -> float:
    """The most common finite interval width (the recording step), or 0 when there is none."""
    finite = widths[np.isfinite(widths)]
    if finite.size == 0:
        return 0.0
    scale = float(np.max(finite))
    keys, counts = np.unique(np.round(finite / scale, 9), return_counts=True)
    return float(keys[np.argmax(counts)] * scale)


def _cut(start: float, end: float, step: float) -> np.ndarray:
    """Edges of ``[start, end)``: cells of ``step`` when it holds a whole number of them, else one cell."""
    if step > 0:
        steps = (end - start) / step
        whole = round(steps)
        if whole >= 1 and abs(steps - whole) <= _WHOLE_STEPS_TOL * max(1.0, steps):
            edges = start + step * np.arange(whole + 1)
            edges[-1] = end
            return edges
    return np.array([start, end])


def cell_probabilities(mixture: Mixture, edges) -> np.ndarray:
    """Mixture probability of each cell between ``edges``, the tails beyond the ends folded into the end cells.

    Parameters
    ----------
    mixture : Mixture
    edges : ndarray, shape (m + 1,)
        Increasing; the ends may be infinite (an open end cell).

    Returns
    -------
    ndarray, shape (m,)
    """
    cdf = mixture.cdf(edges)
    p = np.diff(cdf)
    p[0] += cdf[0]
    p[-1] += 1.0 - cdf[-1]
    return np.maximum(p, 0.0)
