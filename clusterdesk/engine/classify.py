"""How well a fitted mixture sorts values into its components.

Two kinds of answer:

* on the data: each row's posterior probabilities, the component it is
  assigned to (largest posterior), the share of rows assigned with a
  posterior of at least 0.9, and the counts assigned to each component;
* under the model: the expected misclassification rate of each component,
  the probability that a value drawn from component ``j`` lies where another
  component has the larger weighted density ``w_l phi_l`` (and so would be
  assigned elsewhere).  This is computed exactly from the decision regions:
  every pair of weighted normal densities crosses at most twice (the roots
  of a quadratic in ``x``), between consecutive crossings one component wins
  throughout, and the probability of each stretch is a difference of normal
  distribution functions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr

from ..errors import InputError
from .mixture import Mixture
from .validation import _check_counts

__all__ = ["ClassificationSummary", "classification_summary", "decision_regions",
           "misclassification_rates"]

CONFIDENT_POSTERIOR = 0.9


@dataclass(frozen=True, eq=False)
class ClassificationSummary:
    """Assignment of the rows to components, and the model's misclassification rates.

    Attributes
    ----------
    posterior : ndarray, shape (n, k)
        Posterior probability of each component for each row (rows in the
        order given).
    assigned : ndarray of int, shape (n,)
        Component with the largest posterior (0 = lowest mean).
    confident_share : float
        Share of rows (weighted by counts) assigned with a posterior >= ``threshold``.
    confident_share_by_component : ndarray, shape (k,)
        The same share among the rows assigned to each component (NaN for a
        component with none).
    threshold : float
    assigned_counts : ndarray, shape (k,)
        Rows (weighted by counts) assigned to each component.
    misclassification : ndarray, shape (k,)
        Probability that a value from component ``j`` is assigned elsewhere.
    overall_misclassification : float
        ``sum_j w_j misclassification_j``: the share of all values expected
        to be assigned to a component they did not come from.
    """

    posterior: np.ndarray
    assigned: np.ndarray
    confident_share: float
    confident_share_by_component: np.ndarray
    threshold: float
    assigned_counts: np.ndarray
    misclassification: np.ndarray
    overall_misclassification: float


def _pairwise_crossings(mixture: Mixture) -> np.ndarray:
    """Every ``x`` where two weighted component densities are equal, ascending.

    For components ``i`` and ``j`` the equation ``log w_i phi_i = log w_j phi_j``
    is ``a x^2 + b x + c = 0`` with ``a = 1/(2 s_j^2) - 1/(2 s_i^2)``,
    ``b = m_i/s_i^2 - m_j/s_j^2`` and ``c = m_j^2/(2 s_j^2) - m_i^2/(2 s_i^2) +
    ln(w_i s_j / (w_j s_i))``, solved in the cancellation-free form.
    """
    w, m, s = mixture.weights, mixture.means, mixture.sds
    i, j = np.triu_indices(mixture.k, 1)
    a = 0.5 / s[j] ** 2 - 0.5 / s[i] ** 2
    b = m[i] / s[i] ** 2 - m[j] / s[j] ** 2
    c = (0.5 * m[j] ** 2 / s[j] ** 2 - 0.5 * m[i] ** 2 / s[i] ** 2
         + np.log(w[i]) - np.log(w[j]) + np.log(s[j]) - np.log(s[i]))
    roots = []
    for aa, bb, cc in zip(a, b, c):
        if aa == 0.0:
            if bb != 0.0:
                roots.append(-cc / bb)
            continue
        disc = bb * bb - 4.0 * aa * cc
        if disc < 0:
            continue
        q = -0.5 * (bb + np.copysign(np.sqrt(disc), bb))
        roots.append(q / aa)
        if q != 0.0:
            roots.append(cc / q)
    roots = np.array(roots, dtype=np.float64)
    return np.unique(roots[np.isfinite(roots)])


def decision_regions(mixture: Mixture):
    """The stretches of the line on which each component has the largest weighted density.

    Parameters
    ----------
    mixture : Mixture

    Returns
    -------
    edges : ndarray, shape (p + 1,)
        Boundaries from ``-inf`` to ``+inf``; stretch ``t`` is ``[edges[t], edges[t+1]]``.
    winners : ndarray of int, shape (p,)
        The component that wins on each stretch (neighbouring stretches with
        the same winner are merged).
    """
    crossings = _pairwise_crossings(mixture)
    edges = np.concatenate([[-np.inf], crossings, [np.inf]])
    spread = float(mixture.sds.max())
    inner = 0.5 * (crossings[:-1] + crossings[1:])
    if crossings.size:
        probes = np.concatenate([[crossings[0] - spread], inner, [crossings[-1] + spread]])
    else:
        probes = np.array([float(mixture.means[0])])
    winners = mixture.classify(probes)  # largest posterior = largest weighted density
    keep = np.concatenate([[True], winners[1:] != winners[:-1]])
    edges = np.concatenate([edges[:-1][keep], [np.inf]])
    return edges, winners[keep]


def _normal_probability(lo_z, hi_z):
    """``Phi(hi) - Phi(lo)``, from the nearer tail so that small probabilities keep their digits."""
    upper = lo_z > 0
    return np.where(upper, ndtr(-lo_z) - ndtr(-hi_z), ndtr(hi_z) - ndtr(lo_z))


def misclassification_rates(mixture: Mixture) -> np.ndarray:
    """Probability that a value from each component falls where another component wins.

    Parameters
    ----------
    mixture : Mixture

    Returns
    -------
    ndarray, shape (k,)
        Entry ``j`` is ``integral over {x: another component wins} of phi_j``;
        0 for a one-component mixture.
    """
    edges, winners = decision_regions(mixture)
    lo, hi = edges[:-1], edges[1:]
    z_lo = (lo[None, :] - mixture.means[:, None]) / mixture.sds[:, None]
    z_hi = (hi[None, :] - mixture.means[:, None]) / mixture.sds[:, None]
    stretch = _normal_probability(z_lo, z_hi)                    # (k, stretches)
    elsewhere = winners[None, :] != np.arange(mixture.k)[:, None]
    return np.clip(np.sum(np.where(elsewhere, stretch, 0.0), axis=1), 0.0, 1.0)


def _rows(values, counts):
    try:
        x = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError("The values to classify could not be read as numbers.") from None
    if x.ndim != 1 or x.size == 0:
        raise InputError(f"Pass one non-empty column of values to classify; got shape {x.shape}.")
    if not np.all(np.isfinite(x)):
        raise InputError("Some values to classify are not finite (NaN or infinity); remove them.")
    c = np.ones_like(x) if counts is None else _check_counts(counts, x.size)
    if c.sum() <= 0:
        raise InputError("Every count is zero, so there is nothing to classify.")
    return x, c


def classification_summary(mixture: Mixture, values, counts=None, *,
                           threshold: float = CONFIDENT_POSTERIOR, posterior=None) -> ClassificationSummary:
    """Classify rows by their posterior probabilities and summarise how clear-cut it is.

    Parameters
    ----------
    mixture : Mixture
    values : array_like, shape (n,)
        Finite values, in any order (results follow this order).
    counts : array_like, shape (n,), optional
        Whole-number counts of each value; default 1 each.
    threshold : float, default 0.9
        Posterior at or above which an assignment counts as confident.
    posterior : ndarray, shape (n, k), optional
        The rows' posterior probabilities when they are not those of exact
        values (e.g. of intervals, :func:`.grouped.interval_posterior`);
        default ``mixture.posterior(values)``.

    Returns
    -------
    ClassificationSummary
    """
    if not isinstance(mixture, Mixture):
        raise InputError(f"classification_summary() needs a Mixture; got {type(mixture).__name__}.")
    if not 0.0 < float(threshold) <= 1.0:
        raise InputError(f"threshold must be a posterior probability in (0, 1]; got {threshold!r}.")
    x, c = _rows(values, counts)
    # A read-only view of the caller's posteriors (no copy of a long (n, k) array; their flags untouched).
    posterior = mixture.posterior(x) if posterior is None else np.asarray(posterior, dtype=np.float64).view()
    assigned = np.argmax(posterior, axis=1)
    confident = posterior[np.arange(x.size), assigned] >= threshold
    rates = misclassification_rates(mixture)
    for array in (posterior, assigned):
        array.setflags(write=False)
    assigned_counts = np.bincount(assigned, weights=c, minlength=mixture.k)
    confident_counts = np.bincount(assigned, weights=c * confident, minlength=mixture.k)
    with np.errstate(invalid="ignore", divide="ignore"):
        by_component = np.where(assigned_counts > 0, confident_counts / assigned_counts, np.nan)
    for array in (assigned_counts, by_component, rates):
        array.setflags(write=False)
    return ClassificationSummary(
        posterior=posterior, assigned=assigned,
        confident_share=float(c @ confident / c.sum()), confident_share_by_component=by_component,
        threshold=float(threshold),
        assigned_counts=assigned_counts, misclassification=rates,
        overall_misclassification=float(mixture.weights @ rates))
