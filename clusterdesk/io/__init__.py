"""Reading and cleaning measurements (no Qt).

The one entry point most callers need is :func:`read_measurements`; a front
end also uses :func:`list_columns` (to offer a column choice) and
:func:`sheet_names` (to offer a sheet choice).

>>> from clusterdesk.io import read_measurements
>>> m = read_measurements(text="length_mm\\n12.5\\n13,0\\nNA\\n14.25\\n")
>>> m.values.tolist(), m.summary.excluded
([12.5, 14.25], {'not a number': 2})
"""

from __future__ import annotations

from .cleaning import SCALES, ReadSummary, RowFates, detect_resolution
from .numbers import NumberStyle
from .reading import Measurements, SourceFormat, list_columns, read_measurements, sheet_names
from .reasons import REASON_WORDS, reason_words
from .table import ColumnSummary

__all__ = [
    "REASON_WORDS",
    "SCALES",
    "ColumnSummary",
    "Measurements",
    "NumberStyle",
    "ReadSummary",
    "RowFates",
    "SourceFormat",
    "detect_resolution",
    "list_columns",
    "read_measurements",
    "reason_words",
    "sheet_names",
]
