"""Numbers shown to people: as many significant digits as the detail that matters needs.

A fixed ``.4g`` prints a cut point of 24.9935 mm as 24.99, 0.004 mm off on a
gauge that reads to 0.001 mm, more than one machine's spread. Here a number
gets the digits that resolve ``detail`` (e.g. a tenth of the narrowest
component's standard deviation) at its own magnitude, never fewer than four.
"""

from __future__ import annotations

import math

__all__ = ["digits_for", "shown"]

_MIN_DIGITS = 4
_MAX_DIGITS = 12


def digits_for(value: float, detail: float) -> int:
    """Significant digits that show ``value`` to within ``detail`` (4 to 12).

    Parameters
    ----------
    value : float
    detail : float
        The smallest difference that should still show, > 0 (else 4 digits).

    Returns
    -------
    int
    """
    if not (math.isfinite(value) and math.isfinite(detail) and detail > 0 and value != 0):
        return _MIN_DIGITS
    needed = math.floor(math.log10(abs(value))) - math.floor(math.log10(detail)) + 1
    return int(min(_MAX_DIGITS, max(_MIN_DIGITS, needed)))


def shown(value: float, detail: float) -> str:
    """``value`` with :func:`digits_for` significant digits ('none' for NaN: no such number).

    >>> shown(24.993519, 0.0003)
    '24.9935'
    >>> shown(114.73, 0.8)
    '114.7'
    """
    if math.isnan(value):
        return "none"
    return f"{value:.{digits_for(value, detail)}g}"
