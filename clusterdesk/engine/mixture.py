"""The :class:`Mixture` value: a one-dimensional mixture of normal distributions.

A mixture with ``k`` components has the density

    f(x) = sum_j w_j phi((x - m_j) / s_j) / s_j,

with weights ``w_j > 0`` summing to one, means ``m_j`` and standard deviations
``s_j > 0``.  Everything here is vectorised and evaluated in log space where
underflow would otherwise lose information (log density, posterior
probabilities, the mode search), so results stay finite and normalised far out
in the tails.
"""

from __future__ import annotations

import operator
from dataclasses import dataclass

import numpy as np
from scipy.special import log_ndtr, logsumexp, ndtr, ndtri

from ..errors import InputError

__all__ = ["Mixture", "cut_point_between"]

_LOG_SQRT_2PI = 0.5 * np.log(2.0 * np.pi)
#: Rows whose posteriors are computed together (bounds the temporaries of long columns).
_POSTERIOR_ROWS = 1 << 18
_EPS = np.finfo(np.float64).eps
_WEIGHT_SUM_TOLERANCE = 1e-6
_QUANTILE_MAX_ITERATIONS = 200
_MODE_GRID_OFFSETS = np.linspace(-5.0, 5.0, 801)  # in units of each component's sd
_MODE_GRID_SPAN_POINTS = 2049
_MODE_MERGE_DISTANCE = 1e-3  # in units of the smallest sd


def _read_only(values: np.ndarray) -> np.ndarray:
    values.setflags(write=False)
    return values


def _unpickle_mixture(cls, weights, means, sds):
    """A pickled mixture, validated by the constructor, with its weights exactly as pickled.

    The constructor divides the weights by their sum, which can move the last
    bit of weights that were already normalised; a model fitted in a worker
    process must arrive bit for bit as it was fitted.
    """
    mixture = cls(weights, means, sds)
    object.__setattr__(mixture, "weights", _read_only(np.array(weights, dtype=float)[_sorted_order(means, sds)]))
    return mixture


def _sorted_order(means, sds) -> np.ndarray:
    """Components by mean, ties by standard deviation (the order of a Mixture)."""
    return np.lexsort((np.asarray(sds, dtype=float), np.asarray(means, dtype=float)))


def _parameter_array(name: str, values) -> np.ndarray:
    try:
        array = np.array(values, dtype=np.float64)
    except (TypeError, ValueError) as error:
        raise InputError(f"Mixture {name} must be numbers; got {values!r}.") from error
    array = np.atleast_1d(array)
    if array.ndim != 1:
        raise InputError(
            f"Mixture {name} must be a flat list of numbers, one per component; "
            f"got an array of shape {array.shape}."
        )
    if not np.all(np.isfinite(array)):
        raise InputError(f"Mixture {name} must all be finite numbers; got {array.tolist()}.")
    return array


