"""Starting parameters for EM restarts.

Three kinds of start are mixed so that restarts explore different basins:

* quantile split: the sorted sample cut into k groups of equal count;
* k-means++ seeding (Arthur & Vassilvitskii 2007) on the values, each value
  then given to its nearest seed;
* random data points as means, with random widths (between a tenth of the
  overall standard deviation and all of it) and random weights.

All work on weighted values (counts), so binned data and value/count tables
start the same way as raw values.
"""

from __future__ import annotations

import numpy as np

__all__ = ["make_starts", "START_KINDS"]

START_KINDS = ("quantile split", "k-means++", "random points")


def make_starts(x, c, k: int, restarts: int, rng: np.random.Generator, var_floor: float):
    """Build ``restarts`` starting parameter sets for a k-component fit.

    Parameters
    ----------
    x : ndarray, shape (m,)
        Sorted values (standardised units).
    c : ndarray, shape (m,)
        Positive counts.
    k : int
        Number of components.
    restarts : int
        Number of starts wanted (>= 1). With ``k == 1`` a single start is returned.
    rng : numpy.random.Generator
        Source of randomness; the starts depend only on its state.
    var_floor : float
        Smallest variance a start may have.

    Returns
    -------
    weights, means, variances : ndarray, shape (r, k)
        Each row one start, means ascending. ``r == restarts`` (or 1 when k == 1).
    """
    if k == 1 or restarts < 1:
        restarts = 1
    total = c.sum()
    mean = float(np.dot(c, x) / total)
    var = float(np.dot(c, (x - mean) ** 2) / total)
    rows = []
    for i in range(restarts):
        kind = 0 if i == 0 else 1 + (i - 1) % 2
        if kind == 0:
            labels = _quantile_labels(c, k)
        elif kind == 1:
            labels = _nearest_labels(x, _kmeanspp_seeds(x, c, k, rng))
        else:
            labels = None
        if labels is None:
            # Random points with random widths and weights: reaches nested
            # solutions (a narrow component inside a wide one) that
            # partition-based starts never propose.
            idx = _distinct_random_points(x, c, k, rng)
            means = x[idx]
            w = rng.dirichlet(np.full(k, 2.0))
            v = var * np.exp(rng.uniform(np.log(0.01), 0.0, size=k))
        else:
            w, means, v = _group_moments(x, c, labels, k, var)
        rows.append((w, means, np.maximum(v, var_floor)))
    w, m, v = (np.array(a, dtype=np.float64) for a in zip(*rows))
    order = np.argsort(m, axis=1, kind="stable")
    return (np.take_along_axis(w, order, 1), np.take_along_axis(m, order, 1),
            np.take_along_axis(v, order, 1))


def _quantile_labels(c, k):
    cum = np.cumsum(c) - 0.5 * c
    return np.minimum((cum / c.sum() * k).astype(np.int64), k - 1)


def _kmeanspp_seeds(x, c, k, rng):
    seeds = [x[rng.choice(x.size, p=c / c.sum())]]
    d2 = (x - seeds[0]) ** 2
    for _ in range(1, k):
        p = c * d2
        s = p.sum()
        if s <= 0:
            break
        seeds.append(x[rng.choice(x.size, p=p / s)])
        d2 = np.minimum(d2, (x - seeds[-1]) ** 2)
    return np.sort(np.asarray(seeds))


def _nearest_labels(x, seeds):
    if seeds.size < 2:
        return np.zeros(x.size, dtype=np.int64)
    edges = 0.5 * (seeds[1:] + seeds[:-1])
    return np.searchsorted(edges, x)


def _distinct_random_points(x, c, k, rng):
    distinct = np.flatnonzero(np.r_[True, np.diff(x) > 0])
    w = np.add.reduceat(c, distinct)
    pick = rng.choice(distinct.size, size=min(k, distinct.size), replace=False, p=w / w.sum())
    return distinct[pick]


def _group_moments(x, c, labels, k, var_all):
    w = np.bincount(labels, weights=c, minlength=k)
    sx = np.bincount(labels, weights=c * x, minlength=k)
    empty = w <= 0
    if empty.any():
        # A seed attracted no values: drop back to random points for this start.
        return _fill_empty(x, c, labels, k, var_all)
    m = sx / w
    sxx = np.bincount(labels, weights=c * (x - m[labels]) ** 2, minlength=k)
    v = sxx / w
    # A group of one value has no spread; give it a share of the overall one.
    v = np.where(v > 0, v, var_all / k**2)
    return w / w.sum(), m, v


def _fill_empty(x, c, labels, k, var_all):
    w = np.bincount(labels, weights=c, minlength=k)
    present = np.flatnonzero(w > 0)
    means = np.quantile(x, (np.arange(k) + 0.5) / k)
    weights = np.full(k, 1.0 / k)
    variances = np.full(k, var_all / k**2)
    for j in present:
        sel = labels == j
        means[j] = np.dot(c[sel], x[sel]) / w[j]
    return weights, np.sort(means), variances
