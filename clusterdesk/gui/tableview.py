"""A table view that copies to the clipboard as tab-separated text."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QAbstractItemView, QApplication, QHeaderView, QTableView

from .models import as_tab_separated

__all__ = ["CopyableTableView"]


class CopyableTableView(QTableView):
    """Read-only table; Ctrl+C (the platform's copy keys) copies the selected rows or the whole table.

    Copied cells carry full precision (see :data:`clusterdesk.gui.models.RAW_ROLE`)
    and a header line, ready to paste into a spreadsheet.
    """

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.setAlternatingRowColors(True)
        self.verticalHeader().setVisible(False)
        self.verticalHeader().setDefaultSectionSize(self.fontMetrics().height() + 8)
        self.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        self.horizontalHeader().setStretchLastSection(True)
        self.setWordWrap(False)
        self.copy_action = QAction("Copy selected rows", self)
        self.copy_action.setShortcut(QKeySequence.StandardKey.Copy)
        self.copy_action.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
        self.copy_action.triggered.connect(self.copy_selection)
        self.copy_all_action = QAction("Copy whole table", self)
        self.copy_all_action.triggered.connect(self.copy_all)
        self.addAction(self.copy_action)
        self.addAction(self.copy_all_action)
        self.setContextMenuPolicy(Qt.ContextMenuPolicy.ActionsContextMenu)

    def selection_text(self) -> str:
        """The selected rows (all rows when none is selected) as tab-separated text."""
        model = self.model()
        if model is None:
            return ""
        selected = self.selectionModel().selectedRows() if self.selectionModel() else []
        rows = sorted({index.row() for index in selected}) or None
        return as_tab_separated(model, rows)

    def copy_selection(self) -> None:
        """Put the selected rows (or the whole table) on the clipboard."""
        QApplication.clipboard().setText(self.selection_text())

    def copy_all(self) -> None:
        """Put the whole table on the clipboard."""
        if self.model() is not None:
            QApplication.clipboard().setText(as_tab_separated(self.model()))

    def fit_columns(self) -> None:
        """Size the columns to their contents (once, after new data)."""
        self.resizeColumnsToContents()
