"""A message box when a saved analysis cannot be reopened; the analysis shown stays as it was.

Mixed into :class:`~clusterdesk.gui.window.MainWindow`. The box is opened
without blocking (``QMessageBox.open``), so the window keeps running and
tests can read and answer it. When the only problem is that the source file
changed since the analysis was saved, the box offers to open it anyway.
"""

from __future__ import annotations

from PySide6.QtWidgets import QMessageBox

from ..analysis import SourceChangedError
from .errors import describe_error

__all__ = ["AnalysisFileProblems"]


class AnalysisFileProblems:
    """Mixed into the main window; keeps the open box in ``analysis_file_box``."""

    analysis_file_box = None

    def analysis_file_refused(self, outcome) -> None:
        """Say in a message box why a saved analysis could not be reopened (a task's ``on_error``)."""
        message, _details = describe_error(outcome.error, outcome.details)
        if self.analysis_file_box is not None:
            self.analysis_file_box.close()  # one box at a time: the newest problem
        box = QMessageBox(self)
        box.setIcon(QMessageBox.Icon.Warning)
        box.setWindowTitle("The analysis could not be opened")
        box.setText(message)
        kept = "The analysis shown stays as it was" if self.analysis is not None else "Nothing was changed"
        box.setInformativeText(f"{kept}; no file was written.")
        error = outcome.error
        if isinstance(error, SourceChangedError):
            anyway = box.addButton("Open anyway", QMessageBox.ButtonRole.AcceptRole)
            box.addButton(QMessageBox.StandardButton.Cancel)
            anyway.setToolTip("Fit the source file as it is now; the numbers may differ from the saved ones.")
            anyway.clicked.connect(lambda: self.open_analysis(error.path, accept_changed_source=True))
        else:
            box.addButton(QMessageBox.StandardButton.Ok)
        self.analysis_file_box = box
        box.open()
