"""Criteria for choosing the number of components from a fitted log-likelihood.

All criteria are on the deviance scale, lower is better:

* BIC = -2 logL + p ln n (Schwarz 1978, Annals of Statistics 6:461-464);
* AIC = -2 logL + 2 p (Akaike 1974, IEEE Transactions on Automatic Control 19:716-723);
* ICL = BIC + 2 E, with E the entropy of the posterior probabilities
  (Biernacki, Celeux & Govaert 2000, IEEE Transactions on Pattern Analysis and
  Machine Intelligence 22:719-725), which penalises overlapping components.

A BIC difference approximates twice a log Bayes factor, which is worded on the
scale of Kass & Raftery (1995, Journal of the American Statistical Association
90:773-795).
"""

from __future__ import annotations

import math
import numbers

import numpy as np
from scipy.special import entr

from ..errors import InputError

__all__ = [
    "n_parameters",
    "bic",
    "aic",
    "icl",
    "posterior_entropy",
    "evidence_wording",
    "describe_gap",
    "bic_weights",
]

#: Upper ends (inclusive) of the Kass & Raftery bands on the 2 ln B scale, with their words.
EVIDENCE_BANDS = ((2.0, "weak"), (6.0, "positive"), (10.0, "strong"), (math.inf, "very strong"))

_ROW_SUM_TOLERANCE = 1e-6


def n_parameters(k: int, widths: str) -> int:
    """Number of free parameters of a ``k``-component normal mixture.

    Parameters
    ----------
    k : int
        Number of components, at least 1.
    widths : {"separate", "shared"}
        ``"separate"``: each component has its own sd, ``3k - 1`` parameters
        (k means, k sds, k - 1 free weights); ``"shared"``: one sd for all,
        ``2k`` parameters.

    Returns
    -------
    int
    """
    if isinstance(k, bool) or not isinstance(k, numbers.Integral) or k < 1:
        raise InputError(f"The number of components must be a whole number, at least 1; got {k!r}.")
    k = int(k)
    if widths == "separate":
        return 3 * k - 1
    if widths == "shared":
        return 2 * k
    raise InputError(
        f"Unknown widths setting {widths!r} for counting parameters; use 'separate' "
        "(each component its own standard deviation) or 'shared' (one for all)."
    )


def _check_loglik(loglik) -> float:
    loglik = float(loglik)
    if math.isnan(loglik) or loglik == math.inf:
        raise InputError(f"The log-likelihood must be a number below +infinity; got {loglik}.")
    return loglik


def _check_n_params(n_params) -> int:
    if isinstance(n_params, bool) or not isinstance(n_params, numbers.Integral) or n_params < 0:
        raise InputError(f"The number of parameters must be a whole number >= 0; got {n_params!r}.")
    return int(n_params)


def bic(loglik: float, n_params: int, n: float) -> float:
    """Bayesian information criterion ``-2 loglik + n_params ln n`` (Schwarz 1978).

    Parameters
    ----------
    loglik : float
        Maximised log-likelihood.
    n_params : int
        Number of free parameters (see :func:`n_parameters`).
    n : float
        Number of observations (the sum of the counts for weighted values), > 0.

    Returns
    -------
    float
        Lower is better.
    """
    loglik, n_params = _check_loglik(loglik), _check_n_params(n_params)
    n = float(n)
    if not (n > 0 and math.isfinite(n)):
        raise InputError(f"The number of observations must be positive and finite; got {n}.")
    return -2.0 * loglik + n_params * math.log(n)


def aic(loglik: float, n_params: int) -> float:
    """Akaike information criterion ``-2 loglik + 2 n_params`` (Akaike 1974); lower is better."""
    loglik, n_params = _check_loglik(loglik), _check_n_params(n_params)
    return -2.0 * loglik + 2.0 * n_params


def icl(bic_value: float, entropy: float) -> float:
    """Integrated completed likelihood criterion, BIC form: ``bic_value + 2 entropy``.

    Parameters
    ----------
    bic_value : float
        The model's BIC.
    entropy : float
        Entropy of its posterior probabilities (:func:`posterior_entropy`), >= 0.

    Returns
    -------
    float
        Lower is better (Biernacki, Celeux & Govaert 2000).
    """
    bic_value, entropy = float(bic_value), float(entropy)
    if math.isnan(bic_value):
        raise InputError("The BIC passed to icl() is not a number.")
    if not (entropy >= 0):
        raise InputError(f"The posterior entropy must be zero or positive; got {entropy}.")
    return bic_value + 2.0 * entropy


