"""Values far outside the rest of a sample that no normal component can describe.

A lone value (or a few tied values) far from all the others, such as a
recording error of 1e6 among fish lengths, breaks a scan in a way the
ranking alone does not show: a component holding only that value has no
width to estimate, so every model that gives it a component ends at the
variance floor, a spurious maximum that the collapse rule sets aside, and
the one-component model, stretched over the whole range, ranks first.

We do not drop such values behind the user's back (the rows in, rows out
accounting of the analysis stays whole); we name them. A model's *suspect
values* are the values held (posterior probability above one half) by the
components that triggered the collapse rule in its chosen restart, when all
of them lie beyond Tukey's far-out fences: more than three interquartile
ranges below the lower quartile or above the upper one (Tukey 1977,
Exploratory Data Analysis, §2; the factor 3 from memory). A real but small
group far from the others does not collapse (it has a width), and a spike
inside the bulk of the data is not beyond the fences, so neither is named.
The scan puts the suspect values of all its models in one note that says
what to do.
"""

from __future__ import annotations

import numpy as np

__all__ = ["FAR_OUT_FACTOR", "far_out_fences", "held_values", "outlier_note"]

FAR_OUT_FACTOR = 3.0
_SHOWN = 5


def far_out_fences(values, counts) -> tuple[float, float]:
    """Tukey's far-out fences of a weighted sample.

    Parameters
    ----------
    values : ndarray, shape (m,)
        Values in ascending order.
    counts : ndarray, shape (m,)
        Positive counts of the values.

    Returns
    -------
    (lower, upper) : tuple of float
        ``Q1 - 3 IQR`` and ``Q3 + 3 IQR``, quartiles of the weighted sample
        (the lowest value whose cumulative share reaches 1/4 and 3/4).
    """
    cum = np.cumsum(counts) / np.sum(counts)
    last = values.size - 1
    q1 = values[min(int(np.searchsorted(cum, 0.25)), last)]
    q3 = values[min(int(np.searchsorted(cum, 0.75)), last)]
    iqr = q3 - q1
    return float(q1 - FAR_OUT_FACTOR * iqr), float(q3 + FAR_OUT_FACTOR * iqr)


def held_values(values, weights, means, sds, components) -> np.ndarray:
    """Values whose posterior probability for the given components exceeds one half.

    Parameters
    ----------
    values : ndarray, shape (m,)
    weights, means, sds : ndarray, shape (k,)
        The mixture, in the values' units.
    components : ndarray of bool, shape (k,)
        The components in question (e.g. those that collapsed).

    Returns
    -------
    ndarray, shape (h,)
        The held values, ascending (duplicates kept once).
    """
    z = (values[:, None] - means) / sds
    log_joint = np.log(weights) - np.log(sds) - 0.5 * z * z
    top = log_joint.max(axis=1, keepdims=True)
    post = np.exp(log_joint - top)
    post /= post.sum(axis=1, keepdims=True)
    held = post[:, components].sum(axis=1) > 0.5
    return np.unique(values[held])


def outlier_note(suspects, fitted_on=None) -> str:
    """The scan's note naming the suspect values and what to do.

    Parameters
    ----------
    suspects : sequence of float
        Distinct suspect values, ascending (at least one).
    fitted_on : str, optional
        The name of the scale the models were fitted on (say ``"log10"``)
        when ``suspects`` are given on the original scale; the note then
        says so, since range limits are set on the original scale.

    Returns
    -------
    str
    """
    suspects = list(suspects)
    shown = ", ".join(f"{v:.10g}" for v in suspects[:_SHOWN])
    more = f" and {len(suspects) - _SHOWN} more" if len(suspects) > _SHOWN else ""
    if fitted_on is not None:
        more += f" (as recorded; the models are fitted on the {fitted_on} scale)"
    which = "distinct value lies" if len(suspects) == 1 else "distinct values lie"  # a value may fill many rows
    return (f"{len(suspects)} {which} far outside the rest of the sample (beyond Tukey's "
            f"far-out fences, 3 interquartile ranges past the quartiles): {shown}{more}. "
            "A normal component cannot describe such a value on its own, so the models that "
            "give it one collapse and the ranking favours too few components. Check it for a "
            "recording error, or set a range limit that leaves it out, and fit again.")
