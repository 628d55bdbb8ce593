"""The summary table of a screening run: one row per column, written as CSV.

Written with :func:`clusterdesk.report.csvfile.write_csv`: atomically, and
with text cells that a spreadsheet could run as a formula made harmless (a
';'-joined list that starts with a minus sign is shown with a leading quote;
the numeric columns ``weight_1``, ``mean_1``, ... hold the same numbers as
numbers).
"""

from __future__ import annotations

from pathlib import Path

from ..report.csvfile import format_number, write_csv
from .tasks import ScreenRow

__all__ = ["SUMMARY_NAME", "MAX_COMPONENT_COLUMNS", "summary_header", "summary_cells", "write_summary",
           "status_counts"]

#: File name of the summary inside the output folder.
SUMMARY_NAME = "summary.csv"
#: Components given their own columns (weight_j, mean_j, sd_j); all are in the ';'-joined text.
MAX_COMPONENT_COLUMNS = 6

_FIELDS = ("file", "sheet", "column", "column_position", "status", "reason", "rows_read", "rows_kept",
           "rows_excluded", "excluded_reasons", "resolution", "treatment", "kmin", "kmax", "best_k",
           "best_widths", "bic", "runner_up", "bic_gap_to_runner_up", "evidence", "converged",
           "restarts_agreeing", "restarts", "weights", "means", "sds")


def summary_header(max_components: int = MAX_COMPONENT_COLUMNS) -> tuple:
    """Column names of the summary table."""
    per_component = tuple(f"{name}_{j}" for name in ("weight", "mean", "sd")
                          for j in range(1, max_components + 1))
    return _FIELDS + per_component + ("notes", "seed", "sha256")


def _joined(values) -> str:
    return ";".join(format_number(v) for v in values)


def summary_cells(row: ScreenRow, max_components: int = MAX_COMPONENT_COLUMNS) -> list:
    """The cells of one row, in the order of :func:`summary_header`."""
    def padded(values):
        values = list(values)[:max_components]
        return values + [None] * (max_components - len(values))

    return [row.file, row.sheet, row.column, row.position, row.status, row.reason, row.rows_read,
            row.rows_kept, row.rows_excluded, row.excluded_reasons, row.resolution, row.treatment,
            row.kmin, row.kmax, row.best_k, row.best_widths, row.bic, row.runner_up, row.bic_gap,
            row.evidence, row.converged, row.restarts_agreeing, row.restarts, _joined(row.weights),
            _joined(row.means), _joined(row.sds), *padded(row.weights), *padded(row.means),
            *padded(row.sds), " | ".join(row.notes), row.seed, row.sha256]


def write_summary(path, rows) -> Path:
    """Write the summary CSV atomically and return its path.

    Parameters
    ----------
    path : str or Path
    rows : iterable of ScreenRow

    Returns
    -------
    Path
    """
    return write_csv(path, summary_header(), [summary_cells(r) for r in rows])


def status_counts(rows) -> dict:
    """Rows by status: ``{"ok": n, "failed": n, "skipped": n}``."""
    counts = {"ok": 0, "failed": 0, "skipped": 0}
    for row in rows:
        counts[row.status] = counts.get(row.status, 0) + 1
    return counts
