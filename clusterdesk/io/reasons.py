"""Codes for the fate of each data row, and the words shown for them.

A row's fate is stored as one ``uint8`` code so that the fates of ten million
rows take ten megabytes.  Code 0 means the row was kept; every other code is
the first reason, in the order below, that excluded it.
"""

from __future__ import annotations

__all__ = [
    "KEPT",
    "EMPTY",
    "NOT_A_NUMBER",
    "NOT_FINITE",
    "BELOW_LIMIT",
    "ABOVE_LIMIT",
    "MISSING_COUNT",
    "NEGATIVE_COUNT",
    "OUT_OF_RANGE",
    "NOT_POSITIVE",
    "REASON_WORDS",
    "reason_words",
]

KEPT = 0
EMPTY = 1
NOT_A_NUMBER = 2
NOT_FINITE = 3
BELOW_LIMIT = 4
ABOVE_LIMIT = 5
MISSING_COUNT = 6
NEGATIVE_COUNT = 7
OUT_OF_RANGE = 8
NOT_POSITIVE = 9

#: Words for each code, indexed by the code.
REASON_WORDS: tuple[str, ...] = (
    "kept",
    "empty",
    "not a number",
    "not finite",
    "below detection limit",
    "above reporting limit",
    "zero or missing count",
    "negative count",
    "outside the chosen range",
    "not positive under a log scale",
)


def reason_words(code: int) -> str:
    """Return the words for a row-fate code.

    Parameters
    ----------
    code : int
        A code from :data:`REASON_WORDS` (0 = kept).

    Returns
    -------
    str
        For example ``"below detection limit"``.

    Raises
    ------
    ValueError
        If ``code`` is not a known code.
    """
    code = int(code)
    if not 0 <= code < len(REASON_WORDS):
        raise ValueError(f"{code} is not a row-fate code; codes run from 0 to {len(REASON_WORDS) - 1}.")
    return REASON_WORDS[code]
