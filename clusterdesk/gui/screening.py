"""The screening page: many files and columns in, one table that fills in as the columns finish.

The page runs :func:`clusterdesk.screen.screen` (Qt-free) on a worker thread
through its own :class:`~clusterdesk.gui.tasks.TaskRunner`, so the analysis
in the rest of the window stays usable meanwhile. Cancel sets the task's
``threading.Event``; the run stops after the column in hand (with one
worker) or at once (worker processes are stopped). Rows reach the table
through a queued signal as the run reports them
(:attr:`~clusterdesk.screen.progress.ScreenProgress.new_rows`). Opening a row
asks the window (signal :attr:`ScreeningView.openRequested`) to load that
file, sheet and column and fit it with the same settings and the column's own
seed, so the analysis reproduces the row. With an output folder
(:mod:`.screening_output`) the run keeps a journal there and can be resumed
after a cancel or a closed window.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QObject, Qt, Signal
from PySide6.QtWidgets import (QComboBox, QFileDialog, QFormLayout, QGroupBox, QHBoxLayout, QLabel,
                               QLineEdit, QProgressBar, QPushButton, QSpinBox, QVBoxLayout, QWidget)

from ..analysis import ScanSettings
from ..errors import InputError
from ..screen import default_workers, screen, unfinished_run
from ..screen.discover import DATA_SUFFIXES
from ..screen.progress import format_duration
from ..screen.overview import write_overview
from ..screen.summary import write_summary
from .errors import describe_error
from .panels import FitPanel
from .screening_output import RESUME, START_OVER, OutputFolderRow
from .screening_table import STATUS_WORDS, ScreeningFilter, ScreeningTableModel
from .tableview import CopyableTableView
from .tasks import TaskRunner

__all__ = ["ScreeningView", "screen_settings_for_row"]


def screen_settings_for_row(row, settings: ScanSettings) -> ScanSettings:
    """The scan settings that reproduce a screened column's row in an analysis.

    Parameters
    ----------
    row : ScreenRow
        A row of a screening run.
    settings : ScanSettings
        The run's settings.

    Returns
    -------
    ScanSettings
        The run's settings with the column's own seed (and the component
        range the column was actually scanned over, when it was lowered).
    """
    return ScanSettings(kmin=row.kmin or settings.kmin, kmax=row.kmax or settings.kmax,
                        widths=settings.widths, restarts=settings.restarts,
                        seed=settings.seed if row.seed is None else row.seed)


class _Relay(QObject):
    """Carries progress (with the new rows) from the worker thread to the page, queued."""

    reported = Signal(object)


class ScreeningView(QWidget):
    """Pick files or a folder, choose scan settings, screen, then sort, filter and open rows.

    Signals
    -------
    openRequested(object, object)
        A :class:`~clusterdesk.screen.ScreenRow` and the
        :class:`~clusterdesk.analysis.ScanSettings` that reproduce it.
    backRequested()
        The user wants the analysis page back.
    statusChanged(str)
        What the page is doing, for the window's status bar: a run started,
        finished, was cancelled or stopped, or a table was saved.
    """

    openRequested = Signal(object, object)
    backRequested = Signal()
    statusChanged = Signal(str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.inputs: list[str] = []
        self.run_settings: ScanSettings | None = None
        self.result = None
        self.runner = TaskRunner(self)
        self._relay = _Relay(self)
        self._relay.reported.connect(self._reported)
        self.table_model = ScreeningTableModel(self)
        self.proxy = ScreeningFilter(self)
        self.proxy.setSourceModel(self.table_model)
        self._build()
        self.runner.started.connect(lambda _label: self._update())
        self.runner.finished.connect(self._finished)
        self._update()

    # ------------------------------------------------------------------ widgets
    def _build(self) -> None:
        self.folder_button = QPushButton("Choose folder…")
        self.folder_button.setToolTip("Screen every data file in a folder and its subfolders.")
        self.folder_button.clicked.connect(self.choose_folder)
        self.files_button = QPushButton("Choose files…")
        self.files_button.setToolTip("Screen the files you pick (CSV, TSV, text, XLSX: every sheet).")
        self.files_button.clicked.connect(self.choose_files)
        self.inputs_label = QLabel()
        self.inputs_label.setWordWrap(True)
        self.inputs_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.patterns = QLineEdit()
        self.patterns.setPlaceholderText("every numeric column (or e.g. length*, diameter_*)")
        self.patterns.setToolTip("Column names to screen, separated by commas: shell-style wildcards, "
                                 "ignoring case, or re: followed by a regular expression.")

        self.scan_options = FitPanel()  # the same scan options as the analysis, without its button
        self.scan_options.setTitle("Scan settings")
        self.scan_options.fit_button.hide()
        self.scan_options.setEnabled(True)
        self.scan_options.seed.setToolTip("Each column's seed comes from this seed and the column itself: "
                                          "the same seed gives the same table, whatever the number of workers.")
        self.workers = QSpinBox()
        self.workers.setRange(1, 64)
        self.workers.setValue(default_workers())
        self.workers.setToolTip("Worker processes (default: the cores of this machine). 1 screens "
                                "inside the window's own process.")
        self.workers.setMaximumWidth(90)
        self.output = OutputFolderRow()

        self.start_button = QPushButton("Start screening")
        self.start_button.clicked.connect(self.start)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the run; the rows finished so far stay in the table.")
        self.cancel_button.clicked.connect(self.cancel)
        self.progress = QProgressBar()
        self.progress.setTextVisible(True)
        self.progress_label = QLabel()
        self.progress_label.setWordWrap(True)

        inputs_box = QGroupBox("What to screen")
        inputs_layout = QVBoxLayout(inputs_box)
        buttons = QHBoxLayout()
        buttons.addWidget(self.folder_button)
        buttons.addWidget(self.files_button)
        buttons.addStretch(1)
        inputs_layout.addLayout(buttons)
        inputs_layout.addWidget(self.inputs_label)
        form = QFormLayout()
        form.addRow("Columns", self.patterns)
        form.addRow("Workers", self.workers)
        form.addRow("Output folder", self.output)
        inputs_layout.addLayout(form)

        run_row = QHBoxLayout()
        run_row.addWidget(self.start_button)
        run_row.addWidget(self.cancel_button)
        run_row.addWidget(self.progress, 1)

        top = QHBoxLayout()
        top.addWidget(inputs_box, 3)
        top.addWidget(self.scan_options, 1)

        self.filter_text = QLineEdit()
        self.filter_text.setPlaceholderText("Show rows containing… (file, sheet, column or reason)")
        self.filter_text.setClearButtonEnabled(True)
        self.filter_text.textChanged.connect(self.proxy.set_text)
        self.status_filter = QComboBox()
        for code, words in STATUS_WORDS:
            self.status_filter.addItem(words, code)
        self.status_filter.setToolTip("Show the rows of one status only.")
        self.status_filter.currentIndexChanged.connect(
            lambda _i: self.proxy.set_status(self.status_filter.currentData()))
        self.shown_label = QLabel()
        filter_row = QHBoxLayout()
        filter_row.addWidget(QLabel("Filter"))
        filter_row.addWidget(self.filter_text, 1)
        filter_row.addWidget(self.status_filter)
        filter_row.addWidget(self.shown_label)

        self.view = CopyableTableView()
        self.view.setModel(self.proxy)
        self.view.setSortingEnabled(True)
        self.view.sortByColumn(-1, Qt.SortOrder.AscendingOrder)  # arrival order until a header is clicked
        self.view.setSelectionMode(CopyableTableView.SelectionMode.SingleSelection)
        self.view.doubleClicked.connect(lambda _index: self.open_selected())
        self.view.selectionModel().selectionChanged.connect(lambda *_: self._update())
        for column, width in enumerate((150, 80, 130, 70, 75, 55, 120, 70, 90, 170)):
            self.view.setColumnWidth(column, width)
        self.proxy.rowsInserted.connect(lambda *_: self._count_shown())
        self.proxy.rowsRemoved.connect(lambda *_: self._count_shown())
        self.proxy.modelReset.connect(self._count_shown)
        self.proxy.layoutChanged.connect(self._count_shown)

        self.open_button = QPushButton("Open as analysis")
        self.open_button.setToolTip("Load the selected column in the analysis page and fit it with the "
                                    "same settings and the column's seed (double-click a row does the same).")
        self.open_button.clicked.connect(self.open_selected)
        self.save_button = QPushButton("Save table (CSV)…")
        self.save_button.setToolTip("Write the rows of the table, as shown (sorted, filtered), as a summary CSV.")
        self.save_button.clicked.connect(lambda: self.save_table_dialog("csv"))
        self.overview_button = QPushButton("Save overview (HTML)…")
        self.overview_button.setToolTip("One HTML page with a small density plot per column, for the rows "
                                        "as shown.")
        self.overview_button.clicked.connect(lambda: self.save_table_dialog("html"))
        self.back_button = QPushButton("Back to the analysis")
        self.back_button.clicked.connect(self.backRequested)
        bottom = QHBoxLayout()
        bottom.addWidget(self.open_button)
        bottom.addWidget(self.save_button)
        bottom.addWidget(self.overview_button)
        bottom.addStretch(1)
        bottom.addWidget(self.back_button)

        layout = QVBoxLayout(self)
        layout.addLayout(top)
        layout.addLayout(run_row)
        layout.addWidget(self.progress_label)
        layout.addLayout(filter_row)
        layout.addWidget(self.view, 1)
        layout.addLayout(bottom)
        self._show_inputs()
        self._count_shown()

    # ------------------------------------------------------------------ questions (tests replace)
    def ask_folder(self) -> str:
        """Ask for a folder ('' when the user gives up)."""
        return QFileDialog.getExistingDirectory(self, "Folder to screen")

    def ask_files(self) -> list:
        """Ask for files ([] when the user gives up)."""
        patterns = " ".join("*" + s for s in DATA_SUFFIXES)
        files, _ = QFileDialog.getOpenFileNames(self, "Files to screen", "",
                                                f"Data files ({patterns});;All files (*)")
        return files

    def ask_save_path(self, kind: str = "csv") -> str:
        """Ask where to write the table (``kind`` "csv") or the overview ("html"); '' when the user gives up."""
        if kind == "html":
            path, _ = QFileDialog.getSaveFileName(self, "Save the screening overview", "overview.html",
                                                  "HTML page (*.html)")
        else:
            path, _ = QFileDialog.getSaveFileName(self, "Save the screening table", "summary.csv",
                                                  "CSV table (*.csv)")
        return path

    # ------------------------------------------------------------------ settings and inputs
    def settings(self) -> ScanSettings:
        """The scan settings the widgets show."""
        return self.scan_options.settings()

    def set_settings(self, s: ScanSettings) -> None:
        """Show scan settings."""
        self.scan_options.set_settings(s)

    def column_patterns(self) -> list | None:
        """The column name patterns typed (None: every numeric column)."""
        parts = [p.strip() for p in self.patterns.text().split(",") if p.strip()]
        return parts or None

    def choose_folder(self) -> None:
        """Ask for a folder and make it the input."""
        folder = self.ask_folder()
        if folder:
            self.set_inputs([folder])

    def choose_files(self) -> None:
        """Ask for files and make them the inputs."""
        files = self.ask_files()
        if files:
            self.set_inputs(files)

    def set_inputs(self, paths) -> None:
        """Files and folders to screen (absolute paths are kept as given)."""
        self.inputs = [str(Path(p).resolve()) for p in paths]
        self._show_inputs()
        self._update()

    def _show_inputs(self) -> None:
        if not self.inputs:
            self.inputs_label.setText("Nothing chosen yet: choose a folder or some files.")
        elif len(self.inputs) == 1:
            self.inputs_label.setText(self.inputs[0])
        else:
            self.inputs_label.setText(f"{len(self.inputs)} files in {Path(self.inputs[0]).parent}")
            self.inputs_label.setToolTip("\n".join(self.inputs))

    # ------------------------------------------------------------------ running
    @property
    def busy(self) -> bool:
        """True while a screening run is going."""
        return self.runner.busy

    def start(self) -> None:
        """Screen the chosen inputs with the settings shown, on a worker thread."""
        if self.busy or not self.inputs:
            return
        inputs, settings, patterns = list(self.inputs), self.settings(), self.column_patterns()
        workers, out = self.workers.value(), self.output.folder or None
        resume = start_over = False
        if out is not None:
            try:
                found = unfinished_run(out, settings)
            except (InputError, OSError) as exc:
                self._say(f"Nothing started: {describe_error(exc)[0]}")
                return
            if found is not None:
                answer = self.output.ask_unfinished(found)
                if not answer:
                    self._say(f"Nothing started; the unfinished run in {out} is kept.")
                    return
                resume, start_over = answer == RESUME, answer == START_OVER
        relay = self._relay
        self.table_model.clear()
        self.result, self.run_settings = None, settings
        self.progress.setRange(0, 0)
        self.progress_label.setText("Listing the files…")
        where = f", keeping each finished column in {out}" if out else ""
        self.statusChanged.emit(f"Screening{' (resumed)' if resume else ''} with k = {settings.kmin} to "
                                f"{settings.kmax} on {workers} worker{'s' if workers > 1 else ''}{where}…")

        def work(progress, cancel):
            def report(p):
                relay.reported.emit(p)
                progress(p.done, p.total)

            return screen(inputs, columns=patterns, settings=settings, workers=workers, out=out,
                          resume=resume, start_over=start_over, progress=report, cancel=cancel)

        self.runner.start("Screening", work, self._take_result, self._failed)

    def cancel(self) -> None:
        """Stop the run (returns at once; the table keeps the rows finished so far)."""
        self.runner.cancel()

    def shutdown(self) -> bool:
        """Stop a run and wait for its thread (before the window closes)."""
        return self.runner.shutdown()

    def _reported(self, p) -> None:
        self.table_model.append_rows(p.new_rows)
        self.progress.setRange(0, max(p.total, 1))
        self.progress.setValue(p.done)
        self.progress.setFormat(f"%v of %m{'+' if p.files_to_list else ''} columns")
        failed = f", {p.failed} failed" if p.failed else ""
        pace = f" · {p.computed / p.elapsed:.2f} columns/s" if p.computed and p.elapsed > 0 else ""
        about = "about " if p.files_to_list else ""  # files not listed yet: the total is an estimate
        self.progress_label.setText(f"{p.done:,} of {about}{p.total:,} columns done{failed}{pace} · "
                                    f"time left: {format_duration(p.seconds_left)}")

    def _take_result(self, result) -> None:
        self.result = result
        counts = result.counts
        reused = f" ({result.reused:,} kept from the earlier run)" if result.reused else ""
        written = [Path(result.written[k]).name for k in ("summary", "overview") if k in result.written]
        saved = (f" Wrote {' and '.join(written)} to {Path(result.written['summary']).parent}."
                 if written else "")
        self._say(f"Finished in {format_duration(result.elapsed)}: {counts['ok']:,} columns fitted"
                  f"{reused}, {counts['failed']:,} failed, {counts['skipped']:,} skipped (not measurements)."
                  f"{saved} Double-click a row to open it as an analysis.")
        self.progress.setRange(0, 1)
        self.progress.setValue(1)
        self.progress.setFormat("done")

    def _failed(self, outcome) -> None:
        message, _details = describe_error(outcome.error, outcome.details)
        self._say(f"The screening run stopped: {message}")

    def _finished(self, outcome) -> None:
        if outcome.status == "cancelled":
            done = sum(1 for r in self.table_model.screen_rows if r.column and r.status != "skipped")
            kept = (f" and in the journal in {self.output.folder}: Start screening again to resume"
                    if self.output.folder else "")
            self._say(f"Screening cancelled after {done:,} columns; the rows finished so far stay in the "
                      f"table{kept}.")
        if outcome.status != "done":
            self.progress.setRange(0, 1)
            self.progress.setValue(0)
            self.progress.setFormat(outcome.status)
        self._update()

    # ------------------------------------------------------------------ rows
    def selected_row(self):
        """The :class:`~clusterdesk.screen.ScreenRow` selected in the table, or None."""
        rows = self.view.selectionModel().selectedRows()
        if not rows:
            return None
        return self.table_model.screen_row(self.proxy.mapToSource(rows[0]).row())

    def select_source_row(self, source_row: int) -> None:
        """Select the line showing ``table_model.screen_rows[source_row]`` (when the filter shows it)."""
        index = self.proxy.mapFromSource(self.table_model.index(source_row, 0))
        if index.isValid():
            self.view.selectRow(index.row())

    def open_selected(self) -> None:
        """Ask the window to open the selected column as an analysis."""
        row = self.selected_row()
        if row is None or not _openable(row) or self.run_settings is None:
            return
        self.openRequested.emit(row, screen_settings_for_row(row, self.run_settings))

    def save_table_dialog(self, kind: str = "csv") -> None:
        """Write the rows as shown (the table's order, filtered): a summary CSV, or the overview ("html")."""
        if not self.table_model.screen_rows or self.run_settings is None:
            return
        path = self.ask_save_path(kind)
        if not path:
            return
        rows = [self.table_model.screen_row(self.proxy.mapToSource(self.proxy.index(i, 0)).row())
                for i in range(self.proxy.rowCount())]
        try:
            if kind == "html":
                written = write_overview(path, rows, self.run_settings)
            else:
                written = write_summary(path, rows)
        except OSError as exc:
            self._say(describe_error(exc)[0])
            return
        self._say(f"Wrote {len(rows):,} screening rows to {written}.")

    # ------------------------------------------------------------------ state of the widgets
    def _say(self, text: str) -> None:
        """Show what happened under the progress bar and in the window's status bar."""
        self.progress_label.setText(text)
        self.statusChanged.emit(text)

    def _count_shown(self) -> None:
        shown, total = self.proxy.rowCount(), self.table_model.rowCount()
        self.shown_label.setText(f"{shown:,} of {total:,} rows" if shown != total else f"{total:,} rows")

    def _update(self) -> None:
        busy = self.busy
        for widget in (self.folder_button, self.files_button, self.patterns, self.scan_options, self.workers,
                       self.output):
            widget.setEnabled(not busy)
        self.start_button.setEnabled(not busy and bool(self.inputs))
        self.cancel_button.setEnabled(busy)
        row = self.selected_row()
        self.open_button.setEnabled(row is not None and _openable(row) and self.run_settings is not None)
        for button in (self.save_button, self.overview_button):
            button.setEnabled(not busy and bool(self.table_model.screen_rows))


def _openable(row) -> bool:
    """A row of a column with numbers (fitted, or failed in the fit) can be opened."""
    return bool(row.column) and row.position is not None and row.status != "skipped"
