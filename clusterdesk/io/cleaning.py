"""From a parsed column to kept values, with the fate of every data row.

Every data row is either kept or excluded for the first reason that applies,
in this order: empty, not a number, not finite, below a detection limit,
above a reporting limit, a zero/missing or negative count, outside the chosen
range, not positive under a log scale.  The fates are stored column by column
in numpy arrays (about 10 bytes a row plus the parsed value), so that ten
million rows stay small.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import Callable

import numpy as np

from ..errors import InputError
from ..grid import grid_step as detect_resolution  # the one implementation, shared with the engine
from . import reasons as R
from .numbers import ParsedColumn
from .table import status_counts

__all__ = ["SCALES", "RowFates", "ReadSummary", "CleanResult", "clean_column", "detect_resolution", "check_scale_and_range",
           "to_original_scale"]

#: Analysis scales: ``"linear"`` (as measured), ``"ln"`` (natural log), ``"log10"``.
SCALES = ("linear", "ln", "log10")
_STRING_DTYPE = getattr(np.dtypes, "StringDType", None)  # numpy >= 2.0


def _text_array(items: list) -> np.ndarray:
    """Strings as a numpy array: StringDType where numpy has it, else dtype=object."""
    if _STRING_DTYPE is not None:
        return np.array(items, dtype=_STRING_DTYPE())
    return np.array(items, dtype=object)


def _readonly(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


def _line_array(lines: range) -> np.ndarray:
    """Consecutive line numbers as int32 (int64 past 2**31 lines)."""
    return np.arange(lines.start, lines.stop, dtype=np.int32 if lines.stop < np.iinfo(np.int32).max else np.int64)


class _MadeOnFirstUse:
    """A field of :class:`RowFates` given as an array, or as a recipe for one that is followed on first use.

    ``make(row_fates, recipe)`` turns the stored recipe (anything but an
    ndarray) into the array, which then replaces it (read-only).  Recipes
    are plain values (a ``range``, None), so that RowFates still pickles.
    """

    def __init__(self, make: Callable):
        self._make = make

    def __set_name__(self, owner, name: str) -> None:
        self._key = f"_{name}_stored"

    def __get__(self, row_fates, owner=None):
        if row_fates is None:
            raise AttributeError(self._key)  # no default value for the dataclass field
        stored = row_fates.__dict__[self._key]
        if not isinstance(stored, np.ndarray):
            stored = _readonly(self._make(row_fates, stored))
            row_fates.__dict__[self._key] = stored
        return stored

    def __set__(self, row_fates, value) -> None:
        row_fates.__dict__[self._key] = value


@dataclass(frozen=True)
class RowFates:
    """What happened to each data row, stored column by column.

    ``line`` and ``kept`` may be made on first use (then kept): consecutive
    line numbers are stored as a ``range``, and ``kept`` follows from
    ``reason``, so that reading ten million rows does not pay for them.

    Attributes
    ----------
    line : ndarray of int32 (int64 past 2**31 lines), shape (n_rows,)
        1-based physical line in the file (text) or sheet row (XLSX).
        Constructed from an array, or from a ``range`` of consecutive lines.
    kept : ndarray of bool, shape (n_rows,)
        Constructed from an array, or from None (``reason == 0``).
    reason : ndarray of uint8, shape (n_rows,)
        0 when kept, else a code of :mod:`clusterdesk.io.reasons`; see
        :meth:`reason_words`.
    value : ndarray of float64, shape (n_rows,)
        The parsed value on the original scale: NaN when empty or not a
        number, ``inf``/``nan`` when not finite, the limit itself for
        detection-limit rows.
    count : ndarray of float64, shape (n_rows,), or None
        The parsed count (NaN when missing), when a count column is used.
    raw_rows : ndarray of int64, shape (n_excluded,)
        The row positions whose text is stored: every excluded row.
    raw_text : ndarray of str (numpy StringDType; dtype=object on numpy < 2), shape (n_excluded,)
        The value cell's text of those rows, as written (stripped).
    """

    line: np.ndarray = _MadeOnFirstUse(lambda rows, lines: _line_array(lines))
    kept: np.ndarray = _MadeOnFirstUse(lambda rows, _: rows.reason == R.KEPT)
    reason: np.ndarray
    value: np.ndarray
    count: np.ndarray | None
    raw_rows: np.ndarray
    raw_text: np.ndarray

    def __len__(self) -> int:
        return int(self.reason.size)

    @cached_property
    def position(self) -> np.ndarray:
        """Index of each row in ``Measurements.values``; -1 when excluded.

        ndarray of int32 (int64 past 2**31 rows), shape (n_rows,); computed on
        first use (then kept), so that reading does not pay for it.
        """
        kept = self.kept
        index_type = np.int32 if kept.size < np.iinfo(np.int32).max else np.int64
        position = np.empty(kept.size, dtype=index_type)
        np.cumsum(kept, dtype=index_type, out=position)
        position -= 1
        position[self.raw_rows] = -1
        return _readonly(position)

    @staticmethod
    def reason_words(code: int) -> str:
        """Words for a reason code (``0`` -> ``"kept"``, ``2`` -> ``"not a number"``)."""
        return R.reason_words(code)

    def raw(self, row: int) -> str | None:
        """The text of row ``row`` (0-based position) if stored (every excluded row), else None."""
        k = int(np.searchsorted(self.raw_rows, row))
        if k < self.raw_rows.size and self.raw_rows[k] == row:
            return str(self.raw_text[k])
        return None

    def excluded(self, code: int | None = None) -> np.ndarray:
        """Positions of the excluded rows (all, or those with one reason code), shape (n,)."""
        if code is None:
            return np.flatnonzero(~self.kept)
        return np.flatnonzero(self.reason == code)


@dataclass(frozen=True)
class ReadSummary:
    """Counts that account for every data row.

    Attributes
    ----------
    rows_read : int
        Data rows below the header (blank rows inside the table included).
    rows_kept : int
    excluded : dict of str to int
        Reason words -> number of rows, for the reasons that occurred, in
        the order of the codes.  ``rows_read == rows_kept + sum(excluded.values())``.
    total_count : float or None
        Sum of the kept counts, when a count column is used.
    """

    rows_read: int
    rows_kept: int
    excluded: dict
    total_count: float | None = None

    def __str__(self) -> str:
        parts = [f"{self.rows_read} rows read, {self.rows_kept} kept"]
        if self.excluded:
            parts.append("excluded: " + ", ".join(f"{n} {words}" for words, n in self.excluded.items()))
        return "; ".join(parts)


@dataclass(frozen=True)
class CleanResult:
    """Output of :func:`clean_column`.

    Attributes
    ----------
    values, fit_values : ndarray of float64, shape (n_kept,)
        Kept values on the original and the analysis scale.
    counts : ndarray of float64, shape (n_kept,), or None
    rows : RowFates
    summary : ReadSummary
    """

    values: np.ndarray
    fit_values: np.ndarray
    counts: np.ndarray | None
    rows: RowFates
    summary: ReadSummary


def censored_rows(rows: RowFates, scale: str = "linear"):
    """The rows at a detection or reporting limit, as censored readings.

    Only the (usually few) limit rows are looked at: arrays over every row
    cost some 0.3 s at 10^7 rows.

    Parameters
    ----------
    rows : RowFates
    scale : {"linear", "ln", "log10"}, default "linear"
        The analysis scale the limits are given on.

    Returns
    -------
    limits : ndarray, shape (m,)
        On the analysis scale (limits at or below zero are dropped on a log scale).
    sides : ndarray of int, shape (m,)
        -1 below a detection limit, +1 above a reporting limit.
    counts : ndarray, shape (m,)
    """
    at = np.flatnonzero((rows.reason == R.BELOW_LIMIT) | (rows.reason == R.ABOVE_LIMIT))
    sides = np.where(rows.reason[at] == R.BELOW_LIMIT, -1, 1)
    limits = rows.value[at]
    usable = np.isfinite(limits)
    if scale != "linear":
        usable &= limits > 0
    if rows.count is not None:
        usable &= np.isfinite(rows.count[at]) & (rows.count[at] > 0)
    limits = limits[usable]
    if scale == "ln":
        limits = np.log(limits)
    elif scale == "log10":
        limits = np.log10(limits)
    counts = np.ones(limits.size) if rows.count is None else rows.count[at][usable]
    return limits, sides[usable], counts


def to_original_scale(values, scale: str):
    """Values on the analysis scale back on the original scale.

    Parameters
    ----------
    values : float or array_like
    scale : str
        One of :data:`SCALES`: ``"ln"`` takes ``exp``, ``"log10"`` ``10**v``,
        ``"linear"`` returns the values unchanged.

    Returns
    -------
    float or ndarray, the shape of ``values``
    """
    if scale == "ln":
        return np.exp(values)
    if scale == "log10":
        return np.power(10.0, values)
    if scale == "linear":
        return values
    raise InputError(f"The scale {scale!r} is not known; use one of {', '.join(repr(s) for s in SCALES)}.")


def check_scale_and_range(scale: str, low, high) -> tuple[float | None, float | None]:
    """Validate the analysis scale and the range limits.

    Parameters
    ----------
    scale : str
        One of :data:`SCALES`.
    low, high : float or None
        Inclusive limits on the original scale.

    Returns
    -------
    (low, high) as floats or None

    Raises
    ------
    InputError
        Unknown scale, a limit that is not a finite number, or low > high.
    """
    if scale not in SCALES:
        raise InputError(f"The scale {scale!r} is not known; use one of {', '.join(repr(s) for s in SCALES)}.")
    out = []
    for name, limit in (("low", low), ("high", high)):
        if limit is None:
            out.append(None)
            continue
        try:
            limit = float(limit)
        except (TypeError, ValueError):
            raise InputError(f"The range limit {name}={limit!r} is not a number; give a number or None.") from None
        if not np.isfinite(limit):
            raise InputError(f"The range limit {name}={limit!r} is not finite; give a finite number or None.")
        out.append(limit)
    if out[0] is not None and out[1] is not None and out[0] > out[1]:
        raise InputError(f"The range is empty: low={out[0]:g} is above high={out[1]:g}; swap or widen the limits.")
    return out[0], out[1]


def clean_column(
    parsed: ParsedColumn,
    lines: np.ndarray,
    raw: Callable[[np.ndarray], list],
    *,
    counts: ParsedColumn | None = None,
    low: float | None = None,
    high: float | None = None,
    scale: str = "linear",
    release: Callable[[], None] | None = None,
) -> CleanResult:
    """Decide the fate of every row and collect the kept values.

    Parameters
    ----------
    parsed : ParsedColumn
        The value column, shape (n_rows,).
    lines : ndarray of int, shape (n_rows,), or range
        Line (or sheet row) of each row; a ``range`` for consecutive lines
        (made into an array on first use of ``RowFates.line``).
    raw : callable
        ``raw(positions) -> list of str``: the value cells' text at positions.
    counts : ParsedColumn, optional
        The count column (value/count tables such as length-frequency tallies).
    low, high : float, optional
        Inclusive range limits on the original scale (see
        :func:`check_scale_and_range`).
    scale : {"linear", "ln", "log10"}, default "linear"
    release : callable, optional
        Called once the raw text of the excluded rows has been taken, so
        that the caller can free the source's cells or bytes early.

    Returns
    -------
    CleanResult
    """
    low, high = check_scale_and_range(scale, low, high)
    value = parsed.values
    changes = counts is not None or low is not None or high is not None or scale != "linear"
    reason = parsed.status.copy() if changes else parsed.status
    count_values = None
    if counts is not None:
        count_values = counts.values
        open_rows = reason == R.KEPT
        missing = (counts.status != R.KEPT) | (count_values == 0)
        reason[open_rows & missing] = R.MISSING_COUNT
        reason[open_rows & ~missing & (count_values < 0)] = R.NEGATIVE_COUNT
    if low is not None:
        reason[(reason == R.KEPT) & (value < low)] = R.OUT_OF_RANGE
    if high is not None:
        reason[(reason == R.KEPT) & (value > high)] = R.OUT_OF_RANGE
    if scale != "linear":
        reason[(reason == R.KEPT) & (value <= 0)] = R.NOT_POSITIVE
    tallies = status_counts(reason)
    n_kept = int(tallies[R.KEPT])
    if n_kept == value.size:
        kept = None  # every row kept: RowFates makes the mask on first use
        raw_rows = np.zeros(0, dtype=np.int64)
    else:
        kept = reason == R.KEPT
        raw_rows = np.flatnonzero(~kept)
    raw_text = _text_array(raw(raw_rows))
    if release is not None:
        release()
    if kept is None:
        values = value
        kept_counts = count_values
    else:
        values = value[kept]
        kept_counts = None if count_values is None else count_values[kept]
    if scale == "ln":
        fit_values = np.log(values)
    elif scale == "log10":
        fit_values = np.log10(values)
    else:
        fit_values = values
    excluded = {R.REASON_WORDS[c]: int(tallies[c]) for c in range(1, len(R.REASON_WORDS)) if tallies[c]}
    summary = ReadSummary(
        rows_read=int(value.size),
        rows_kept=n_kept,
        excluded=excluded,
        total_count=None if kept_counts is None else float(kept_counts.sum()),
    )
    for array in (value, reason, kept, lines, values, fit_values):
        if isinstance(array, np.ndarray):  # kept may be None, lines a range
            _readonly(array)
    if count_values is not None:
        _readonly(count_values)
        _readonly(kept_counts)
    rows = RowFates(lines, kept, reason, value, count_values, _readonly(raw_rows), _readonly(raw_text))
    return CleanResult(values, fit_values, kept_counts, rows, summary)