@dataclass(frozen=True, eq=False)
class Mixture:
    """A mixture of ``k`` normal components, sorted by mean (ties by standard deviation).

    Parameters
    ----------
    weights : array_like, shape (k,)
        Mixing proportions; each positive, summing to 1 within 1e-6 (they are then
        divided by their sum so that they add up to 1 to rounding).
    means : array_like, shape (k,)
        Component means.
    sds : array_like, shape (k,)
        Component standard deviations, each positive.

    Raises
    ------
    InputError
        If the arrays are empty, of different lengths, not finite, or break the
        rules above.

    Notes
    -----
    The stored arrays are float64 and read-only; component ``0`` has the lowest
    mean.  A scalar is accepted for a one-component mixture,
    e.g. ``Mixture(1.0, 10.0, 2.0)``.  Two mixtures compare equal when their
    (sorted) arrays are identical.
    """

    weights: np.ndarray
    means: np.ndarray
    sds: np.ndarray

    def __post_init__(self) -> None:
        weights = _parameter_array("weights", self.weights)
        means = _parameter_array("means", self.means)
        sds = _parameter_array("standard deviations", self.sds)
        if weights.size == 0:
            raise InputError("A mixture needs at least one component; the weights are empty.")
        if not weights.size == means.size == sds.size:
            raise InputError(
                "Mixture weights, means and standard deviations must have one entry per "
                f"component; got {weights.size}, {means.size} and {sds.size} entries."
            )
        if np.any(weights <= 0):
            raise InputError(
                f"Mixture weights must all be positive; got {weights.tolist()}. "
                "Drop components with zero weight."
            )
        total = weights.sum()
        if abs(total - 1.0) > _WEIGHT_SUM_TOLERANCE:
            raise InputError(
                f"Mixture weights must add up to 1 (within {_WEIGHT_SUM_TOLERANCE:g}); "
                f"they add up to {total:.10g}. Divide them by their sum first."
            )
        if np.any(sds <= 0):
            raise InputError(f"Mixture standard deviations must be positive; got {sds.tolist()}.")
        order = _sorted_order(means, sds)
        object.__setattr__(self, "weights", _read_only(weights[order] / total))
        object.__setattr__(self, "means", _read_only(means[order]))
        object.__setattr__(self, "sds", _read_only(sds[order]))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Mixture):
            return NotImplemented
        return all(np.array_equal(getattr(self, name), getattr(other, name))
                   for name in ("weights", "means", "sds"))

    def __hash__(self) -> int:
        return hash((self.weights.tobytes(), self.means.tobytes(), self.sds.tobytes()))

    def __reduce__(self):
        # Rebuild through the constructor so unpickled arrays are validated and read-only.
        return (_unpickle_mixture, (type(self), self.weights.copy(), self.means.copy(), self.sds.copy()))

    @property
    def k(self) -> int:
        """Number of components."""
        return int(self.weights.size)

    # ----------------------------------------------------------------- densities
    def _standardised(self, x: np.ndarray) -> np.ndarray:
        """``(x - m_j) / s_j``, shape ``x.shape + (k,)``."""
        with np.errstate(over="ignore", invalid="ignore"):
            return (x[..., None] - self.means) / self.sds

    def _log_components(self, x: np.ndarray) -> np.ndarray:
        """``log(w_j) + log phi_j(x)``, shape ``x.shape + (k,)``; -inf where it underflows."""
        z = self._standardised(x)
        with np.errstate(over="ignore"):
            return np.log(self.weights) - np.log(self.sds) - _LOG_SQRT_2PI - 0.5 * (z * z)

    def logpdf(self, x):
        """Natural log of the mixture density.

        Parameters
        ----------
        x : float or array_like, shape (n,) or any shape
            Points at which to evaluate.

        Returns
        -------
        ndarray, shape like ``x`` (a numpy float for a scalar)
            ``logsumexp_j(log w_j + log phi_j(x))``; finite wherever ``x`` is
            finite and not astronomically far out (beyond about 1e154 sds).
        """
        x = np.asarray(x, dtype=np.float64)
        return logsumexp(self._log_components(x), axis=-1)[()]

    def pdf(self, x):
        """Density; shape like ``x``. Underflows to 0 in the far tails (see :meth:`logpdf`)."""
        return np.exp(self.logpdf(x))

    def component_densities(self, x) -> np.ndarray:
        """Weighted component densities ``w_j phi_j(x)``.

        Returns
        -------
        ndarray, shape ``x.shape + (k,)``, i.e. (n, k) for ``x`` of shape (n,)
        """
        x = np.asarray(x, dtype=np.float64)
        return np.exp(self._log_components(x))

    def cdf(self, x):
        """Mixture distribution function ``sum_j w_j Phi((x - m_j) / s_j)``; shape like ``x``."""
        x = np.asarray(x, dtype=np.float64)
        values = ndtr(self._standardised(x)) @ self.weights
        return np.clip(values, 0.0, 1.0)[()]

    def logcdf(self, x):
        """Natural log of :meth:`cdf`, accurate far into the lower tail; shape like ``x``."""
        x = np.asarray(x, dtype=np.float64)
        return logsumexp(log_ndtr(self._standardised(x)), b=self.weights, axis=-1)[()]

    def logsf(self, x):
        """Natural log of :meth:`sf`, accurate far into the upper tail; shape like ``x``."""
        x = np.asarray(x, dtype=np.float64)
        return logsumexp(log_ndtr(-self._standardised(x)), b=self.weights, axis=-1)[()]

    def sf(self, x):
        """Survival function ``1 - cdf(x)``, accurate in the upper tail; shape like ``x``."""
        x = np.asarray(x, dtype=np.float64)
        values = ndtr(-self._standardised(x)) @ self.weights
        return np.clip(values, 0.0, 1.0)[()]

    # ----------------------------------------------------------------- quantiles
    def quantile(self, q):
        """Inverse of :meth:`cdf`.

        Parameters
        ----------
        q : float or array_like
            Probabilities in [0, 1]; 0 gives -inf and 1 gives +inf.

        Returns
        -------
        ndarray, shape like ``q``

        Raises
        ------
        InputError
            If any ``q`` is outside [0, 1] or not a number.

        Notes
        -----
        The root lies between the smallest and the largest component quantile
        at ``q`` (each component's distribution function is at most ``q`` at the
        former and at least ``q`` at the latter).  It is found by Newton steps on
        ``log F(x) = log q`` (``log S(x) = log(1 - q)`` above the median, for
        precision in the upper tail), safeguarded by bisection inside that
        bracket and vectorised over ``q``, to a few machine epsilons relative
        (or what rounding of ``q`` allows).  Where the distribution function is
        flat between far-apart components any point of the flat stretch is a
        valid answer.
        """
        q = np.asarray(q, dtype=np.float64)
        if np.any(np.isnan(q)) or np.any((q < 0) | (q > 1)):
            raise InputError("Quantile probabilities must lie between 0 and 1; got values outside.")
        result = np.empty(q.shape)
        result[q == 0] = -np.inf
        result[q == 1] = np.inf
        inside = (q > 0) & (q < 1)
        result[inside] = self._solve_quantiles(q[inside])
        return result[()]

    def _solve_quantiles(self, q: np.ndarray) -> np.ndarray:
        upper = q > 0.5
        tail = np.where(upper, 1.0 - q, q)  # exact for q in (0.5, 1)
        log_tail = np.log(tail)
        component_z = np.where(upper, -ndtri(tail), ndtri(tail))
        candidates = self.means + self.sds * component_z[:, None]
        lo, hi = candidates.min(axis=1), candidates.max(axis=1)
        x = 0.5 * (lo + hi)
        previous = np.full(q.shape, np.inf)
        scale = self.sds.min()
        active = np.flatnonzero(lo < hi)
        for _ in range(_QUANTILE_MAX_ITERATIONS):
            if active.size == 0:
                break
            xa, upper_a = x[active], upper[active]
            # g(x) = log F(x) - log q, or log(1 - q) - log S(x) above the median: both
            # increase with x and are close to linear in the tails, where Newton on F crawls.
            log_tail_x = np.empty(xa.shape)
            log_tail_x[upper_a] = self.logsf(xa[upper_a])
            log_tail_x[~upper_a] = self.logcdf(xa[~upper_a])
            gap = log_tail_x - log_tail[active]
            residual = np.where(upper_a, -gap, gap)
            lo[active] = np.where(residual < 0, xa, lo[active])
            hi[active] = np.where(residual > 0, xa, hi[active])
            with np.errstate(invalid="ignore", over="ignore"):
                # |g'(x)| = f / tail probability, so a Newton step is g * tail / f
                newton = xa - residual * np.exp(log_tail_x - self.logpdf(xa))
            slow = np.abs(residual) > 0.5 * previous[active]
            outside = ~np.isfinite(newton) | (newton <= lo[active]) | (newton >= hi[active])
            use_bisection = outside | slow
            step_to = np.where(use_bisection, 0.5 * (lo[active] + hi[active]), newton)
            tolerance = 4 * _EPS * np.maximum(np.abs(step_to), scale)
            # F(x) equals q to rounding: x is as good as the probability allows
            at_noise = np.abs(residual) <= 8 * _EPS * (1.0 + np.abs(log_tail_x))
            small_step = np.abs(step_to - xa) <= tolerance
            done = at_noise | small_step | (hi[active] - lo[active] <= tolerance)
            x[active] = np.where(at_noise, np.where(use_bisection, xa, newton), step_to)
            previous[active] = np.abs(residual)
            active = active[~done]
        return x

    # ------------------------------------------------------------------ sampling
    def sample(self, rng: np.random.Generator, size, *, return_labels: bool = False):
        """Draw values from the mixture.

        Parameters
        ----------
        rng : numpy.random.Generator
            Source of randomness, e.g. ``np.random.default_rng(seed)``; the same
            generator state gives the same values.
        size : int or tuple of int
            Number (or shape) of values to draw.
        return_labels : bool, default False
            Also return the index of the component each value came from.

        Returns
        -------
        values : ndarray, shape ``size``
        labels : ndarray of int, shape ``size``
            Only when ``return_labels`` is true.
        """
        if not isinstance(rng, np.random.Generator):
            raise InputError(
                f"sample() needs a numpy random Generator, got {type(rng).__name__}; "
                "use numpy.random.default_rng(seed)."
            )
        shape = (size,) if np.ndim(size) == 0 else tuple(size)
        try:
            shape = tuple(operator.index(n) for n in shape)
        except TypeError as error:
            raise InputError(f"The sample size must be a whole number; got {size!r}.") from error
        if any(n < 0 for n in shape):
            raise InputError(f"The sample size cannot be negative; got {size!r}.")
        labels = rng.choice(self.k, size=shape, p=self.weights)
        values = self.means[labels] + self.sds[labels] * rng.standard_normal(shape)
        return (values, labels) if return_labels else values

    # ----------------------------------------------------- posteriors, labelling
    def posterior(self, x) -> np.ndarray:
        """Posterior probability of each component given the value.

        Parameters
        ----------
        x : float or array_like, shape (n,)
            Values; ``+-inf`` are allowed (their limiting probabilities), NaN is not.

        Returns
        -------
        ndarray, shape ``x.shape + (k,)``, i.e. (n, k)
            Rows sum to 1, also far out in the tails: computed in log space as
            ``exp(log w_j phi_j(x) - logsumexp_l log w_l phi_l(x))``.
        """
        x = np.asarray(x, dtype=np.float64)
        if np.any(np.isnan(x)):
            raise InputError("Posterior probabilities need numbers; remove missing (NaN) values.")
        if x.ndim != 1 or x.size <= _POSTERIOR_ROWS:
            return self._posterior_rows(x)
        # Block by block: the same numbers row for row, without (n, k) temporaries.
        result = np.empty((x.size, self.k))
        for start in range(0, x.size, _POSTERIOR_ROWS):
            result[start:start + _POSTERIOR_ROWS] = self._posterior_rows(x[start:start + _POSTERIOR_ROWS])
        return result

    def _posterior_rows(self, x: np.ndarray) -> np.ndarray:
        log_components = self._log_components(x)
        total = logsumexp(log_components, axis=-1, keepdims=True)
        beyond = ~np.isfinite(total[..., 0])  # so far out that every log density overflowed
        with np.errstate(invalid="ignore"):
            result = np.exp(log_components - total)
        if np.any(beyond):
            right = (x[beyond] > 0)[:, None]
            result[beyond] = np.where(right, self._limit_posterior(+1), self._limit_posterior(-1))
        return result

    def _limit_posterior(self, side: int) -> np.ndarray:
        """Posterior as ``x -> side * inf``: the widest component wins, then the nearest mean."""
        widest = self.sds == self.sds.max()
        extreme = self.means[widest].max() if side > 0 else self.means[widest].min()
        winners = widest & (self.means == extreme)
        share = np.where(winners, self.weights, 0.0)
        return share / share.sum()

    def classify(self, x) -> np.ndarray:
        """Index of the component with the largest posterior probability (0 = lowest mean).

        Returns
        -------
        ndarray of int, shape like ``x``; ties go to the lower index.
        """
        return np.argmax(self.posterior(x), axis=-1)

    def loglik(self, x, counts=None) -> float:
        """Log-likelihood ``sum_i c_i log f(x_i)``.

        Parameters
        ----------
        x : array_like, shape (n,)
            Finite values.
        counts : array_like, shape (n,), optional
            Non-negative multiplicities of the values; default 1 each.

        Returns
        -------
        float
        """
        x = np.asarray(x, dtype=np.float64)
        if not np.all(np.isfinite(x)):
            raise InputError("The log-likelihood needs finite values; "
                             "remove missing or infinite values.")
        log_density = self.logpdf(x)
        if counts is None:
            return float(np.sum(log_density))
        counts = np.asarray(counts, dtype=np.float64)
        if counts.shape != x.shape:
            raise InputError(
                f"counts must have one entry per value: got shape {counts.shape} "
                f"for values of shape {x.shape}."
            )
        if not np.all(np.isfinite(counts)) or np.any(counts < 0):
            raise InputError("counts must be finite and not negative.")
        with np.errstate(invalid="ignore"):  # 0 * -inf where a count is 0
            return float(np.sum(np.where(counts > 0, counts * log_density, 0.0)))

    # ------------------------------------------------------------------- moments
    def mean(self) -> float:
        """Mean of the mixture, ``sum_j w_j m_j``."""
        return float(self.weights @ self.means)

    def variance(self) -> float:
        """Variance of the mixture, ``sum_j w_j (s_j^2 + (m_j - mean)^2)``."""
        centred = self.means - self.mean()
        return float(self.weights @ (self.sds**2 + centred**2))

    # ------------------------------------------------------- cut points and modes
    def cut_points(self) -> np.ndarray:
        """Where each pair of neighbouring components (by mean) trade places.

        Returns
        -------
        ndarray, shape (k-1,)
            Entry ``j`` is the point between ``means[j]`` and ``means[j+1]`` where
            ``w_j phi_j == w_{j+1} phi_{j+1}``, component ``j`` being the larger just
            below it; NaN when no such point lies between the two means (see
            :func:`cut_point_between`).  Only the two neighbours are compared: a
            third component may still have the largest posterior there.
        """
        w, m, s = self.weights, self.means, self.sds
        return np.atleast_1d(cut_point_between(w[:-1], m[:-1], s[:-1], w[1:], m[1:], s[1:]))

    def cut_point_notes(self) -> tuple:
        """A sentence for each pair of neighbours without a cut point (see :meth:`cut_points`).

        Returns
        -------
        tuple of str
            E.g. "Components 1 and 2 do not cross between their means, so there
            is no cut point between them: everywhere between the two means a
            value is more likely from component 2 than from component 1."
        """
        notes = []
        for j in np.flatnonzero(np.isnan(self.cut_points())) if self.k > 1 else ():
            # One of the two dominates the whole stretch between the means: ask at its middle.
            middle = 0.5 * (self.means[j] + self.means[j + 1])
            pair = slice(j, j + 2)
            log_weighted = (np.log(self.weights[pair]) - np.log(self.sds[pair])
                            - 0.5 * ((middle - self.means[pair]) / self.sds[pair]) ** 2)
            more, less = (j + 1, j + 2) if log_weighted[0] > log_weighted[1] else (j + 2, j + 1)
            notes.append(f"Components {j + 1} and {j + 2} do not cross between their means, so there is no "
                         f"cut point between them: everywhere between the two means a value is more likely "
                         f"from component {more} than from component {less}.")
        return tuple(notes)

    def _score(self, x: np.ndarray) -> np.ndarray:
        """``d/dx log f(x)`` = posterior-weighted ``(m_j - x) / s_j^2``; never underflows."""
        x = np.asarray(x, dtype=np.float64)
        return np.sum(self.posterior(x) * ((self.means - x[..., None]) / self.sds**2), axis=-1)

    def modes(self) -> np.ndarray:
        """Positions of the local maxima of the density, ascending.

        Returns
        -------
        ndarray, shape (number of modes,)

        Notes
        -----
        The sign of the derivative equals the sign of ``d/dx log f``, which is
        evaluated in log space on a grid made of 801 points across
        ``m_j +- 5 s_j`` of every component (spacing 1/80 of that component's
        sd) together with 2049 points spanning ``[min(m - 5s), max(m + 5s)]``.
        Every local maximum lies within one sd of some mean (beyond that each
        component is convex), so the fine local grids cover them.  Each change
        of sign from + to - is refined with :func:`scipy.optimize.brentq`;
        maxima closer than 1e-3 of the smallest sd (a numerically flat top) are
        reported once.
        A two-component mixture with equal weights and equal sds is bimodal
        exactly when its means are more than 2 sds apart (Schilling, Watkins &
        Watkins 2002, The American Statistician 56:223-229).
        """
        from scipy.optimize import brentq  # imported here: scipy.optimize is slow to import

        local = (self.means[:, None] + self.sds[:, None] * _MODE_GRID_OFFSETS).ravel()
        span = np.linspace(local.min(), local.max(), _MODE_GRID_SPAN_POINTS)
        grid = np.sort(np.concatenate([local, span]))
        smallest_sd = self.sds.min()
        # Grid points closer than rounding noise in the score could fake sign changes.
        grid = grid[np.concatenate([[True], np.diff(grid) > 1e-9 * smallest_sd])]
        signs = np.sign(self._score(grid))
        nonzero = np.flatnonzero(signs)
        falls = np.flatnonzero((signs[nonzero[:-1]] > 0) & (signs[nonzero[1:]] < 0))
        modes: list[float] = []
        for left, right in zip(nonzero[falls], nonzero[falls + 1]):
            if right == left + 1:
                mode = brentq(lambda t: float(self._score(t)), grid[left], grid[right],
                              xtol=1e-12 * smallest_sd, rtol=4 * _EPS)
            else:  # the score is exactly zero at the grid points in between
                mode = 0.5 * (grid[left + 1] + grid[right - 1])
            if modes and mode - modes[-1] < _MODE_MERGE_DISTANCE * smallest_sd:
                # a numerically flat top split in two: keep the higher point
                if self.logpdf(mode) > self.logpdf(modes[-1]):
                    modes[-1] = mode
                continue
            modes.append(mode)
        return np.array(modes, dtype=np.float64)


