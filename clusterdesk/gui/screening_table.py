"""The screening table: one line per screened column, filled in as the columns finish.

:class:`ScreeningTableModel` holds the :class:`~clusterdesk.screen.ScreenRow`
objects in the order they arrived; :class:`ScreeningFilter` sorts them on the
unrounded values and filters them by status and by words in the file, sheet,
column or reason.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QModelIndex, Qt
from PySide6.QtGui import QBrush, QColor

from .models import SortProxy, _TableModel, widths_words

__all__ = ["ScreeningTableModel", "ScreeningFilter", "STATUS_WORDS", "COLUMNS"]

#: Status codes of the summary rows and the words the filter shows for them.
STATUS_WORDS = (("", "every row"), ("ok", "fitted"), ("failed", "failed"), ("skipped", "skipped"))

#: Header, tooltip and number style of each column.
COLUMNS = (
    ("file", "The file the column comes from (the tooltip holds the full path).", "g"),
    ("sheet", "Sheet of a workbook ('' for text files).", "g"),
    ("column", "Column name.", "g"),
    ("status", "fitted, failed (with the reason) or skipped (not a column of measurements).", "g"),
    ("rows kept", "Rows kept after cleaning.", "g"),
    ("best k", "Components of the model with the lowest BIC.", "g"),
    ("widths", "Width variant of the best model (none for one component).", "g"),
    ("BIC gap", "Runner-up's BIC minus the best's: how clearly the best model wins.", "criterion"),
    ("evidence", "The BIC gap in words (Kass & Raftery 1995: weak, positive, strong, very strong).", "g"),
    ("means", "Component means of the best model, lowest first.", "g"),
    ("reason or notes", "Why a column failed or was skipped; notes of the fit.", "g"),
)

_STATUS_TEXT = {"ok": "fitted", "failed": "failed", "skipped": "skipped"}
_FAILED = QColor(170, 40, 0)
_MUTED = QColor(110, 110, 110)


def _cells(row) -> list:
    means = "; ".join(f"{m:.4g}" for m in row.means)
    words = row.reason or " | ".join(row.notes)
    return [Path(row.file).name, row.sheet, row.column, _STATUS_TEXT.get(row.status, row.status),
            row.rows_kept, row.best_k, widths_words(row.best_widths) if row.best_k and row.best_k > 1 else "",
            row.bic_gap, row.evidence, means, words]


class ScreeningTableModel(_TableModel):
    """The rows of a screening run, in the order they arrived.

    Attributes
    ----------
    screen_rows : list of ScreenRow
        Row ``i`` of the table shows ``screen_rows[i]``.
    """

    headers = tuple(c[0] for c in COLUMNS)
    tips = tuple(c[1] for c in COLUMNS)
    styles = tuple(c[2] for c in COLUMNS)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.screen_rows: list = []

    def clear(self) -> None:
        """Remove every row (a new run starts)."""
        self.screen_rows = []
        self.set_rows([])

    def append_rows(self, rows) -> None:
        """Add rows at the end (views and filters follow)."""
        rows = list(rows)
        if not rows:
            return
        first = len(self._rows)
        self.beginInsertRows(QModelIndex(), first, first + len(rows) - 1)
        self.screen_rows.extend(rows)
        self._rows.extend(_cells(r) for r in rows)
        self.endInsertRows()

    def screen_row(self, row: int):
        """The :class:`~clusterdesk.screen.ScreenRow` shown on line ``row``."""
        return self.screen_rows[row]

    def extra(self, row: int, column: int, role):
        item = self.screen_rows[row]
        if role == Qt.ItemDataRole.ForegroundRole:
            if item.status == "failed":
                return QBrush(_FAILED)
            if item.status == "skipped":
                return QBrush(_MUTED)
        if role == Qt.ItemDataRole.ToolTipRole:
            if column == 0:
                return item.file
            if column == len(COLUMNS) - 1 and (item.reason or item.notes):
                return item.reason or "\n".join(item.notes)
        return None


class ScreeningFilter(SortProxy):
    """Sorts on the unrounded values; shows the rows of one status and containing some words.

    The words are matched, ignoring case, against the file, sheet, column and
    reason or notes; every word must appear somewhere.
    """

    def __init__(self, parent=None):
        super().__init__(parent)
        self._status = ""
        self._words: tuple = ()

    def set_status(self, status: str) -> None:
        """Show only rows of this status ("ok", "failed", "skipped"); '' shows every row."""
        self._refilter(lambda: setattr(self, "_status", status or ""))

    def set_text(self, text: str) -> None:
        """Show only rows whose file, sheet, column or reason contain every word of ``text``."""
        self._refilter(lambda: setattr(self, "_words", tuple(text.lower().split())))

    def _refilter(self, change) -> None:
        """Apply ``change()`` to the filter's settings and filter again (Qt 6.9+ way when present)."""
        if hasattr(self, "beginFilterChange"):
            self.beginFilterChange()
            change()
            self.endFilterChange()
        else:  # older Qt
            change()
            self.invalidateFilter()

    def filterAcceptsRow(self, source_row: int, source_parent) -> bool:  # noqa: N802 (Qt name)
        model = self.sourceModel()
        item = model.screen_row(source_row)
        if self._status and item.status != self._status:
            return False
        if not self._words:
            return True
        haystack = " ".join((item.file, item.sheet, item.column, item.reason, *item.notes)).lower()
        return all(word in haystack for word in self._words)
