"""What the window does for the screening page: show it, leave it, open one of its rows.

Mixed into :class:`~clusterdesk.gui.window.MainWindow` beside
:class:`~clusterdesk.gui.workflow.Workflow`. Opening a row reads that file,
sheet and column (on the window's worker, like any file) and then fits it
with the screening run's settings and the column's own seed, so the analysis
shows the same best model as the row.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QTimer

from ..analysis import DataChoice
from .workflow import _read_source

__all__ = ["ScreeningWorkflow", "data_choice_for_row"]

#: Page of the window's stack that holds the screening view.
SCREENING_PAGE = 2


def data_choice_for_row(row) -> DataChoice:
    """The column of a screening row as the analysis reads it: the sheet, and the column by position."""
    return DataChoice(column=int(row.position), sheet=row.sheet or None)


class ScreeningWorkflow:
    """Mixed into the main window; holds no state of its own."""

    def show_screening(self) -> None:
        """Show the screening page."""
        self.stack.setCurrentIndex(SCREENING_PAGE)
        if self.screening.busy:
            self.status("Screening is running; its progress is on this page.")
        else:
            self.status("Screening: choose a folder or files, then Start screening.")

    def leave_screening(self) -> None:
        """Back to the analysis (or the start page when nothing is loaded)."""
        loaded = self.analysis is not None and self.analysis.measurements is not None
        self.stack.setCurrentIndex(1 if loaded else 0)
        if self.screening.busy:
            self.status("Screening goes on; Screen many files (Ctrl+M) shows its progress.")
        elif not self.runner.busy:
            self.statusBar().clearMessage()  # the screening page's last word is no news here

    def open_screened_row(self, row, settings) -> None:
        """Load a screened column as the analysis and fit it as the screening run did.

        Parameters
        ----------
        row : ScreenRow
            A row with a column (status "ok", or "failed" to see why).
        settings : ScanSettings
            From :func:`~clusterdesk.gui.screening.screen_settings_for_row`.
        """
        if self.runner.busy:
            self.status(f"{self.runner.label} is still running; wait for it or cancel it.")
            return
        path = str(Path(row.file).resolve())
        data = data_choice_for_row(row)
        self.task_unit = "reading"
        where = f"{Path(path).name}{' / ' + row.sheet if row.sheet else ''} / {row.column}"

        def apply(result):
            analysis, sheets = result
            self._take(analysis, sheets, pasted=None)
            self._remember(path)
            self.stack.setCurrentIndex(1)
            self.status(f"Read {where}; fitting it as the screening did…")
            QTimer.singleShot(0, lambda: self._fit_screened(analysis, settings, where))

        self.runner.start(f"Reading {Path(path).name}", lambda p, c: _read_source(path, data, settings), apply)

    def _fit_screened(self, analysis, settings, where: str) -> None:
        """Fit the opened column with the run's settings and the column's seed (the panel shows them)."""
        if self.analysis is not analysis or self.runner.busy:
            return
        self.fit_panel.set_settings(settings)  # Fit models then reproduces the row too
        self.fit(settings, opening=where)
