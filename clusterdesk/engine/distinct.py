"""Rows grouped by their value, bit for bit: one row of each group and the group of every row.

Recorded values repeat: ten million readings to 0.001 hold some 31,000
distinct values. Whatever follows from the value alone (posterior
probabilities, the assigned component, the text of a table row) can then be
computed once per distinct value and spread to the rows by index.

Distinct means the same bits, so ``-0.0`` and ``0.0`` stay apart (their
text differs). Columns said to follow the value (the same value on the
analysis scale, interval ends) are checked bit for bit to be the same in
every row of a group; where they are not, the groups are split by them too.

On a recording grid of known step the group of a value is its grid number,
``rint((x - smallest) / step)``: a few vectorised passes, no sort. Whether
each grid number holds one value only is checked bit for bit (the row kept
for each number must equal every row with that number); if not (values off
the grid, or ``-0.0`` beside ``0.0``), or without a step, the groups come
from :func:`numpy.unique` (a sort).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["RowGroups", "group_rows"]

_CHUNK = 1 << 20  # rows per vectorised step of the grid passes (8 MB of float64)
_SLACK_CELLS = 1 << 16  # grid numbers always allowed beyond the row count


@dataclass(frozen=True, eq=False)
class RowGroups:
    """Rows grouped by value.

    Attributes
    ----------
    first : ndarray of int64, shape (m,)
        One row of each group (its position in the column).
    index : ndarray of int32 (int64 past 2**31 groups), shape (n,)
        The group of each row: row ``i`` holds the same bits as row ``first[index[i]]``.
    """

    first: np.ndarray
    index: np.ndarray

    @property
    def size(self) -> int:
        """Number of groups (distinct values)."""
        return int(self.first.size)

    def totals(self, weights=None) -> np.ndarray:
        """Rows in each group, or the sum of ``weights`` (n,) over each group's rows; shape (m,) float64."""
        return np.bincount(self.index, weights=weights, minlength=self.size).astype(np.float64, copy=False)


def _bits(column: np.ndarray) -> np.ndarray:
    """The column as int64 numbers that are equal exactly when the entries are (floats by their bits)."""
    column = np.asarray(column)
    if column.dtype == np.float64:
        return np.ascontiguousarray(column).view(np.int64)
    return column.astype(np.int64, copy=False)


def _index_dtype(m: int):
    return np.int32 if m < np.iinfo(np.int32).max else np.int64


def _by_sorting(columns: list) -> RowGroups:
    """Groups of equal rows over all columns, by :func:`numpy.unique`."""
    if len(columns) == 1:
        keys = _bits(columns[0])
        _, first, index = np.unique(keys, return_index=True, return_inverse=True)
    else:
        keys = np.stack([_bits(c) for c in columns], axis=1)
        _, first, index = np.unique(keys, axis=0, return_index=True, return_inverse=True)
    return RowGroups(first.astype(np.int64), index.reshape(-1).astype(_index_dtype(first.size)))


def _grid_numbers(x: np.ndarray, smallest: float, step: float) -> np.ndarray:
    return np.rint((x - smallest) / step).astype(np.int64)


def _by_grid(x: np.ndarray, follow: list, step: float) -> RowGroups | None:
    """Groups by grid number, or None when some grid number holds two different rows."""
    n = x.size
    smallest, largest = float(x.min()), float(x.max())
    cells = (largest - smallest) / step
    if not (np.isfinite(cells) and cells <= 4 * n + _SLACK_CELLS):
        return None
    row_of_cell = np.full(int(round(cells)) + 1, -1, dtype=np.int64)
    for start in range(0, n, _CHUNK):
        stop = min(start + _CHUNK, n)
        row_of_cell[_grid_numbers(x[start:stop], smallest, step)] = np.arange(start, stop)
    used = row_of_cell >= 0
    first = row_of_cell[used]
    group_of_cell = np.cumsum(used, dtype=np.int64) - 1
    del used
    index = np.empty(n, dtype=_index_dtype(first.size))
    columns = [_bits(x)] + [_bits(c) for c in follow]
    for start in range(0, n, _CHUNK):
        stop = min(start + _CHUNK, n)
        cell = _grid_numbers(x[start:stop], smallest, step)
        source = row_of_cell[cell]
        if not all(np.array_equal(c[start:stop], c[source]) for c in columns):
            return None
        index[start:stop] = group_of_cell[cell]
    return RowGroups(first, index)


def group_rows(values, *, step: float | None = None, follow=()) -> RowGroups:
    """Group the rows of a column by value, bit for bit.

    Parameters
    ----------
    values : array_like of float, shape (n,)
        The column; any floats (NaN and infinities group by their bits too).
    step : float, optional
        The recording grid's step, when known: the values are then grouped
        without a sort (checked; a sort is the fallback).
    follow : sequence of array_like, shape (n,) each
        Columns expected to follow from the value (e.g. its logarithm); rows
        with the same value but different entries there go to different groups.

    Returns
    -------
    RowGroups
    """
    x = np.asarray(values, dtype=np.float64).reshape(-1)
    follow = [np.asarray(c).reshape(-1) for c in follow]
    if x.size == 0:
        return RowGroups(np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int32))
    if step is not None and step > 0 and np.isfinite(step):  # NaN or infinite values leave the grid path
        groups = _by_grid(x, follow, float(step))
        if groups is not None:
            return groups
    return _by_sorting([x, *follow])