def posterior_entropy(posterior, counts=None) -> float:
    """Entropy of the classification, ``-sum_i c_i sum_j r_ij ln r_ij``.

    Parameters
    ----------
    posterior : array_like, shape (n, k)
        Posterior probabilities; each row sums to 1 (within 1e-6).
    counts : array_like, shape (n,), optional
        Non-negative multiplicity of each row; default 1 each.

    Returns
    -------
    float
        0 when every value is assigned with certainty; ``0 ln 0`` counts as 0.
    """
    r = np.asarray(posterior, dtype=np.float64)
    if r.ndim != 2:
        raise InputError(
            f"Posterior probabilities must be a table of shape (n, k); got shape {r.shape}."
        )
    if not np.all(np.isfinite(r)) or np.any(r < 0) or np.any(r > 1):
        raise InputError("Posterior probabilities must be finite numbers between 0 and 1.")
    if r.shape[0] and np.max(np.abs(r.sum(axis=1) - 1.0)) > _ROW_SUM_TOLERANCE:
        raise InputError("Each row of posterior probabilities must add up to 1.")
    per_row = entr(r).sum(axis=1)
    if counts is None:
        return float(per_row.sum())
    c = np.asarray(counts, dtype=np.float64)
    if c.shape != (r.shape[0],):
        raise InputError(
            f"counts must have one entry per row: got shape {c.shape} for {r.shape[0]} rows."
        )
    if not np.all(np.isfinite(c)) or np.any(c < 0):
        raise InputError("counts must be finite and not negative.")
    return float(c @ per_row)


def _check_gap(delta_bic) -> float:
    delta = float(delta_bic)
    if math.isnan(delta) or delta < 0:
        raise InputError(
            f"A BIC gap must be zero or positive (runner-up BIC minus best BIC); got {delta}."
        )
    return delta


def evidence_wording(delta_bic: float) -> str:
    """Strength of evidence for the better model, from its BIC advantage.

    Parameters
    ----------
    delta_bic : float
        BIC of the other model minus BIC of the better one (>= 0), read as
        ``2 ln B`` (Kass & Raftery 1995).

    Returns
    -------
    str
        ``"weak"`` for 0 to 2, ``"positive"`` above 2 up to 6, ``"strong"`` above
        6 up to 10, ``"very strong"`` above 10 (each band includes its upper end).
    """
    delta = _check_gap(delta_bic)
    for upper, words in EVIDENCE_BANDS:
        if delta <= upper:
            return words
    raise AssertionError("unreachable: the last band is unbounded")


def describe_gap(delta_bic: float) -> str:
    """One sentence about the BIC gap between the best model and the runner-up.

    Examples
    --------
    >>> describe_gap(4.3)
    'BIC favours the best model over the runner-up by 4.3: positive evidence.'

    The number is rounded to one decimal; the wording uses the unrounded gap.
    """
    delta = _check_gap(delta_bic)
    amount = f"{delta:.1f}" if math.isfinite(delta) else "an unlimited margin"
    strength = evidence_wording(delta)
    return f"BIC favours the best model over the runner-up by {amount}: {strength} evidence."


def bic_weights(bics) -> np.ndarray:
    """Relative support of each model, ``exp(-delta/2)`` normalised to sum to 1.

    Parameters
    ----------
    bics : array_like, shape (m,)
        BIC of each model; ``+inf`` (a model that could not be fitted) is allowed
        and gets weight 0, as long as one BIC is finite.

    Returns
    -------
    ndarray, shape (m,)
        ``w_i = exp(-(b_i - min b)/2) / sum_l exp(-(b_l - min b)/2)``.
    """
    b = np.asarray(bics, dtype=np.float64)
    if b.ndim != 1 or b.size == 0:
        raise InputError(
            f"bic_weights needs a flat, non-empty list of BIC values; got shape {b.shape}."
        )
    if np.any(np.isnan(b)) or np.any(b == -np.inf):
        raise InputError(
            "BIC values must be numbers and not -infinity; check the fits that produced them."
        )
    finite = np.isfinite(b)
    if not np.any(finite):
        raise InputError("At least one BIC must be finite to weigh models against each other.")
    relative = np.zeros_like(b)
    relative[finite] = np.exp(-0.5 * (b[finite] - b[finite].min()))
    return relative / relative.sum()
