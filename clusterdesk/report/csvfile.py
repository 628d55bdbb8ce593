"""CSV files that spreadsheets open safely.

Text cells that begin with ``=``, ``+``, ``-``, ``@`` (or a tab or carriage
return) are prefixed with a single quote so that a spreadsheet shows them as
text instead of running them as formulas (OWASP, "CSV Injection"). Numbers
are written as numbers, never altered.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

from ..atomic import atomic_open

__all__ = ["neutralise", "write_csv", "format_number"]

_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def neutralise(text: str) -> str:
    """Make a text cell safe against spreadsheet formula injection."""
    return "'" + text if text.startswith(_FORMULA_STARTS) else text


def format_number(value) -> str:
    """A float as the shortest text that reads back to the same float; '' for NaN."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    value = float(value)
    if math.isnan(value):
        return ""
    return repr(value) if math.isfinite(value) else ("inf" if value > 0 else "-inf")


def _cell(value) -> str:
    if type(value) is float:  # the common cell of large tables, first and cheapest
        if value != value:
            return ""
        return repr(value) if -math.inf < value < math.inf else ("inf" if value > 0 else "-inf")
    if isinstance(value, str):
        return neutralise(value)
    if hasattr(value, "item"):  # numpy scalar
        value = value.item()
    return format_number(value)


def write_csv(path, header, rows) -> Path:
    """Write a UTF-8 CSV with a header row, atomically.

    Parameters
    ----------
    path : str or Path
    header : sequence of str
    rows : iterable of sequences
        Cells: str (neutralised), int, float (shortest round-trip text, NaN
        as an empty cell), bool, None (empty) or numpy scalars.

    Returns
    -------
    Path
    """
    with atomic_open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow([neutralise(str(h)) for h in header])
        for row in rows:
            writer.writerow([_cell(v) for v in row])
    return Path(path)
