"""Dialogs and the message bar: excluded rows, error details, messages in the window."""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (QDialog, QDialogButtonBox, QFrame, QHBoxLayout, QLabel,
                               QPlainTextEdit, QPushButton, QVBoxLayout)

from .models import ExcludedRowsModel
from .tableview import CopyableTableView

__all__ = ["ExcludedRowsDialog", "DetailsDialog", "MessageBar"]

_LEVEL_STYLE = {
    "error": "background: #FBE3E0; border: 1px solid #D55E00;",
    "warning": "background: #FFF4E5; border: 1px solid #E69F00;",
    "info": "background: #E6F2FA; border: 1px solid #0072B2;",
}
_LEVEL_WORD = {"error": "Problem", "warning": "Warning", "info": "Note"}


class ExcludedRowsDialog(QDialog):
    """Every excluded row of the column: line in the file, text as written, reason."""

    def __init__(self, measurements, parent=None):
        super().__init__(parent)
        self.setWindowTitle(f"Excluded rows of {measurements.column.name}")
        self.model = ExcludedRowsModel(measurements.rows, self)
        self.view = CopyableTableView()
        self.view.setModel(self.model)
        summary = measurements.summary
        reasons = ", ".join(f"{n:,} {words}" for words, n in summary.excluded.items()) or "none"
        heading = QLabel(f"{self.model.rowCount():,} of {summary.rows_read:,} rows were left out "
                         f"({reasons}). Lines count from 1, as in a text editor; Ctrl+C copies.")
        heading.setWordWrap(True)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        copy = buttons.addButton("Copy all", QDialogButtonBox.ButtonRole.ActionRole)
        copy.clicked.connect(self.view.copy_all)
        layout = QVBoxLayout(self)
        layout.addWidget(heading)
        layout.addWidget(self.view, 1)
        layout.addWidget(buttons)
        self.view.resizeColumnsToContents()
        self.resize(560, 440)


class DetailsDialog(QDialog):
    """Shows the technical details (a traceback) of an unexpected error, for a bug report."""

    def __init__(self, title: str, text: str, parent=None):
        super().__init__(parent)
        self.setWindowTitle(title)
        edit = QPlainTextEdit(text)
        edit.setReadOnly(True)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addWidget(QLabel("Technical details (please include them when reporting a problem):"))
        layout.addWidget(edit, 1)
        layout.addWidget(buttons)
        self.resize(640, 360)


class MessageBar(QFrame):
    """A strip at the top of the window with the latest message; never blocks the window.

    Signals
    -------
    dismissed()
    """

    dismissed = Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self.label = QLabel()
        self.label.setWordWrap(True)
        self.label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.details_button = QPushButton("Details…")
        self.details_button.clicked.connect(self._show_details)
        self.close_button = QPushButton("Dismiss")
        self.close_button.clicked.connect(self.dismiss)
        layout = QHBoxLayout(self)
        layout.setContentsMargins(8, 4, 8, 4)
        layout.addWidget(self.label, 1)
        layout.addWidget(self.details_button)
        layout.addWidget(self.close_button)
        self.level = ""
        self.details = ""
        self._dialog = None
        self.hide()

    def show_message(self, text: str, level: str = "error", details: str = "") -> None:
        """Show ``text``; ``level`` is "error", "warning" or "info"; ``details`` adds a Details button."""
        self.level, self.details = level, details
        self.setStyleSheet(f"MessageBar {{ {_LEVEL_STYLE[level]} }} QLabel {{ color: #1a1a1a; }}")
        self.label.setText(f"<b>{_LEVEL_WORD[level]}:</b> {_escape(text)}")
        self.details_button.setVisible(bool(details))
        self.show()

    def text(self) -> str:
        """The message shown, as plain text ('' when hidden)."""
        return self.label.text() if self.isVisible() else ""

    def dismiss(self) -> None:
        """Hide the bar."""
        self.hide()
        self.dismissed.emit()

    def _show_details(self) -> None:
        self._dialog = DetailsDialog("Problem details", self.details, self)
        self._dialog.open()


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