def cut_point_between(w1, m1, s1, w2, m2, s2):
    """Point between two means where two weighted normal densities are equal.

    Solves ``w1 phi((x - m1)/s1)/s1 == w2 phi((x - m2)/s2)/s2`` for the ``x``
    between the two means at which the component with the lower mean gives way
    to the one with the higher mean.  All arguments broadcast against each
    other, so many pairs (e.g. bootstrap replicates) are solved at once; the
    order of the two components does not matter.

    Parameters
    ----------
    w1, m1, s1 : float or array_like
        Weight, mean and standard deviation of the first component.
    w2, m2, s2 : float or array_like
        The same for the second component.

    Returns
    -------
    ndarray (a numpy float for scalar input), the broadcast shape
        The cut point, or NaN where no crossing lies between the means: when a
        component dominates the whole interval (typically a heavy narrow
        component next to a light one), when the means are equal, or when a
        weight or sd is not positive or an input is not finite.

    Notes
    -----
    With ``d = m_hi - m_lo``, ``r = s_hi / s_lo`` and ``x = m_lo + d v``, taking logs
    of both sides gives ``A v^2 - 2 v + C = 0`` with ``A = (1 - r)(1 + r)`` and
    ``C = 1 + 2 (s_hi/d)^2 [ln(w_lo/w_hi) + ln r]``.  Its left-hand side has the
    sign of the log density ratio and decreases on ``0 <= v <= 1``, so there is
    at most one crossing between the means, present exactly when ``C >= 0`` and
    ``C - 1 - r^2 <= 0``; it is ``v = C / (1 + sqrt(1 - A C))`` (the cancellation-free
    form of the quadratic formula, which tends smoothly to the equal-width
    answer ``v = C/2``, i.e. ``x = (m1 + m2)/2 + s^2 ln(w1/w2)/(m2 - m1)``).
    With unequal widths a second crossing lies outside the means, where the
    wider component takes over again in the tail; it is not returned.
    """
    try:
        arrays = [np.asarray(a, dtype=np.float64) for a in (w1, m1, s1, w2, m2, s2)]
        arrays = np.broadcast_arrays(*arrays)
    except ValueError as error:
        raise InputError(
            f"cut_point_between: the six arguments do not have compatible shapes ({error})."
        ) from error
    w1, m1, s1, w2, m2, s2 = arrays
    swap = m1 > m2
    w_lo, w_hi = np.where(swap, w2, w1), np.where(swap, w1, w2)
    m_lo, m_hi = np.where(swap, m2, m1), np.where(swap, m1, m2)
    s_lo, s_hi = np.where(swap, s2, s1), np.where(swap, s1, s2)
    with np.errstate(all="ignore"):
        d = m_hi - m_lo
        r = s_hi / s_lo
        log_ratio = np.log(w_lo) - np.log(w_hi) + np.log(r)
        scaled = s_hi / d
        c = 1.0 + np.where(log_ratio == 0, 0.0, 2.0 * log_ratio * scaled * scaled)
        a = (1.0 - r) * (1.0 + r)
        valid = (
            np.isfinite(w_lo) & np.isfinite(w_hi) & np.isfinite(m_lo) & np.isfinite(m_hi)
            & np.isfinite(s_lo) & np.isfinite(s_hi)
            & (w_lo > 0) & (w_hi > 0) & (s_lo > 0) & (s_hi > 0) & (d > 0)
            & (c >= 0) & (c - 1.0 - r * r <= 0)
        )
        v = np.clip(c / (1.0 + np.sqrt(np.maximum(1.0 - a * c, 0.0))), 0.0, 1.0)
        x = m_lo + d * v
    return np.where(valid, x, np.nan)[()]
